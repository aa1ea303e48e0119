"""The impedance check: routed stretches whose width and layer put them outside their class's impedance target.

A net class may carry ``z0_target_ohm`` (every trace of its nets) and
``zdiff_target_ohm`` (its differential pairs, where the two legs run side by
side) with a tolerance in percent. Each trace segment gets the single-ended Z0
of its width on its layer, each pair piece the differential impedance of its
width and gap, from the same field solver and layer cross-sections as the
crosstalk tables. Elements outside the target join into stretches (same net or
pair, same layer, ends touching); a stretch is listed with its length and
location when it is at least ``impedance_min_length_mm`` long (shorter ones,
such as neck-downs at pads, are counted). Pair legs further apart than the
pair-gap limit of ``scanner.coupling.layer_impedance`` are uncoupled there and
meet the single-ended target only.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from scanner.board.layerstack import BoardEnvironments
from scanner.board.model import NO_NET, Board
from scanner.board.roles import NetRoles
from scanner.coupling.coefficients import section_arguments
from scanner.coupling.finder import CoupledPieces
from scanner.coupling.layer_impedance import PAIR_GAP_LIMIT
from scanner.physics import DifferentialTable, trace_impedance
from scanner.rules import NetClass, Rules
from scanner.scoring.results import rounded

#: ends of two segments of one net closer than this (mm) touch
SEGMENT_JOIN_MM = 0.01
#: ends of two pieces of one pair closer than this (mm) continue one stretch (corners leave small gaps)
PIECE_JOIN_MM = 0.5
#: widths and gaps are solved on this grid (mm)
WIDTH_GRID_MM = 1e-4


@dataclass(frozen=True)
class ImpedanceStretch:
    """A routed stretch of one net (or one pair) on one layer whose impedance is outside its class's target."""

    status: str  # "fail"
    net_class: str
    net: str  # the net, or "P / N" for a pair
    kind: str  # "single-ended" | "differential"
    layer: str
    length_mm: float
    width_mm: float  # length-weighted mean
    gap_mm: float | None  # length-weighted mean edge-to-edge gap (pairs)
    z_ohm: float  # the value furthest from the target along the stretch
    target_ohm: float
    tolerance_pct: float
    deviation_pct: float  # (z - target) / target, in percent
    x_mm: float  # middle of the stretch's longest element
    y_mm: float
    bbox_mm: list[float]

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class ClassImpedance:
    """Per class: targets, how much routing was checked and how much lies outside the target."""

    net_class: str
    z0_target_ohm: float | None
    zdiff_target_ohm: float | None
    tolerance_pct: float
    checked_mm: float  # single-ended: trace length checked
    pair_checked_mm: float  # differential: coupled pair length checked
    outside_mm: float  # listed stretches
    stretches: int
    short_stretches: int  # outside the target but shorter than the listing length
    short_mm: float
    not_checked_mm: float  # trace length on layers that were not scanned

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class ImpedanceCheck:
    """The check's result: per class what was checked, and the stretches off target (worst first)."""

    classes: list[ClassImpedance]
    stretches: list[ImpedanceStretch]
    min_length_mm: float

    @property
    def notes(self) -> list[str]:
        """Targets that found nothing to check, and routing left unchecked (for the scan's warnings)."""
        out = []
        for c in self.classes:
            if c.z0_target_ohm is not None and c.checked_mm == 0:
                out.append(f"impedance: class {c.net_class} has a Z0 target but no traces on a scanned layer")
            if c.zdiff_target_ohm is not None and c.pair_checked_mm == 0:
                out.append(f"impedance: class {c.net_class} has a differential target but no pair of its nets "
                           "runs side by side on a scanned layer")
            if c.not_checked_mm > 0:
                out.append(f"impedance: {c.not_checked_mm:g} mm of class {c.net_class} traces lie on layers "
                           "that were not scanned and were not checked")
        return out

    def to_dict(self) -> dict:
        return {"min_length_mm": self.min_length_mm, "classes": [c.to_dict() for c in self.classes],
                "stretches": [s.to_dict() for s in self.stretches]}


@dataclass(frozen=True)
class _Elements:
    """Trace segments or pair pieces of one class, with their impedance, as parallel arrays."""

    layer: np.ndarray
    group: np.ndarray  # net id (segments) or positive leg's net id (pieces)
    x0: np.ndarray
    y0: np.ndarray
    x1: np.ndarray
    y1: np.ndarray
    length: np.ndarray
    width: np.ndarray
    gap: np.ndarray | None
    z: np.ndarray


