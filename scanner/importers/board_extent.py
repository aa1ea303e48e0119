"""Where the board is, and the copper that lies outside it.

The board is its outline when one was read. Without one it is the box around the board's
evidence — drill hits, netlist points, else pads — grown to take in the copper that lies
near them: copper is drawn on a coarse grid, each clump (cells closer than CLUMP_GAP_MM)
touching the evidence belongs to the board, and the box of those clumps is the extent.
Film frames, title blocks, text, tooling marks and coupons lie apart from the board; copper
entirely outside the extent is left out of nets and of the search, and counted.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from scipy import ndimage

from scanner.board.coverage import Grid, draw
from scanner.board.model import CopperLayer, LeftOut, TraceSegments

#: cell of the grid used to find clumps of copper (mm), at the coarsest
CLUMP_CELL_MM = 0.5
#: copper closer than this (mm) belongs to one clump
CLUMP_GAP_MM = 2.0
#: copper within this distance (mm) of the outline or extent still counts as on the board
EDGE_MARGIN_MM = 0.5
#: if more than this share of the copper objects lie outside the outline, the outline is doubted and nothing is
#: left out (an extent found from clumps holds the evidence by construction)
LEFT_OUT_MAX_SHARE = 0.5


#: how an extent read from an outline file says so
OUTLINE_FROM = "the outline from"


@dataclass(frozen=True)
class BoardExtent:
    """The board's area (mm) and, in words, what it was taken from."""

    shape: shapely.Geometry
    how: str

    @property
    def area_mm2(self) -> float:
        return float(self.shape.area)

    @property
    def is_outline(self) -> bool:
        return self.how.startswith(OUTLINE_FROM)


def evidence_points(*point_sets: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """(N, 2) points from (x, y) array pairs."""
    parts = [np.column_stack([np.asarray(x, float), np.asarray(y, float)]) for x, y in point_sets if len(x)]
    return np.vstack(parts) if parts else np.zeros((0, 2))


def pad_centres(layers: list[CopperLayer]) -> np.ndarray:
    """Centres of the pads and via lands on every layer, (N, 2)."""
    parts = []
    for layer in layers:
        shapes = layer.shapes
        if len(shapes):
            pads = shapes.geometry[(shapes.role == "pad") | (shapes.role == "via")]
            if len(pads):
                c = shapely.centroid(pads)
                parts.append(np.column_stack([shapely.get_x(c), shapely.get_y(c)]))
    return np.vstack(parts) if parts else np.zeros((0, 2))


def copper_box(layers: list[CopperLayer], outline=None) -> tuple[float, float, float, float] | None:
    """(x0, y0, x1, y1) in mm of the outline when known, else of all copper; None when there is neither."""
    if outline is not None and not outline.is_empty:
        return tuple(float(v) for v in outline.bounds)
    boxes = []
    for layer in layers:
        s = layer.segments
        if len(s):
            boxes.append((min(s.x0.min(), s.x1.min()), min(s.y0.min(), s.y1.min()),
                          max(s.x0.max(), s.x1.max()), max(s.y0.max(), s.y1.max())))
        if len(layer.shapes):
            b = shapely.total_bounds(layer.shapes.geometry)
            if np.isfinite(b).all():
                boxes.append(tuple(b))
    if not boxes:
        return None
    b = np.array(boxes)
    return float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max())


