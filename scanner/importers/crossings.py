"""Where a closed outline meets itself, counted with a cap, so that repairing it stays cheap.

A self-crossing region or contour is repaired by GEOS's ``make_valid``, whose time and memory grow with
the number of points where the outline meets itself; GEOS's own validity test grows the same way. A
star of 5,000 points crosses itself millions of times. Here the meetings are counted first, in numpy,
stopping as soon as the count passes the cap: candidate edge pairs come from a sweep along the axis on
which the edges overlap least, and are tested exactly (orientation signs) in chunks of bounded size.
"""
from __future__ import annotations

import numpy as np

#: pairs of edges examined per chunk (about 100 bytes each while tested)
CHUNK_PAIRS = 1 << 20


def _orient(ax, ay, bx, by, cx, cy) -> np.ndarray:
    """Sign of the turn a -> b -> c (positive counter-clockwise, 0 collinear)."""
    return np.sign((bx - ax) * (cy - ay) - (by - ay) * (cx - ax))


def _meet(p: np.ndarray, q: np.ndarray, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """Whether edges i (p[i] -> q[i]) and j cross or touch."""
    ax, ay, bx, by = p[i, 0], p[i, 1], q[i, 0], q[i, 1]
    cx, cy, dx, dy = p[j, 0], p[j, 1], q[j, 0], q[j, 1]
    d1, d2 = _orient(ax, ay, bx, by, cx, cy), _orient(ax, ay, bx, by, dx, dy)
    d3, d4 = _orient(cx, cy, dx, dy, ax, ay), _orient(cx, cy, dx, dy, bx, by)
    proper = (d1 * d2 < 0) & (d3 * d4 < 0)

    def within(x0, y0, x1, y1, x, y):  # a point collinear with a segment lies on it
        return ((np.minimum(x0, x1) <= x) & (x <= np.maximum(x0, x1))
                & (np.minimum(y0, y1) <= y) & (y <= np.maximum(y0, y1)))

    touch = (((d1 == 0) & within(ax, ay, bx, by, cx, cy)) | ((d2 == 0) & within(ax, ay, bx, by, dx, dy))
             | ((d3 == 0) & within(cx, cy, dx, dy, ax, ay)) | ((d4 == 0) & within(cx, cy, dx, dy, bx, by)))
    return proper | touch


def self_meetings(ring: np.ndarray, most: int, most_pairs: int) -> tuple[int, bool]:
    """Points where edges of the closed outline ``ring`` (n, 2; last edge back to the first point) that are
    not neighbours cross or touch, counted until the count passes ``most``.

    Returns (count, complete): ``complete`` is False when more than ``most_pairs`` candidate pairs would
    have to be examined (the count is then a lower bound).
    """
    p = np.asarray(ring, dtype=np.float64)
    n = len(p)
    if n < 4:
        return 0, True
    q = np.roll(p, -1, axis=0)
    lo, hi = np.minimum(p, q), np.maximum(p, q)
    order, start, stop = None, None, None
    total = None
    for axis in (0, 1):  # sweep along the axis with fewer overlapping edge pairs
        by_lo = np.argsort(lo[:, axis], kind="stable")
        sorted_lo = lo[by_lo, axis]
        last = np.searchsorted(sorted_lo, hi[by_lo, axis], side="right")
        first = np.arange(1, n + 1)
        count = int(np.maximum(last - first, 0).sum())
        if total is None or count < total:
            order, start, stop, total, other = by_lo, first, np.maximum(last, first), count, 1 - axis
    if total > most_pairs:
        return 0, False
    found = 0
    per_edge = stop - start
    bounds = np.searchsorted(np.cumsum(per_edge), np.arange(CHUNK_PAIRS, total + CHUNK_PAIRS, CHUNK_PAIRS))
    begin = 0
    for end in np.unique(np.minimum(bounds + 1, n)):
        counts = per_edge[begin:end]
        if counts.sum():
            owner = np.repeat(np.arange(begin, end), counts)
            offset = np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts)
            i, j = order[owner], order[start[owner] + offset]
            gap = np.abs(i - j)
            keep = (gap != 1) & (gap != n - 1) & (lo[i, other] <= hi[j, other]) & (lo[j, other] <= hi[i, other])
            found += int(_meet(p, q, i[keep], j[keep]).sum())
            if found > most:
                return found, True
        begin = end
    return found, True