def check_impedance(board: Board, rules: Rules, roles: NetRoles, env: BoardEnvironments,
                    pairs: CoupledPieces) -> ImpedanceCheck:
    """Stretches outside each class's impedance targets; ``pairs`` from ``coupling.layer_impedance.pair_pieces``."""
    min_mm = rules.scan.impedance_min_length_mm
    classes, stretches = [], []
    z0_cache: dict[tuple[int, float], float] = {}
    diff_tables: dict[tuple[int, float], DifferentialTable] = {}
    for k, cls in enumerate(roles.classes):
        if not cls.has_impedance_target:
            continue
        checked = pair_checked = not_checked = 0.0
        parts = []
        if cls.z0_target_ohm is not None:
            elements, not_checked = _class_segments(board, roles, env, k, z0_cache)
            checked = float(elements.length.sum())
            parts.append(_stretches(board, roles, cls, elements, cls.z0_target_ohm, "single-ended", min_mm))
        if cls.zdiff_target_ohm is not None:
            elements = _class_pair_pieces(board, roles, env, pairs, k, diff_tables)
            pair_checked = float(elements.length.sum())
            parts.append(_stretches(board, roles, cls, elements, cls.zdiff_target_ohm, "differential", min_mm))
        found = [s for listed, _, _ in parts for s in listed]
        classes.append(ClassImpedance(cls.name, cls.z0_target_ohm, cls.zdiff_target_ohm, cls.impedance_tolerance_pct,
                                      rounded(checked, 1), rounded(pair_checked, 1),
                                      rounded(sum(s.length_mm for s in found), 1), len(found),
                                      sum(p[1] for p in parts), rounded(sum(p[2] for p in parts), 1),
                                      rounded(not_checked, 1)))
        stretches += found
    stretches.sort(key=lambda s: (-abs(s.deviation_pct) * s.length_mm, s.net_class, s.net))
    return ImpedanceCheck(classes, stretches, min_mm)


def _class_segments(board: Board, roles: NetRoles, env: BoardEnvironments, k: int,
                    cache: dict) -> tuple[_Elements, float]:
    """The class's trace segments on scanned layers with their Z0, and the length on unscanned signal layers."""
    parts, not_checked = [], 0.0
    for layer in board.layers:
        seg = layer.segments
        if layer.index in env.plane_layers or not len(seg):
            continue
        net = np.maximum(seg.net, 0)
        width = np.round(seg.width / WIDTH_GRID_MM) * WIDTH_GRID_MM
        mine = ((seg.net != NO_NET) & (roles.class_index[net] == k) & roles.active[net] & (seg.length_mm > 0)
                & (width > 0))
        if layer.index not in env.signal:
            not_checked += float(seg.length_mm[mine].sum())
            continue
        rows = np.flatnonzero(mine)
        args = section_arguments(env.signal[layer.index])
        unique, inverse = np.unique(width[rows], return_inverse=True)
        z = np.array([_cached(cache, (layer.index, float(w)), lambda w=w: trace_impedance(float(w), **args))
                      for w in unique])
        parts.append(_Elements(np.full(len(rows), layer.index), seg.net[rows], seg.x0[rows], seg.y0[rows],
                               seg.x1[rows], seg.y1[rows], seg.length_mm[rows], seg.width[rows], None,
                               z[inverse.ravel()] if len(rows) else np.zeros(0)))
    return _concat(parts), not_checked


def _class_pair_pieces(board: Board, roles: NetRoles, env: BoardEnvironments, pairs: CoupledPieces, k: int,
                       tables: dict) -> _Elements:
    """The class's coupled pair pieces (class of the positive leg) with their differential impedance."""
    positive = np.where(roles.polarity[pairs.net_a] > 0, pairs.net_a, pairs.net_b)
    width = np.round(0.5 * (pairs.width_a_mm + pairs.width_b_mm) / WIDTH_GRID_MM) * WIDTH_GRID_MM
    height = np.zeros(len(board.layers))
    height[list(env.signal)] = [e.height_mm for e in env.signal.values()]
    limit = PAIR_GAP_LIMIT * np.maximum(height[pairs.layer], width)
    rows = np.flatnonzero((roles.class_index[positive] == k) & (pairs.spacing_mean_mm <= limit) & (width > 0))
    z = np.zeros(len(rows))
    keys = np.c_[pairs.layer[rows], width[rows]]
    for key in np.unique(keys, axis=0):
        layer, w = int(key[0]), float(key[1])
        table = _cached(tables, (layer, w),
                        lambda: DifferentialTable.for_layer(w, **section_arguments(env.signal[layer])))
        on = np.all(keys == key, axis=1)
        z[on] = table(pairs.spacing_mean_mm[rows[on]])
    return _Elements(pairs.layer[rows], positive[rows], pairs.x0_mm[rows], pairs.y0_mm[rows], pairs.x1_mm[rows],
                     pairs.y1_mm[rows], pairs.length_mm[rows], width[rows], pairs.spacing_mean_mm[rows], z)


