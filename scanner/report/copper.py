"""Draw a copper layer in its true geometry onto a matplotlib Axes, clipped to a window.

Traces are one LineCollection with round caps whose line widths are the trace
widths converted from millimetres to points at the figure's scale, so each stroke
covers exactly the copper of the draw. Pads, vias and pours are drawn as one
compound path per kind (non-zero fill, holes oriented opposite), so overlapping
copper is drawn once and pale colours stay even. Big layers are rasterised
inside SVG files to keep them small.
"""
from __future__ import annotations

import numpy as np
import shapely
from matplotlib.collections import LineCollection
from matplotlib.patches import PathPatch

from scanner.board.coverage import polygon_path
from scanner.board.model import Board, CopperLayer, TraceSegments
from scanner.report import palette

#: above this many drawn items a layer's copper is rasterised in vector output
RASTER_ABOVE = 20_000
Z_BOARD, Z_POUR, Z_TRACE, Z_PAD, Z_OUTLINE = 0.0, 1.0, 2.0, 3.0, 4.0

Window = tuple[float, float, float, float]  # x0, y0, x1, y1 in mm


def stroke_bounds(segments: TraceSegments) -> np.ndarray:
    """(N, 4) bounding boxes x0, y0, x1, y1 of the segments' strokes, round caps included."""
    half = segments.width / 2
    return np.column_stack([np.minimum(segments.x0, segments.x1) - half, np.minimum(segments.y0, segments.y1) - half,
                            np.maximum(segments.x0, segments.x1) + half, np.maximum(segments.y0, segments.y1) + half])


def _meets(bounds: np.ndarray, window: Window) -> np.ndarray:
    x0, y0, x1, y1 = window
    return (bounds[:, 0] <= x1) & (bounds[:, 2] >= x0) & (bounds[:, 1] <= y1) & (bounds[:, 3] >= y0)


def segments_in(segments: TraceSegments, window: Window) -> TraceSegments:
    """Segments whose stroke bounding box meets the window."""
    return segments.select(_meets(stroke_bounds(segments), window))


def stroke_collection(segments: TraceSegments, points_per_mm: float, colour: str, zorder: float,
                      **style) -> LineCollection:
    """Segments as round-capped strokes of their true width."""
    lines = np.stack([np.column_stack([segments.x0, segments.y0]), np.column_stack([segments.x1, segments.y1])], axis=1)
    return LineCollection(lines, linewidths=segments.width * points_per_mm, colors=colour, capstyle="round",
                          joinstyle="round", zorder=zorder, **style)


def draw_outline(ax, outline, fill: bool = True) -> None:
    """The board outline: its area filled pale, its edge drawn; open outlines as lines only."""
    if outline is None:
        return
    path = polygon_path([outline])
    if path is not None:
        ax.add_artist(PathPatch(path, facecolor=palette.BOARD_FILL if fill else "none", edgecolor="none",
                               zorder=Z_BOARD))
    parts = shapely.get_parts(np.asarray([outline], dtype=object))
    kind = shapely.get_type_id(parts)
    edges = np.concatenate([shapely.get_rings(parts[kind == 3]), parts[(kind == 1) | (kind == 2)]])
    lines = [shapely.get_coordinates(edge) for edge in edges if not edge.is_empty]
    if lines:
        ax.add_collection(LineCollection(lines, colors=palette.BOARD_EDGE, linewidths=0.9, zorder=Z_OUTLINE))


def draw_copper(ax, layer: CopperLayer, window: Window, points_per_mm: float,
                tint: tuple[str, str, str] = palette.COPPER) -> int:
    """The layer's traces, pads, vias and pours inside the window in the ``tint`` (trace, pad, pour colours);
    returns how many items were drawn."""
    segments = segments_in(layer.segments, window)
    shapes = layer.shapes
    drawn = len(segments)
    if len(shapes):
        inside = _meets(shapely.bounds(shapes.geometry), window)
        pour = shapes.role == "region"
        drawn += int(inside.sum())
    raster = drawn > RASTER_ABOVE
    if len(shapes):
        for mask, colour, z in ((inside & pour, tint[2], Z_POUR), (inside & ~pour, tint[1], Z_PAD)):
            path = polygon_path(shapes.geometry[mask])
            if path is not None:
                ax.add_artist(PathPatch(path, facecolor=colour, edgecolor="none", zorder=z, rasterized=raster))
    if len(segments):
        ax.add_collection(stroke_collection(segments, points_per_mm, tint[0], Z_TRACE, rasterized=raster))
    return drawn


def board_bounds(board: Board) -> tuple[float, float, float, float]:
    """The outline's bounds, else the extent of all copper (mm)."""
    if board.outline is not None and not board.outline.is_empty:
        return tuple(float(v) for v in board.outline.bounds)
    every = np.concatenate([np.zeros((0, 4))] + [stroke_bounds(layer.segments) for layer in board.layers]
                           + [shapely.bounds(layer.shapes.geometry) for layer in board.layers if len(layer.shapes)])
    if not np.isfinite(every).any():
        return (0.0, 0.0, 1.0, 1.0)
    return (float(np.nanmin(every[:, 0])), float(np.nanmin(every[:, 1])),
            float(np.nanmax(every[:, 2])), float(np.nanmax(every[:, 3])))
