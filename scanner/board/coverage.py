"""Copper drawn onto a grid of cells: the share of each cell it covers (anti-aliased, with matplotlib's Agg).

Measures such as "how much of the board does this layer's pour cover" need the union of
thousands of overlapping shapes and strokes; drawing them is one call per kind and costs
the same however much they overlap.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.patches import PathPatch
from matplotlib.path import Path

from scanner.board.model import TraceSegments

#: the grid of a board has at most about this many cells (unless asked for more) ...
MAX_CELLS = 250_000
#: ... and cells no smaller than this (mm)
MIN_CELL_MM = 0.05
_DPI = 100


def polygon_path(geometries) -> Path | None:
    """One compound Path of all polygonal parts of the geometries (exteriors CCW, holes CW)."""
    parts = shapely.get_parts(np.asarray(geometries, dtype=object))
    parts = parts[shapely.get_type_id(parts) == 3]
    parts = parts[~shapely.is_empty(parts)]
    if len(parts) == 0:
        return None
    _, coords, (ring_offsets, _poly_offsets) = shapely.to_ragged_array(shapely.orient_polygons(parts))
    codes = np.full(len(coords), Path.LINETO, dtype=Path.code_type)
    codes[ring_offsets[:-1]] = Path.MOVETO
    codes[ring_offsets[1:] - 1] = Path.CLOSEPOLY
    return Path(coords, codes)


@dataclass(frozen=True)
class Grid:
    """Square cells of ``cell_mm`` from (x0, y0); row 0 is the lowest y."""

    x0: float
    y0: float
    cell_mm: float
    nx: int
    ny: int

    @classmethod
    def over(cls, box: tuple[float, float, float, float], cell_mm: float | None = None,
             max_cells: int = MAX_CELLS) -> "Grid":
        """A grid covering ``box`` (x0, y0, x1, y1 mm), with cells of ``cell_mm`` or as fine as ``max_cells``
        allows."""
        x0, y0, x1, y1 = box
        w, h = max(x1 - x0, 1e-3), max(y1 - y0, 1e-3)
        cell = cell_mm or max(MIN_CELL_MM, float(np.sqrt(w * h / max_cells)))
        return cls(x0, y0, cell, int(np.ceil(w / cell)) + 1, int(np.ceil(h / cell)) + 1)

    def cell_of(self, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(row, column) of points, clipped to the grid."""
        col = np.clip(((np.asarray(x) - self.x0) / self.cell_mm).astype(np.int64), 0, self.nx - 1)
        row = np.clip(((np.asarray(y) - self.y0) / self.cell_mm).astype(np.int64), 0, self.ny - 1)
        return row, col


def draw(grid: Grid, segments: TraceSegments | None = None, polygons=None) -> np.ndarray:
    """(ny, nx) float32 array: the share of each cell covered by the strokes and polygons."""
    fig = Figure(figsize=(grid.nx / _DPI, grid.ny / _DPI), dpi=_DPI)
    canvas = FigureCanvasAgg(fig)
    width, height = canvas.get_width_height()  # whole pixels; may differ from the grid by one
    ax = fig.add_axes((0, 0, 1, 1))
    ax.set_axis_off()
    ax.set_xlim(grid.x0, grid.x0 + width * grid.cell_mm)
    ax.set_ylim(grid.y0, grid.y0 + height * grid.cell_mm)
    if polygons is not None and len(polygons) and (path := polygon_path(polygons)) is not None:
        ax.add_artist(PathPatch(path, facecolor="black", edgecolor="none", transform=ax.transData))
    if segments is not None and len(segments):
        points_per_mm = 72.0 / _DPI / grid.cell_mm
        lines = np.stack([np.column_stack([segments.x0, segments.y0]),
                          np.column_stack([segments.x1, segments.y1])], axis=1)
        ax.add_collection(LineCollection(lines, linewidths=segments.width * points_per_mm, colors="black",
                                         capstyle="round"), autolim=False)
    canvas.draw()
    covered = 1.0 - np.asarray(canvas.buffer_rgba())[::-1, :, 0].astype(np.float32) / 255.0
    out = np.zeros((grid.ny, grid.nx), dtype=np.float32)
    rows, cols = min(grid.ny, covered.shape[0]), min(grid.nx, covered.shape[1])
    out[:rows, :cols] = covered[:rows, :cols]
    return out