def _cached(cache: dict, key, make):
    if key not in cache:
        cache[key] = make()
    return cache[key]


def _concat(parts: list[_Elements]) -> _Elements:
    if not parts:
        empty = np.zeros(0)
        return _Elements(empty.astype(int), empty.astype(int), empty, empty, empty, empty, empty, empty, None, empty)
    return _Elements(*(None if getattr(parts[0], f) is None else np.concatenate([getattr(p, f) for p in parts])
                       for f in _Elements.__dataclass_fields__))


def _stretches(board: Board, roles: NetRoles, cls: NetClass, e: _Elements, target: float, kind: str,
               min_mm: float) -> tuple[list[ImpedanceStretch], int, float]:
    """Elements outside ``target`` joined into stretches: (those at least ``min_mm`` long, count and length of
    the shorter ones)."""
    tol = cls.impedance_tolerance_pct / 100.0
    out = np.flatnonzero(np.abs(e.z - target) > tol * target)
    if not len(out):
        return [], 0, 0.0
    label = _components(e, out, PIECE_JOIN_MM if e.gap is not None else SEGMENT_JOIN_MM)
    count = int(label.max()) + 1
    length = np.bincount(label, weights=e.length[out], minlength=count)
    listed = length >= min_mm
    weight = e.length[out] / length[label]
    width = np.bincount(label, weights=weight * e.width[out], minlength=count)
    gap = None if e.gap is None else np.bincount(label, weights=weight * e.gap[out], minlength=count)
    worst = out[_last_per_label(label, np.abs(e.z[out] - target), count)]
    longest = out[_last_per_label(label, e.length[out], count)]
    order = np.argsort(label, kind="stable")
    starts = np.searchsorted(label[order], np.arange(count))
    rows = out[order]
    x_lo = np.minimum.reduceat(np.minimum(e.x0[rows], e.x1[rows]), starts)
    x_hi = np.maximum.reduceat(np.maximum(e.x0[rows], e.x1[rows]), starts)
    y_lo = np.minimum.reduceat(np.minimum(e.y0[rows], e.y1[rows]), starts)
    y_hi = np.maximum.reduceat(np.maximum(e.y0[rows], e.y1[rows]), starts)
    stretches = []
    for c in np.flatnonzero(listed):
        net, w, m = int(e.group[worst[c]]), worst[c], longest[c]
        name = board.nets[net] if kind == "single-ended" else f"{board.nets[net]} / {board.nets[roles.partner[net]]}"
        stretches.append(ImpedanceStretch(
            "fail", cls.name, name, kind, board.layers[int(e.layer[w])].name, rounded(length[c], 2),
            rounded(width[c], 4), None if gap is None else rounded(gap[c], 4), rounded(e.z[w], 2), target,
            cls.impedance_tolerance_pct, rounded(100.0 * (e.z[w] - target) / target, 1),
            rounded(0.5 * (e.x0[m] + e.x1[m]), 3), rounded(0.5 * (e.y0[m] + e.y1[m]), 3),
            [rounded(x_lo[c], 3), rounded(y_lo[c], 3), rounded(x_hi[c], 3), rounded(y_hi[c], 3)]))
    return stretches, int((~listed).sum()), float(length[~listed].sum())


def _last_per_label(label: np.ndarray, value: np.ndarray, count: int) -> np.ndarray:
    """Per label, the position (into ``label``) of its largest ``value``."""
    order = np.lexsort((value, label))
    last = np.searchsorted(label[order], np.arange(count), side="right") - 1
    return order[last]


def _components(e: _Elements, rows: np.ndarray, join_mm: float) -> np.ndarray:
    """Per row, a stretch label: rows of one group on one layer whose ends come within ``join_mm`` share it."""
    n = len(rows)
    points = np.c_[np.r_[e.x0[rows], e.x1[rows]], np.r_[e.y0[rows], e.y1[rows]]]
    owner = np.r_[np.arange(n), np.arange(n)]
    close = cKDTree(points).query_pairs(join_mm, output_type="ndarray")
    a, b = owner[close[:, 0]], owner[close[:, 1]]
    same = (e.group[rows][a] == e.group[rows][b]) & (e.layer[rows][a] == e.layer[rows][b])
    graph = coo_matrix((np.ones(int(same.sum())), (a[same], b[same])), shape=(n, n))
    return connected_components(graph, directed=False)[1]