def board_extent(layers: list[CopperLayer], evidence: np.ndarray) -> BoardExtent | None:
    """The box of the evidence and the copper clumps that touch it (for boards without an outline)."""
    box = copper_box(layers)
    if box is None:
        return None
    what = "drill hits and netlist points"
    if not len(evidence):
        evidence, what = pad_centres(layers), "pads"
    grid = Grid.over(box, max(CLUMP_CELL_MM, Grid.over(box).cell_mm))
    shapes = [layer.shapes.geometry for layer in layers if len(layer.shapes)]
    covered = draw(grid, TraceSegments.concat([layer.segments for layer in layers]),
                   np.concatenate(shapes) if shapes else None) > 0.05
    grown = ndimage.binary_dilation(covered, iterations=max(1, int(round(CLUMP_GAP_MM / 2 / grid.cell_mm))))
    label, count = ndimage.label(grown)
    if len(evidence):
        row, col = grid.cell_of(evidence[:, 0], evidence[:, 1])
        touched = np.unique(label[row, col])
        touched = touched[touched > 0]
    else:
        what = "copper"
        sizes = ndimage.sum(covered, label, index=np.arange(1, count + 1))
        touched = np.array([int(np.argmax(sizes)) + 1]) if count else np.zeros(0, int)
    keep = np.isin(label, touched) & covered
    rows, cols = np.nonzero(keep)
    if not len(rows):
        return BoardExtent(shapely.box(*box), "the extent of all copper (no copper near the drill hits)")
    xs = np.concatenate([grid.x0 + cols * grid.cell_mm, grid.x0 + (cols + 1) * grid.cell_mm, evidence[:, 0]])
    ys = np.concatenate([grid.y0 + rows * grid.cell_mm, grid.y0 + (rows + 1) * grid.cell_mm, evidence[:, 1]])
    return BoardExtent(shapely.box(xs.min(), ys.min(), xs.max(), ys.max()),
                       f"the extent of the {what} and the copper around them (no outline)")


def leave_out_copper(layers: list[CopperLayer], extent: BoardExtent | None,
                     incomplete: list[str] | None = None) -> tuple[LeftOut, str | None]:
    """Remove copper lying wholly outside the extent from the layers (in place); what was left out, and a warning.

    A layer whose copper lies outside entirely is kept as it is, with a reason in ``incomplete``: it was
    read at another scale or belongs to another board, and cannot be checked against this one."""
    if extent is None:
        return LeftOut(), None
    area = shapely.buffer(extent.shape, EDGE_MARGIN_MM, quad_segs=2)
    shapely.prepare(area)
    outside = []
    for layer in layers:
        s = layer.segments
        seg_out = ~shapely.intersects(area, segment_lines(s)) if len(s) else np.zeros(0, dtype=bool)
        shape_out = (~shapely.intersects(area, layer.shapes.geometry) if len(layer.shapes)
                     else np.zeros(0, dtype=bool))
        if len(seg_out) + len(shape_out) and seg_out.all() and shape_out.all():
            if incomplete is not None:
                incomplete.append(f"{layer.path or layer.name}: all its copper lies outside the board ({extent.how}): "
                                  "other units, or another board's file?")
            seg_out, shape_out = np.zeros_like(seg_out), np.zeros_like(shape_out)
        outside.append((seg_out, shape_out))
    total = sum(len(l.segments) + len(l.shapes) for l in layers)
    dropped = sum(int(a.sum() + b.sum()) for a, b in outside)
    if not dropped:
        return LeftOut(), None
    if extent.is_outline and dropped > LEFT_OUT_MAX_SHARE * total:
        return LeftOut(), (f"{dropped} of {total} copper objects lie outside {extent.how}; that many makes the "
                           "extent doubtful, so all copper is kept")
    length, names = 0.0, []
    for layer, (seg_out, shape_out) in zip(layers, outside):
        if seg_out.any() or shape_out.any():
            names.append(layer.name)
            length += float(layer.segments.select(seg_out).length_mm.sum())
            layer.segments = layer.segments.select(~seg_out)
            keep = ~shape_out
            layer.shapes = type(layer.shapes)(layer.shapes.geometry[keep], layer.shapes.net[keep],
                                              layer.shapes.role[keep])
    left = LeftOut(dropped, length, tuple(names))
    return left, (f"copper outside the board left out of nets and of the search (film frame, title block, text, "
                  f"marks): {dropped} objects, {length:.0f} mm of draws, on {', '.join(names)} "
                  f"(board taken as {extent.how})")


def segment_lines(s: TraceSegments) -> np.ndarray:
    """The segments' centre lines as shapely line strings."""
    return shapely.linestrings(np.stack([np.column_stack([s.x0, s.y0]), np.column_stack([s.x1, s.y1])], axis=1))
