"""Pours not drawn as regions: strokes (hatched or stroked fills) and negative images.

Stroked pours are rows of parallel draws that overlap side by side.
Traces of different nets never overlap, and one trace is never painted as many overlapping
parallel strokes over millimetres of width; a pour filled with strokes always is. Such strokes
are pour copper, not traces: they become region shapes, so plane detection counts them and
the coupling search does not take a pour for a bundle of signal traces.
"""
from __future__ import annotations

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from scanner.board.model import NO_NET, CopperLayer, CopperShapes, TraceSegments
from scanner.importers.board_extent import segment_lines
from scanner.memory import check_memory

#: strokes count as parallel within this angle (degrees)
PARALLEL_DEG = 1.0
#: a group of overlapping parallel strokes is a pour when it spans at least this across the strokes (mm) ...
POUR_MIN_ACROSS_MM = 2.0
#: ... and holds at least this many strokes
POUR_MIN_STROKES = 6
#: segments per quarter circle of the capsules the strokes become
CAPSULE_QUAD_SEGS = 2
#: bytes per outline point while shapes are merged (an upper estimate, as for merging pours)
BYTES_PER_UNION_POINT = 200


def pour_strokes(s: TraceSegments) -> np.ndarray:
    """Boolean mask of the segments that are strokes of a filled pour."""
    n = len(s)
    if n < POUR_MIN_STROKES:
        return np.zeros(n, dtype=bool)
    dx, dy = s.x1 - s.x0, s.y1 - s.y0
    length = np.hypot(dx, dy)
    ok = length > 0
    ux, uy = np.where(ok, dx / np.where(ok, length, 1), 1.0), np.where(ok, dy / np.where(ok, length, 1), 0.0)
    half = s.width / 2
    boxes = shapely.box(np.minimum(s.x0, s.x1) - half, np.minimum(s.y0, s.y1) - half,
                        np.maximum(s.x0, s.x1) + half, np.maximum(s.y0, s.y1) + half)
    a, b = shapely.STRtree(boxes).query(boxes)
    keep = (a < b) & ok[a] & ok[b]
    a, b = a[keep], b[keep]
    parallel = np.abs(ux[a] * uy[b] - uy[a] * ux[b]) < np.sin(np.radians(PARALLEL_DEG))
    a, b = a[parallel], b[parallel]
    # distance across: b's midpoint from a's centre line; overlap along: b's ends projected on a
    mx, my = (s.x0[b] + s.x1[b]) / 2 - s.x0[a], (s.y0[b] + s.y1[b]) / 2 - s.y0[a]
    across = np.abs(ux[a] * my - uy[a] * mx)
    t0 = ux[a] * (s.x0[b] - s.x0[a]) + uy[a] * (s.y0[b] - s.y0[a])
    t1 = ux[a] * (s.x1[b] - s.x0[a]) + uy[a] * (s.y1[b] - s.y0[a])
    along = np.minimum(np.maximum(t0, t1), length[a]) - np.maximum(np.minimum(t0, t1), 0.0)
    side_by_side = (across > 1e-6) & (across < half[a] + half[b] - 1e-6) & (along > np.minimum(s.width[a], s.width[b]))
    a, b = a[side_by_side], b[side_by_side]
    if not len(a):
        return np.zeros(n, dtype=bool)
    graph = coo_matrix((np.ones(len(a), dtype=np.int8), (a, b)), shape=(n, n))
    _, label = connected_components(graph, directed=False)
    grouped = np.zeros(n, dtype=bool)
    grouped[a] = grouped[b] = True
    # extent of each group across its strokes, measured along the normal of the group's first stroke
    first = np.full(label.max() + 1, -1)
    members = np.flatnonzero(grouped)
    first[label[members[::-1]]] = members[::-1]
    ref = first[label[members]]
    offset = -uy[ref] * ((s.x0[members] + s.x1[members]) / 2) + ux[ref] * ((s.y0[members] + s.y1[members]) / 2)
    g = label[members]
    low = np.full(len(first), np.inf)
    high = np.full(len(first), -np.inf)
    np.minimum.at(low, g, offset - half[members])
    np.maximum.at(high, g, offset + half[members])
    count = np.bincount(g, minlength=len(first))
    pour_group = (high - low >= POUR_MIN_ACROSS_MM) & (count >= POUR_MIN_STROKES)
    out = np.zeros(n, dtype=bool)
    out[members] = pour_group[g]
    return out


def _inside_pour(s: TraceSegments, pour: np.ndarray, capsules: np.ndarray) -> np.ndarray:
    """Segments not in the pour whose two ends both lie on pour strokes: the pour's own edges and clearance
    outlines, drawn with the same pen. A trace that joins the pour has one end outside it."""
    rest = np.flatnonzero(~pour)
    if not len(rest) or not len(capsules):
        return np.zeros(len(s), dtype=bool)
    tree = shapely.STRtree(capsules)
    ends = []
    for x, y in ((s.x0[rest], s.y0[rest]), (s.x1[rest], s.y1[rest])):
        hit, _ = tree.query(shapely.points(x, y), predicate="intersects")
        on = np.zeros(len(rest), dtype=bool)
        on[hit] = True
        ends.append(on)
    out = np.zeros(len(s), dtype=bool)
    out[rest[ends[0] & ends[1]]] = True
    return out


def strokes_to_pour(layer: CopperLayer) -> tuple[CopperLayer, int]:
    """The layer with its pour strokes (and the edges drawn on them) turned into region shapes; and how
    many strokes were."""
    s = layer.segments
    mask = pour_strokes(s)
    if not mask.any():
        return layer, 0
    mask |= _inside_pour(s, mask, shapely.buffer(segment_lines(s.select(mask)), s.width[mask] / 2,
                                                 quad_segs=CAPSULE_QUAD_SEGS))
    count = int(mask.sum())
    p = s.select(mask)
    capsules = shapely.buffer(segment_lines(p), p.width / 2, quad_segs=CAPSULE_QUAD_SEGS)
    shapes = CopperShapes(np.concatenate([layer.shapes.geometry, capsules]),
                          np.concatenate([layer.shapes.net, p.net]),
                          np.concatenate([layer.shapes.role, np.full(count, "region", dtype=object)]))
    layer.segments, layer.shapes = s.select(~mask), shapes
    return layer, count


def negative_to_pour(layer: CopperLayer, board_area) -> CopperLayer:
    """A negative-image layer as copper: the board's area minus everything the film draws, as one region
    without a net (plated holes name it later)."""
    s = layer.segments
    drawn = [shapely.buffer(segment_lines(s), s.width / 2, quad_segs=CAPSULE_QUAD_SEGS)] if len(s) else []
    if len(layer.shapes):
        drawn.append(layer.shapes.geometry)
    drawn = np.concatenate(drawn) if drawn else np.zeros(0, dtype=object)
    check_memory(shapely.get_num_coordinates(drawn).sum() * BYTES_PER_UNION_POINT,
                 f"inverting the negative image of {layer.name} ({len(drawn):,} objects)", layer.path)
    cleared = shapely.union_all(drawn) if len(drawn) else None
    copper = shapely.difference(board_area, cleared) if cleared is not None else board_area
    parts = shapely.get_parts(copper)
    parts = parts[shapely.area(parts) > 0]
    layer.segments = TraceSegments.empty()
    layer.shapes = CopperShapes(parts, np.full(len(parts), NO_NET, dtype=np.int32),
                                np.full(len(parts), "region", dtype=object))
    return layer
