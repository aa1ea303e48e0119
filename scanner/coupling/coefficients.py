"""Per-piece coupling coefficients from cached, interpolated cross-section tables.

Per signal layer, the two-trace cross-section is solved on a small grid:
spacings from TABLE_MIN_SPACING_MM to the table's reach (scanner.physics.CouplingTable
interpolates over spacing), and trace widths on a geometric ladder anchored at
the layer's most used width (so the common width is solved exactly). Between
two width rungs Kb and the velocity are interpolated in log width (Kb in log
scale), Kf linearly. Unequal widths use their mean: the coefficients of
slightly unequal lines differ from the mean-width pair far less than the
stackup's own uncertainty. A board thus needs a few dozen solves.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board.layerstack import BroadsideEnvironment, LayerEnvironment
from scanner.physics import CouplingTable
from scanner.physics.broadside import BroadsideTable

WIDTH_RUNG = 1.4
#: spacing grid of each table: from TABLE_MIN_SPACING_MM to the larger of the search distance and
#: TABLE_REACH_HEIGHTS trace-to-plane heights (so fix guidance can look beyond the search distance)
TABLE_MIN_SPACING_MM = 0.02
TABLE_REACH_HEIGHTS = 10.0
TABLE_POINTS = 9
#: widths within this fraction of a rung are taken as on it
ON_RUNG = 1e-6


@dataclass(frozen=True)
class PieceCoefficients:
    """Per coupled piece: backward coefficient, forward coefficient (s/m), velocity (m/s)."""

    kb: object
    kf_s_per_m: object
    velocity_m_per_s: object


@dataclass(frozen=True)
class PreparedPieces:
    """Pieces grouped by table once, so coefficients at new spacings cost only interpolation."""

    groups: list  # (rows, table_lo, table_hi or None, t)
    reach_mm: np.ndarray  # per piece: the largest spacing its tables cover
    n: int

    def coefficients(self, spacing_mm: np.ndarray):
        kb, kf, velocity = np.zeros(self.n), np.zeros(self.n), np.zeros(self.n)
        s_all = np.clip(spacing_mm, TABLE_MIN_SPACING_MM, self.reach_mm)
        for rows, lo, hi, t in self.groups:
            s = s_all[rows]
            kb_lo, kf_lo = lo.kb(s), lo.kf(s)
            if hi is None:
                kb[rows], kf[rows], velocity[rows] = kb_lo, kf_lo, lo.velocity_m_per_s
                continue
            kb_hi, kf_hi = hi.kb(s), hi.kf(s)
            kb[rows] = np.exp((1 - t) * np.log(kb_lo) + t * np.log(kb_hi))
            kf[rows] = (1 - t) * kf_lo + t * kf_hi
            velocity[rows] = (1 - t) * lo.velocity_m_per_s + t * hi.velocity_m_per_s
        return kb, kf, velocity


class CouplingLookup:
    """Coefficients (Kb, Kf in s/m, velocity in m/s) for pieces on known signal layers."""

    def __init__(self, envs: dict[int, LayerEnvironment], search_by_layer_mm: dict[int, float],
                 width_anchor_mm: dict[int, float] | None = None):
        self.envs = envs
        self.max_spacing_mm = {i: max(search_by_layer_mm[i] * 1.05, TABLE_REACH_HEIGHTS * e.height_mm)
                               for i, e in envs.items()}
        self.anchor_mm = dict(width_anchor_mm or {})
        self._tables: dict[tuple[int, int], CouplingTable] = {}

    @property
    def solve_count(self) -> int:
        return TABLE_POINTS * len(self._tables)

    def table(self, layer: int, rung: int) -> CouplingTable:
        key = (int(layer), int(rung))
        table = self._tables.get(key)
        if table is None:
            width = self.anchor_mm.get(layer, 0.1) * WIDTH_RUNG ** rung
            table = self._tables[key] = _layer_table(self.envs[layer], width, self.max_spacing_mm[layer])
        return table

    def prepare(self, layer: np.ndarray, width_mm: np.ndarray) -> PreparedPieces:
        layer = np.asarray(layer, dtype=np.int64)
        n = len(layer)
        anchor = np.array([self.anchor_mm.setdefault(int(k), 0.1) if k in self.envs else 1.0
                           for k in range(int(layer.max()) + 1 if n else 0)])
        position = np.log(np.asarray(width_mm) / anchor[layer]) / np.log(WIDTH_RUNG) if n else np.zeros(0)
        rung = np.floor(position + ON_RUNG).astype(np.int64)
        t = np.clip(position - rung, 0.0, 1.0)
        on_rung = t < ON_RUNG
        key = layer << np.int64(32) | ((rung & 0xFFFF) << np.int64(1)) | on_rung
        uniq, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        order = np.argsort(inverse, kind="stable")
        bounds = np.searchsorted(inverse[order], np.arange(len(uniq) + 1))
        groups = []
        for g, i in enumerate(first):
            rows = order[bounds[g]:bounds[g + 1]]
            lay, r = int(layer[i]), int(rung[i])
            lo = self.table(lay, r)
            hi = None if on_rung[i] else self.table(lay, r + 1)
            groups.append((rows, lo, hi, t[rows]))
        reach = np.array([self.max_spacing_mm.get(k, 0.0) for k in range(len(anchor))])[layer] if n else np.zeros(0)
        return PreparedPieces(groups, reach, n)

    def coefficients(self, layer: np.ndarray, width_mm: np.ndarray, spacing_mm: np.ndarray):
        return self.prepare(layer, width_mm).coefficients(spacing_mm)


def most_used_width(segments_by_layer: dict) -> dict[int, float]:
    """Per layer, the trace width carrying the most length (the table ladder's anchor)."""
    out = {}
    for layer, seg in segments_by_layer.items():
        if len(seg) == 0:
            continue
        widths, inverse = np.unique(np.round(seg.width, 4), return_inverse=True)
        length = np.bincount(inverse.ravel(), weights=seg.length_mm)
        if widths[np.argmax(length)] > 0:
            out[layer] = float(widths[np.argmax(length)])
    return out


def section_arguments(env: LayerEnvironment) -> dict:
    """The layer's dielectrics, planes, copper thickness and soldermask as the physics module takes them."""
    away = list(env.away)
    mask = None
    if env.structure == "microstrip" and env.soldermask is not None:
        away = away[:-1]
        mask = env.soldermask
    return dict(dielectrics_below=list(env.toward_plane), dielectrics_above=away,
                planes="both" if env.structure == "stripline" else "below",
                thickness_mm=env.trace_thickness_mm, soldermask=mask)


def _layer_table(env: LayerEnvironment, width_mm: float, max_spacing_mm: float) -> CouplingTable:
    return CouplingTable.for_layer(width_mm=width_mm, **section_arguments(env),
                                   spacings_mm=np.geomspace(TABLE_MIN_SPACING_MM, max_spacing_mm, TABLE_POINTS))


class BroadsideLookup:
    """Coefficients of broadside pieces (traces on two neighbouring signal layers) by lateral centre offset.

    One table per layer pair and width rung (the nearest rung of the upper layer's ladder; broadside pairs
    are few, so no interpolation between rungs).
    """

    def __init__(self, pairs: dict[tuple[int, int], BroadsideEnvironment], search_distance_mm: float,
                 width_anchor_mm: dict[int, float]):
        self.pairs = pairs
        self.search_mm = search_distance_mm
        self.anchor_mm = width_anchor_mm
        self._tables: dict[tuple[int, int, int], BroadsideTable] = {}

    @property
    def solve_count(self) -> int:
        return sum(t.solve_count for t in self._tables.values())

    def coefficients(self, layer: np.ndarray, layer_b: np.ndarray, width_mm: np.ndarray, offset_mm: np.ndarray):
        n = len(layer)
        kb, kf, velocity = np.zeros(n), np.zeros(n), np.zeros(n)
        upper, lower = np.minimum(layer, layer_b), np.maximum(layer, layer_b)
        anchor = np.array([self.anchor_mm.get(int(u), 0.1) for u in upper]) if n else np.zeros(0)
        rung = np.rint(np.log(width_mm / anchor) / np.log(WIDTH_RUNG)).astype(np.int64) if n else anchor
        keys = sorted(set(zip(upper.tolist(), lower.tolist(), rung.tolist())))
        for u, lo, r in keys:
            rows = np.flatnonzero((upper == u) & (lower == lo) & (rung == r))
            table = self.table(u, lo, r)
            kb[rows] = table.kb(offset_mm[rows])
            kf[rows] = table.kf(offset_mm[rows])
            velocity[rows] = table.velocity_m_per_s
        return kb, kf, velocity

    def table(self, upper: int, lower: int, rung: int) -> BroadsideTable:
        key = (upper, lower, rung)
        if key not in self._tables:
            env = self.pairs[(upper, lower)]
            width = self.anchor_mm.get(upper, 0.1) * WIDTH_RUNG ** rung
            reach = self.search_mm * 1.05 + 1.5 * width
            self._tables[key] = BroadsideTable.for_pair(env.dielectrics, env.base_mm, env.thickness_mm, width,
                                                        np.linspace(0.0, reach, TABLE_POINTS))
        return self._tables[key]
