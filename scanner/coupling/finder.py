"""Find coupled pieces: stretches where two trace segments of different nets run side by side.

Per copper layer, a shapely STRtree over segment bounding boxes grown by half the
reach (search distance plus both half-widths) gives candidate pairs in bulk; the
exact geometry is then computed in numpy over all candidates at once, in chunks
that bound memory (see ``benchmarks/bench_index.py`` for the choice of index).

Geometry of one piece (segments a and b, ``net_a < net_b``):

* **parallel**: the angle between the centre lines (direction ignored) is at most
  the angle tolerance; crossings and diagonal approaches give no piece.
* **facing ranges**: on a, the projection of b clipped to a; on b, the projection
  of a clipped to b. The two ranges are mapped onto each other linearly (start to
  start for same-direction segments, start to end otherwise); a parameter
  ``s`` in [0, 1] runs along both. Round ends add nothing: only the facing ranges count.
  Segments at a small angle can face on one side only (the other range is a
  point at the nearer end): short chords of tight arcs need this to cover each other.
* **spacing**: edge to edge, ``centre distance - (w_a + w_b) / 2``, the centre
  distance taken between corresponding points normal to the bisector of the two
  directions. It is linear in ``s``; the piece is clipped to where it is within
  the search distance. Overlapping copper of two nets (a short) reads as spacing 0.
* **length**: the mean of the facing lengths on a and on b. For parallel
  segments both agree; for concentric arcs (flattened to chords) the a side adds up
  to a's arc and the b side to b's arc, so a run gives the mean arc (the centre line).
* **no double counting**: copper drawn twice, overlapping strokes at joints, or a
  segment facing one other net on both sides would count a stretch twice. First,
  per (segment of net_a, net_b), the facing ranges on the a segment are merged
  (union): a later-starting piece is trimmed to start where earlier ones end;
  among ranges starting together the nearer piece, then the lower segment index,
  is kept whole, so all copies of a segment keep the same partner. Then the same
  per (segment of net_b, net_a) on the b side, which removes copies on that side.
  A trim moves the piece's end on both segments together (through the linear map).
  The result does not depend on the order of the segments.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Mapping

import numpy as np
import shapely

from scanner.board.model import NO_NET, TraceSegments
from scanner.memory import check_memory
from scanner.spatial_query import check_index_memory, query_chunks

#: facing lengths and trims shorter than this are treated as zero (mm)
LENGTH_EPS_MM = 1e-6
#: bytes of one indexed segment box (the geometry), and of one facing pair kept through de-duplication
BYTES_PER_BOX = 300
BYTES_PER_KEPT_PAIR = 200

@dataclass(frozen=True)
class CoupledPieces:
    """One row per coupled piece, ``net_a < net_b``; ``seg_a``/``seg_b`` index the layer's TraceSegments.

    ``length_mm`` is the mean of the facing lengths on the two segments;
    spacings are edge to edge over the piece; ``x0_mm..y1_mm`` are the piece's ends
    on the centre line between the two traces; ``angle_deg`` is in [0, 90].
    ``layer_b`` is the layer of ``seg_b``: the same as ``layer`` except for broadside
    pieces (traces on two neighbouring signal layers), whose spacings are measured
    in plan view; ``centre_mean_mm`` is the mean distance between the centre lines in
    plan view (for broadside pieces the lateral offset that sets their coupling).
    """

    layer: np.ndarray
    net_a: np.ndarray
    net_b: np.ndarray
    seg_a: np.ndarray
    seg_b: np.ndarray
    length_mm: np.ndarray
    spacing_min_mm: np.ndarray
    spacing_mean_mm: np.ndarray
    width_a_mm: np.ndarray
    width_b_mm: np.ndarray
    x0_mm: np.ndarray
    y0_mm: np.ndarray
    x1_mm: np.ndarray
    y1_mm: np.ndarray
    angle_deg: np.ndarray
    layer_b: np.ndarray | None = None
    centre_mean_mm: np.ndarray | None = None

    def __post_init__(self):
        if self.layer_b is None:
            object.__setattr__(self, "layer_b", np.asarray(self.layer).copy())
        if self.centre_mean_mm is None:
            object.__setattr__(self, "centre_mean_mm",
                               np.asarray(self.spacing_mean_mm) + 0.5 * (np.asarray(self.width_a_mm)
                                                                          + np.asarray(self.width_b_mm)))

    def __len__(self) -> int:
        return len(self.layer)

    @property
    def broadside(self) -> np.ndarray:
        """True for pieces between traces on two different layers."""
        return self.layer_b != self.layer

    @classmethod
    def concat(cls, parts: list["CoupledPieces"]) -> "CoupledPieces":
        return cls(*(np.concatenate([getattr(p, k) for p in parts]) for k in cls.__dataclass_fields__))

    def take(self, index) -> "CoupledPieces":
        return CoupledPieces(*(getattr(self, k)[index] for k in self.__dataclass_fields__))


class _Segs:
    """Per-layer segment arrays with unit directions and lengths, computed once."""

    def __init__(self, seg: TraceSegments):
        self.x0, self.y0, self.w, self.net = seg.x0, seg.y0, seg.width, seg.net
        dx, dy = seg.x1 - seg.x0, seg.y1 - seg.y0
        self.length = np.hypot(dx, dy)
        safe = np.where(self.length > 0, self.length, 1.0)
        self.ux, self.uy = dx / safe, dy / safe


@dataclass
class _Pairs:
    """Facing geometry of pairs (a, b): see the module docstring for the meaning."""

    a: np.ndarray
    b: np.ndarray
    cos_ab: np.ndarray  # cosine of the angle between directions, signed
    ta0: np.ndarray  # facing range on a (mm from a's start), ta0 <= ta1
    ta1: np.ndarray
    tbs: np.ndarray  # position on b at s = 0
    dtb: np.ndarray  # d(position on b)/ds, negative for opposite directions
    h0: np.ndarray  # signed centre distance at s = 0
    dh: np.ndarray  # its change over s in [0, 1]
    reach: np.ndarray  # centre distance at which the edges are the search distance apart

    def take(self, keep) -> "_Pairs":
        return _Pairs(*(getattr(self, k)[keep] for k in self.__dataclass_fields__))

    def ta(self, s):
        return self.ta0 + s * (self.ta1 - self.ta0)

    def tb(self, s):
        return self.tbs + s * self.dtb


def _pair_geometry(g: _Segs, a: np.ndarray, b: np.ndarray, cos_ab: np.ndarray, search_mm: float) -> _Pairs:
    uax, uay, ubx, uby = g.ux[a], g.uy[a], g.ux[b], g.uy[b]
    ax, ay, bx, by = g.x0[a], g.y0[a], g.x0[b], g.y0[b]
    la, lb = g.length[a], g.length[b]
    dx, dy = bx - ax, by - ay
    # b's ends on a's axis, a's ends on b's axis
    pb0 = dx * uax + dy * uay
    pb1 = pb0 + lb * cos_ab
    pa0 = -(dx * ubx + dy * uby)
    pa1 = pa0 + la * cos_ab
    # clipped to the segment; a range outside it shrinks to the nearer end (a point)
    ta0 = np.clip(np.minimum(pb0, pb1), 0.0, la)
    ta1 = np.clip(np.maximum(pb0, pb1), 0.0, la)
    tb0 = np.clip(np.minimum(pa0, pa1), 0.0, lb)
    tb1 = np.clip(np.maximum(pa0, pa1), 0.0, lb)
    same = cos_ab >= 0
    tbs = np.where(same, tb0, tb1)
    dtb = np.where(same, tb1 - tb0, tb0 - tb1)
    # normal to the bisector of the two directions (b flipped when opposite)
    sgn = np.where(same, 1.0, -1.0)
    nx, ny = -(uay + sgn * uby), uax + sgn * ubx
    norm = np.hypot(nx, ny)
    nx, ny = nx / norm, ny / norm
    # gap vector B(s) - A(s) at s = 0 and s = 1
    g0x = dx + ubx * tbs - uax * ta0
    g0y = dy + uby * tbs - uay * ta0
    g1x = g0x + ubx * dtb - uax * (ta1 - ta0)
    g1y = g0y + uby * dtb - uay * (ta1 - ta0)
    h0 = g0x * nx + g0y * ny
    dh = g1x * nx + g1y * ny - h0
    reach = search_mm + 0.5 * (g.w[a] + g.w[b])
    return _Pairs(a, b, cos_ab, ta0, ta1, tbs, dtb, h0, dh, reach)


def _within_reach(p: _Pairs) -> tuple[np.ndarray, np.ndarray]:
    """Sub-range [lo, hi] of s where |h(s)| <= reach (empty when lo >= hi)."""
    flat = np.abs(p.dh) < 1e-12
    safe = np.where(flat, 1.0, p.dh)
    s_plus = (p.reach - p.h0) / safe
    s_minus = (-p.reach - p.h0) / safe
    inside = np.abs(p.h0) <= p.reach
    lo = np.where(flat, np.where(inside, 0.0, 1.0), np.maximum(0.0, np.minimum(s_plus, s_minus)))
    hi = np.where(flat, np.where(inside, 1.0, 0.0), np.minimum(1.0, np.maximum(s_plus, s_minus)))
    return lo, hi


def previous_interval_end(key_major: np.ndarray, key_minor: np.ndarray, start: np.ndarray, end: np.ndarray,
                          ties: tuple[np.ndarray, ...] = ()) -> np.ndarray:
    """Per group (key_major, key_minor), the furthest end of the intervals before each one (mm).

    Intervals are taken in order of group, start (on a 1e-6 mm grid, so that copies
    differing by rounding sort alike), then ``ties`` (most significant first); the
    first of a group gets a negative value. Ends must be >= 0. The running maximum
    is taken in int64 with the group number in the high digits and the end on a grid
    of at most 1e-9 mm (coarser only when groups x extent would overflow).
    """
    order = np.lexsort((*ties[::-1], np.rint(start / LENGTH_EPS_MM), key_minor, key_major))
    if not len(order):
        return np.zeros(0)
    km, kn = key_major[order], key_minor[order]
    new_group = np.ones(len(order), dtype=bool)
    new_group[1:] = (km[1:] != km[:-1]) | (kn[1:] != kn[:-1])
    gid = np.cumsum(new_group, dtype=np.int64)
    extent = float(end.max()) + 1.0
    grid = max(1e-9, extent * float(gid[-1] + 1) / 2.0**61)
    shift = np.int64(np.ceil(extent / grid)) + 1
    run_max = np.maximum.accumulate(np.rint(end[order] / grid).astype(np.int64) + gid * shift)
    prev = np.concatenate([[0], run_max[:-1]])
    result = np.empty_like(start)
    result[order] = (prev - gid * shift) * grid
    return result


def _union_on_side(seg: np.ndarray, other_net: np.ndarray, t_start: np.ndarray, dt: np.ndarray,
                   lo: np.ndarray, hi: np.ndarray, ties: tuple[np.ndarray, ...]):
    """Merge facing ranges per (segment, other net) on one side; returns new lo, hi and the rows kept.

    A range position is ``t_start + s * dt`` along the segment; rows with a
    point-like range on this side cover nothing here and pass unchanged.
    """
    t_lo, t_hi = t_start + lo * dt, t_start + hi * dt
    start, end = np.minimum(t_lo, t_hi), np.maximum(t_lo, t_hi)
    rows = np.flatnonzero(end - start > LENGTH_EPS_MM)
    new_start = np.maximum(start[rows], previous_interval_end(seg[rows], other_net[rows], start[rows],
                                                              end[rows], tuple(t[rows] for t in ties)))
    s_new = (new_start - t_start[rows]) / dt[rows]
    rising = dt[rows] > 0
    lo, hi = lo.copy(), hi.copy()
    lo[rows] = np.where(rising, s_new, lo[rows])
    hi[rows] = np.where(rising, hi[rows], s_new)
    keep = np.ones(len(lo), dtype=bool)
    keep[rows] = end[rows] - new_start > LENGTH_EPS_MM
    return lo, hi, keep


def _deduplicate(p: _Pairs, net: np.ndarray, lo: np.ndarray, hi: np.ndarray):
    """Union of facing ranges per (a, net_b) on a, then per (b, net_a) on b; returns kept rows and new lo, hi.

    Among ranges starting together the nearer piece, then the lower segment index
    of the other net, comes first: copies of a segment then all keep the same
    partner, so the second pass removes the copies on the other side.
    """
    distance_q = np.rint(np.abs(p.h0 + 0.5 * (lo + hi) * p.dh) / LENGTH_EPS_MM)
    lo, hi, keep = _union_on_side(p.a, net[p.b], p.ta0, p.ta1 - p.ta0, lo, hi, (distance_q, p.b))
    p, lo, hi, distance_q = p.take(keep), lo[keep], hi[keep], distance_q[keep]
    lo, hi, keep = _union_on_side(p.b, net[p.a], p.tbs, p.dtb, lo, hi, (distance_q, p.a))
    return p.take(keep), lo[keep], hi[keep]


def _pieces(layer: int, g: _Segs, p: _Pairs, lo: np.ndarray, hi: np.ndarray) -> CoupledPieces:
    span = hi - lo
    length = 0.5 * span * ((p.ta1 - p.ta0) + np.abs(p.dtb))
    h_lo, h_hi = p.h0 + lo * p.dh, p.h0 + hi * p.dh
    d_lo, d_hi = np.abs(h_lo), np.abs(h_hi)
    crosses = (h_lo * h_hi) < 0
    centre_min = np.where(crosses, 0.0, np.minimum(d_lo, d_hi))
    with np.errstate(invalid="ignore", divide="ignore"):
        centre_mean = np.where(crosses, (h_lo**2 + h_hi**2) / (2.0 * (d_lo + d_hi)), 0.5 * (d_lo + d_hi))
    wa, wb = g.w[p.a], g.w[p.b]
    half_sum = 0.5 * (wa + wb)
    a, b = p.a, p.b

    def midline(s):
        ta, tb = p.ta(s), p.tb(s)
        return (0.5 * (g.x0[a] + g.ux[a] * ta + g.x0[b] + g.ux[b] * tb),
                0.5 * (g.y0[a] + g.uy[a] * ta + g.y0[b] + g.uy[b] * tb))

    x0, y0 = midline(lo)
    x1, y1 = midline(hi)
    angle = np.degrees(np.arccos(np.clip(np.abs(p.cos_ab), 0.0, 1.0)))
    return CoupledPieces(
        layer=np.full(len(a), layer, dtype=np.int32), net_a=g.net[a], net_b=g.net[b],
        seg_a=a.astype(np.int64), seg_b=b.astype(np.int64), length_mm=length,
        spacing_min_mm=np.maximum(centre_min - half_sum, 0.0),
        spacing_mean_mm=np.maximum(centre_mean - half_sum, 0.0),
        width_a_mm=wa, width_b_mm=wb, x0_mm=x0, y0_mm=y0, x1_mm=x1, y1_mm=y1, angle_deg=angle,
        layer_b=np.full(len(a), layer, dtype=np.int32), centre_mean_mm=centre_mean)


def _candidate_boxes(seg: TraceSegments, rows: np.ndarray, search_mm: float) -> np.ndarray:
    grow = 0.5 * (search_mm + seg.width[rows])
    x0, x1, y0, y1 = seg.x0[rows], seg.x1[rows], seg.y0[rows], seg.y1[rows]
    return shapely.box(np.minimum(x0, x1) - grow, np.minimum(y0, y1) - grow,
                       np.maximum(x0, x1) + grow, np.maximum(y0, y1) + grow)


def _layer_pairs(seg: TraceSegments, g: _Segs, rows: np.ndarray, search_mm: float, cos_min: float,
                 partner: np.ndarray | None, side: np.ndarray | None = None) -> tuple[_Pairs, np.ndarray, np.ndarray]:
    """Candidate pairs from the index, filtered to different, non-partner nets facing in parallel within reach
    (and, given ``side``, only pairs of segments on different sides)."""
    check_index_memory(len(rows), BYTES_PER_BOX, "trace segments for the coupled-run search")
    boxes = _candidate_boxes(seg, rows, search_mm)
    tree = shapely.STRtree(boxes)
    parts, lows, highs = [], [], []
    kept = 0
    for i, j in query_chunks(tree, boxes, f"coupled-run search over {len(rows):,} trace segments"):
        upper = j > i
        a, b = rows[i[upper]], rows[j[upper]]
        na, nb = g.net[a], g.net[b]
        keep = na != nb
        if partner is not None:
            keep &= partner[na] != nb
        if side is not None:
            keep &= side[a] != side[b]
        a, b, na, nb = a[keep], b[keep], na[keep], nb[keep]
        cos_ab = g.ux[a] * g.ux[b] + g.uy[a] * g.uy[b]
        keep = np.abs(cos_ab) >= cos_min
        flip = na[keep] > nb[keep]
        a, b = np.where(flip, b[keep], a[keep]), np.where(flip, a[keep], b[keep])
        p = _pair_geometry(g, a, b, cos_ab[keep], search_mm)
        lo, hi = _within_reach(p)
        keep = ((p.ta1 - p.ta0) + np.abs(p.dtb) > LENGTH_EPS_MM) & (hi > lo)
        parts.append(p.take(keep))
        lows.append(lo[keep])
        highs.append(hi[keep])
        kept += int(keep.sum())
        check_memory(int(keep.sum()) * BYTES_PER_KEPT_PAIR, f"keeping {kept:,} facing pairs of trace segments")
    if not parts:
        p = _pair_geometry(g, rows[:0], rows[:0], np.zeros(0), search_mm)
        return p, np.zeros(0), np.zeros(0)
    merged = _Pairs(*(np.concatenate([getattr(p, k) for p in parts])
                      for k in _Pairs.__dataclass_fields__))
    return merged, np.concatenate(lows), np.concatenate(highs)


def _strip_order(seg: TraceSegments, rows: np.ndarray, strip_mm: float = 4.0) -> np.ndarray:
    """Rows sorted by vertical strip, then y: neighbours get close indices, which speeds the index query."""
    cx, cy = 0.5 * (seg.x0[rows] + seg.x1[rows]), 0.5 * (seg.y0[rows] + seg.y1[rows])
    return rows[np.lexsort((cy, np.floor(cx / strip_mm)))]


def _net_table(values: np.ndarray | None, name: str, max_net: int) -> np.ndarray | None:
    if values is None:
        return None
    values = np.asarray(values)
    if len(values) <= max_net:
        raise ValueError(f"{name} has {len(values)} entries but net ids reach {max_net}")
    return values


def find_coupled_pieces(layers: Mapping[int, TraceSegments], search_distance_mm: float,
                        angle_tolerance_deg: float = 10.0, net_active: np.ndarray | None = None,
                        net_partner: np.ndarray | None = None, min_overlap_mm: float = 0.0) -> CoupledPieces:
    """Coupled pieces between segments of different nets on the same layer.

    ``layers`` maps a copper layer index to its trace segments. A pair needs both
    nets active (``net_active[net]``), nets that are not each other's
    ``net_partner`` (differential pairs) and edge-to-edge spacing within
    ``search_distance_mm`` somewhere along its facing range. Segments with
    ``NO_NET`` or zero length are skipped. Pieces shorter than ``min_overlap_mm``
    (after de-duplication) are dropped. See the module docstring for the geometry.
    """
    if search_distance_mm < 0 or not 0 <= angle_tolerance_deg < 90:
        raise ValueError("search distance must be >= 0 and angle tolerance in [0, 90)")
    cos_min = float(np.cos(np.radians(angle_tolerance_deg)))
    max_net = max((int(s.net.max()) for s in layers.values() if len(s)), default=-1)
    active = _net_table(net_active, "net_active", max_net)
    partner = _net_table(net_partner, "net_partner", max_net)
    out = []
    for layer, seg in sorted(layers.items()):
        pieces = _search(seg, None, search_distance_mm, cos_min, active, partner)
        if pieces is not None:
            out.append(_finish(pieces, int(layer), min_overlap_mm))
    if not out:
        return _empty_pieces()
    return CoupledPieces.concat(out)


def find_broadside_pieces(layer_pairs: Mapping[tuple[int, int], tuple[TraceSegments, TraceSegments]],
                          search_distance_mm: float, angle_tolerance_deg: float = 10.0,
                          net_active: np.ndarray | None = None, net_partner: np.ndarray | None = None,
                          min_overlap_mm: float = 0.0) -> CoupledPieces:
    """Coupled pieces between traces of different nets on two neighbouring signal layers (broadside).

    ``layer_pairs`` maps (layer, other layer) to their trace segments. The geometry is the
    same-layer one taken in plan view: parallel within the angle tolerance, overlapping
    projections, lateral edge spacing within ``search_distance_mm`` (0 where the traces
    overlap in plan); only pairs with one segment on each layer count.
    """
    cos_min = float(np.cos(np.radians(angle_tolerance_deg)))
    max_net = max((int(s.net.max()) for pair in layer_pairs.values() for s in pair if len(s)), default=-1)
    active = _net_table(net_active, "net_active", max_net)
    partner = _net_table(net_partner, "net_partner", max_net)
    out = []
    for (first, second), (seg_1, seg_2) in sorted(layer_pairs.items()):
        merged = TraceSegments.concat([seg_1, seg_2])
        side = np.r_[np.zeros(len(seg_1), dtype=np.int8), np.ones(len(seg_2), dtype=np.int8)]
        pieces = _search(merged, side, search_distance_mm, cos_min, active, partner)
        if pieces is None:
            continue
        on_1_a, on_1_b = side[pieces.seg_a] == 0, side[pieces.seg_b] == 0
        pieces = replace(pieces, layer=np.where(on_1_a, first, second).astype(np.int32),
                         layer_b=np.where(on_1_b, first, second).astype(np.int32),
                         seg_a=np.where(on_1_a, pieces.seg_a, pieces.seg_a - len(seg_1)),
                         seg_b=np.where(on_1_b, pieces.seg_b, pieces.seg_b - len(seg_1)))
        out.append(pieces.take(pieces.length_mm >= max(min_overlap_mm, LENGTH_EPS_MM)))
    if not out:
        return _empty_pieces()
    return CoupledPieces.concat(out)


def _search(seg: TraceSegments, side, search_mm: float, cos_min: float, active, partner) -> CoupledPieces | None:
    """All pieces among one set of segments (pairs across ``side`` only, when given); None when too few."""
    g = _Segs(seg)
    usable = (seg.net != NO_NET) & (g.length > LENGTH_EPS_MM)
    if active is not None:
        usable &= active[np.maximum(seg.net, 0)].astype(bool)
    rows = _strip_order(seg, np.flatnonzero(usable))
    if len(rows) < 2:
        return None
    p, lo, hi = _layer_pairs(seg, g, rows, search_mm, cos_min, partner, side)
    p, lo, hi = _deduplicate(p, g.net, lo, hi)
    return _pieces(0, g, p, lo, hi)


def _finish(pieces: CoupledPieces, layer: int, min_overlap_mm: float) -> CoupledPieces:
    pieces = replace(pieces, layer=np.full(len(pieces), layer, dtype=np.int32),
                     layer_b=np.full(len(pieces), layer, dtype=np.int32))
    return pieces.take(pieces.length_mm >= max(min_overlap_mm, LENGTH_EPS_MM))


def _empty_pieces() -> CoupledPieces:
    dtypes = {"layer": np.int32, "layer_b": np.int32, "net_a": np.int32, "net_b": np.int32, "seg_a": np.int64,
              "seg_b": np.int64}
    return CoupledPieces(*(np.zeros(0, dtype=dtypes.get(k, np.float64)) for k in CoupledPieces.__dataclass_fields__))
