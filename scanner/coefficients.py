"""Per-piece coupling coefficients from cached, interpolated cross-section tables.

One table per (signal layer, trace width class): the two-trace cross-section
of that layer solved at a handful of spacings and interpolated between them
(scanner.physics.CouplingTable). Widths are grouped into classes 5 % apart
(geometric), which keeps a real board to a few dozen solves; unequal widths
use their mean (the coupling coefficients of slightly unequal lines differ
from the mean-width pair by far less than the stackup's own uncertainty).
"""
from __future__ import annotations

import numpy as np

from scanner.layerstack import LayerEnvironment
from scanner.physics import CouplingTable

WIDTH_STEP = 1.05
#: spacing grid of each table: from TABLE_MIN_SPACING_MM to the larger of the search distance and
#: TABLE_REACH_HEIGHTS trace-to-plane heights (so fix guidance can look beyond the search distance)
TABLE_MIN_SPACING_MM = 0.02
TABLE_REACH_HEIGHTS = 10.0
TABLE_POINTS = 10


class CouplingLookup:
    """Coefficients (Kb, Kf in s/m, velocity in m/s) for pieces on known signal layers."""

    def __init__(self, envs: dict[int, LayerEnvironment], search_distance_mm: float):
        self.envs = envs
        self.max_spacing_mm = {i: max(search_distance_mm * 1.05, TABLE_REACH_HEIGHTS * e.height_mm)
                               for i, e in envs.items()}
        self._tables: dict[tuple[int, int], CouplingTable] = {}

    @property
    def solve_count(self) -> int:
        return sum(getattr(t, "solve_count", TABLE_POINTS) for t in self._tables.values())

    def table(self, layer: int, width_mm: float) -> CouplingTable:
        key = (int(layer), int(np.round(np.log(width_mm) / np.log(WIDTH_STEP))))
        table = self._tables.get(key)
        if table is None:
            env = self.envs[layer]
            table = self._tables[key] = _layer_table(env, WIDTH_STEP ** key[1], self.max_spacing_mm[key[0]])
        return table

    def coefficients(self, layer: np.ndarray, width_mm: np.ndarray, spacing_mm: np.ndarray):
        n = len(layer)
        kb, kf, velocity = np.zeros(n), np.zeros(n), np.zeros(n)
        if n == 0:
            return kb, kf, velocity
        width_class = np.round(np.log(width_mm) / np.log(WIDTH_STEP)).astype(np.int64)
        key = layer.astype(np.int64) << np.int64(32) | (width_class & 0xFFFFFFFF)
        uniq, inverse = np.unique(key, return_inverse=True)
        for g, k in enumerate(uniq):
            rows = np.flatnonzero(inverse == g)
            lay = int(k >> 32)
            table = self.table(lay, float(WIDTH_STEP ** width_class[rows[0]]))
            s = np.clip(spacing_mm[rows], TABLE_MIN_SPACING_MM, self.max_spacing_mm[lay])
            kb[rows] = table.kb(s)
            kf[rows] = table.kf(s)
            velocity[rows] = table.velocity_m_per_s
        return kb, kf, velocity


def _layer_table(env: LayerEnvironment, width_mm: float, max_spacing_mm: float) -> CouplingTable:
    away = list(env.away)
    mask = None
    if env.structure == "microstrip" and env.soldermask is not None:
        away = away[:-1]
        mask = env.soldermask
    return CouplingTable.for_layer(
        dielectrics_above=away, dielectrics_below=list(env.toward_plane),
        planes="both" if env.structure == "stripline" else "below",
        width_mm=width_mm, thickness_mm=env.trace_thickness_mm, soldermask=mask,
        spacings_mm=np.geomspace(TABLE_MIN_SPACING_MM, max_spacing_mm, TABLE_POINTS))
