"""Circular arcs flattened to straight pieces within a chord tolerance, vectorised over many arcs."""
from __future__ import annotations

import numpy as np

from scanner.board.model import ARC_CHORD_TOLERANCE_MM
from scanner.input_limits import SEGMENTS, check_count

#: upper bound on pieces per arc, so a corrupt radius cannot exhaust memory
MAX_PIECES_PER_ARC = 4096


def arc_sweep(x0, y0, x1, y1, cx, cy, clockwise) -> np.ndarray:
    """Signed sweep angle (rad, counter-clockwise positive); coincident ends give a full turn."""
    a0 = np.arctan2(y0 - cy, x0 - cx)
    a1 = np.arctan2(y1 - cy, x1 - cx)
    ccw = np.mod(a1 - a0, 2 * np.pi)
    cw = np.mod(a0 - a1, 2 * np.pi)
    ccw = np.where(ccw < 1e-12, 2 * np.pi, ccw)
    cw = np.where(cw < 1e-12, 2 * np.pi, cw)
    return np.where(clockwise, -cw, ccw)


def flatten_arcs(x0, y0, x1, y1, cx, cy, clockwise, tolerance_mm: float = ARC_CHORD_TOLERANCE_MM):
    """Points along each arc, start and end included, so no chord strays more than ``tolerance_mm``.

    Centres are absolute. Returns ``(counts, px, py)``: arc ``k`` owns ``counts[k]`` consecutive points.
    Start and end radii may differ slightly (file rounding); the radius is blended linearly along the sweep.
    More pieces in one call than the segment limit (``scanner.input_limits``) is an InputError.
    """
    x0, y0, x1, y1, cx, cy = (np.asarray(v, dtype=np.float64) for v in (x0, y0, x1, y1, cx, cy))
    clockwise = np.asarray(clockwise, dtype=bool)
    r0 = np.hypot(x0 - cx, y0 - cy)
    r1 = np.hypot(x1 - cx, y1 - cy)
    sweep = arc_sweep(x0, y0, x1, y1, cx, cy, clockwise)
    radius = np.maximum(r0, r1)
    cos_half = np.clip(1.0 - tolerance_mm / np.maximum(radius, 1e-12), -1.0, 1.0)
    step = np.maximum(2.0 * np.arccos(cos_half), 1e-6)
    pieces = np.clip(np.ceil(np.abs(sweep) / step), 1, MAX_PIECES_PER_ARC).astype(np.int64)
    check_count(int(pieces.sum()), SEGMENTS, "straight pieces from arcs")  # before the points are allocated
    counts = pieces + 1
    owner = np.repeat(np.arange(len(x0)), counts)
    first = np.cumsum(counts) - counts
    j = np.arange(counts.sum()) - first[owner]
    frac = j / pieces[owner]
    angle = np.arctan2(y0 - cy, x0 - cx)[owner] + sweep[owner] * frac
    rad = r0[owner] + (r1 - r0)[owner] * frac
    px = cx[owner] + rad * np.cos(angle)
    py = cy[owner] + rad * np.sin(angle)
    last = first + pieces
    px[first], py[first] = x0, y0
    px[last], py[last] = x1, y1
    return counts, px, py


def ring_points(points: np.ndarray, arc_cw: np.ndarray, arc_cx: np.ndarray, arc_cy: np.ndarray,
                tolerance_mm: float = ARC_CHORD_TOLERANCE_MM) -> np.ndarray:
    """Closed outline with arc edges flattened.

    ``points`` (n, 2) are outline vertices; edge ``i`` runs from ``points[i]`` to ``points[i+1]``
    (the last edge back to ``points[0]``). ``arc_cw`` is NaN for straight edges, else 1.0 (clockwise)
    or 0.0, with absolute centres in ``arc_cx``/``arc_cy``.
    """
    n = len(points)
    start = points
    end = np.roll(points, -1, axis=0)
    is_arc = ~np.isnan(arc_cw)
    if not is_arc.any():
        return points
    idx = np.flatnonzero(is_arc)
    counts, px, py = flatten_arcs(start[idx, 0], start[idx, 1], end[idx, 0], end[idx, 1],
                                  arc_cx[idx], arc_cy[idx], arc_cw[idx] > 0.5, tolerance_mm)
    per_edge = np.ones(n, dtype=np.int64)
    per_edge[idx] = counts - 1  # an edge contributes its start and interior points, not its end
    out = np.empty((per_edge.sum(), 2))
    edge_first = np.cumsum(per_edge) - per_edge
    straight = ~is_arc
    out[edge_first[straight]] = start[straight]
    arc_first = np.cumsum(counts) - counts
    keep = np.ones(len(px), dtype=bool)
    keep[arc_first + counts - 1] = False
    dest = np.repeat(edge_first[idx], counts - 1) + (np.arange(keep.sum()) - np.repeat(np.cumsum(counts - 1) - (counts - 1), counts - 1))
    out[dest, 0] = px[keep]
    out[dest, 1] = py[keep]
    return out
