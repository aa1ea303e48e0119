"""Weak-coupling crosstalk coefficients, and per-layer tables of them over spacing.

Backward (near-end) and forward (far-end) coefficients for an aggressor and a
victim, from the line matrices (docs/physics.md §2). For two identical lines::

    Kb = (E/C + M/L) / 4                   (unitless)
    Kf = sqrt(L C) / 2 * (E/C - M/L)       (s/m)

with L = L11, M = L12, C = C11, E = -C12. For unequal lines the general
weak-coupling form is used: Kb = v/4 (E Zv + M/Za), Kf = (E Zv - M/Za)/2,
with Za = sqrt(La/Ca), Zv = sqrt(Lv/Cv) and v = 1/sqrt(La Ca) from the
diagonal entries; it reduces to the above when the lines are equal.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Sequence

import numpy as np
from scipy.interpolate import PchipInterpolator

from scanner.physics.geometry import Soldermask, traces_on_layer
from scanner.physics.matrices import LineMatrices
from scanner.physics.mesh import DEFAULT_MESH, MeshSettings
from scanner.physics.solver import solve_cross_section

#: above this backward coefficient the weak-coupling formulas lose accuracy (docs/physics.md §2)
WEAK_COUPLING_LIMIT = 0.1
#: geometry is rounded to this (mm) in cache keys, so equal layers share one solve
KEY_ROUND_MM = 1e-6


def coupling_coefficients(m: LineMatrices, aggressor: int, victim: int) -> tuple[float, float]:
    """(Kb, Kf in s/m) for the given aggressor and victim indices of ``m``."""
    if aggressor == victim:
        raise ValueError("aggressor and victim must differ")
    mutual_c = -m.C[aggressor, victim]
    mutual_l = m.L[aggressor, victim]
    z_a, z_v = m.z0(aggressor), m.z0(victim)
    v = 1 / np.sqrt(m.L[aggressor, aggressor] * m.C[aggressor, aggressor])
    kb = v / 4 * (mutual_c * z_v + mutual_l / z_a)
    kf = (mutual_c * z_v - mutual_l / z_a) / 2
    return float(kb), float(kf)


def weak_coupling_holds(kb) -> np.ndarray:
    """True where |Kb| stays under the weak-coupling limit (about 0.1)."""
    return np.abs(np.asarray(kb)) <= WEAK_COUPLING_LIMIT


def _mm(value) -> float:
    return round(float(value) / KEY_ROUND_MM) * KEY_ROUND_MM


def _key(values) -> tuple[tuple[float, float], ...]:
    return tuple((_mm(t), round(float(er), 9)) for t, er in values)


def _layers(dielectrics) -> list[tuple[float, float]]:
    return [(d.thickness_mm, d.er) if hasattr(d, "thickness_mm") else (float(d[0]), float(d[1])) for d in dielectrics]


#: backward coefficients below this are numerical noise and are held at it for log interpolation
KB_FLOOR = 1e-12


class _LogLogCurve:
    """Monotone (PCHIP) interpolation of a positive quantity in log-log space.

    Outside the table the end segments continue as power laws; for stripline
    coupling, which decays exponentially, that overestimates: the safe side.
    """

    def __init__(self, spacing_mm: np.ndarray, values: np.ndarray):
        self.x = np.log(spacing_mm)
        self.y = np.log(np.maximum(values, KB_FLOOR))
        self.curve = PchipInterpolator(self.x, self.y, extrapolate=False) if len(self.x) > 1 else None

    def __call__(self, spacing_mm) -> np.ndarray:
        x = np.log(np.asarray(spacing_mm, dtype=float))
        if self.curve is None:
            return np.exp(np.full(x.shape, self.y[0]))
        slope_lo = (self.y[1] - self.y[0]) / (self.x[1] - self.x[0])
        slope_hi = (self.y[-1] - self.y[-2]) / (self.x[-1] - self.x[-2])
        y = np.where(x < self.x[0], self.y[0] + slope_lo * (x - self.x[0]),
                     np.where(x > self.x[-1], self.y[-1] + slope_hi * (x - self.x[-1]), self.curve(x)))
        return np.exp(y)


class _RatioCurve:
    """PCHIP over log spacing of a bounded ratio, held constant beyond the table."""

    def __init__(self, spacing_mm: np.ndarray, ratio: np.ndarray):
        self.x = np.log(spacing_mm)
        self.ratio = ratio
        self.curve = PchipInterpolator(self.x, ratio, extrapolate=False) if len(self.x) > 1 else None

    def __call__(self, spacing_mm) -> np.ndarray:
        x = np.clip(np.log(np.asarray(spacing_mm, dtype=float)), self.x[0], self.x[-1])
        return self.curve(x) if self.curve is not None else np.full(x.shape, self.ratio[0])


@dataclass(frozen=True)
class CouplingTable:
    """Coefficients for two equal traces on one layer, solved at a few spacings and interpolated.

    Spacing is the edge-to-edge gap in mm. ``velocity_m_per_s``, ``z0_ohm`` and
    ``eps_eff`` are the single, isolated trace's. Kb is interpolated in log-log
    space; Kf through the smooth, bounded ratio Kf v / Kb, which keeps its
    sign changes and numerical noise at wide spacing harmless.
    """

    spacings_mm: np.ndarray
    kb_table: np.ndarray
    kf_table_s_per_m: np.ndarray
    velocity_m_per_s: float
    z0_ohm: float
    eps_eff: float
    _kb: _LogLogCurve = field(repr=False, compare=False)
    _kf_ratio: _RatioCurve = field(repr=False, compare=False)

    @property
    def solve_count(self) -> int:
        """Cross-section solves behind the table: one per spacing and the single trace."""
        return len(self.spacings_mm) + 1

    def kb(self, spacing_mm) -> np.ndarray:
        return self._kb(spacing_mm)

    def kf(self, spacing_mm) -> np.ndarray:
        """Forward coefficient, s/m."""
        return self._kf_ratio(spacing_mm) * self._kb(spacing_mm) / self.velocity_m_per_s

    @classmethod
    def for_layer(cls, dielectrics_above: Sequence, dielectrics_below: Sequence, planes: str,
                  width_mm: float, thickness_mm: float, soldermask=None,
                  spacings_mm: Sequence[float] | None = None, top_width_mm: float | None = None,
                  mesh: MeshSettings = DEFAULT_MESH) -> "CouplingTable":
        """Solve one layer's trace pair over a set of spacings (default: a log grid from the layer height).

        ``dielectrics_below`` run from the plane up to the trace base, ``dielectrics_above``
        from the trace base outward; each a Dielectric or (thickness_mm, er).
        ``soldermask``: Soldermask or (thickness_mm, er), microstrip only.
        """
        below, above = _key(_layers(dielectrics_below)), _key(_layers(dielectrics_above))
        if isinstance(soldermask, Soldermask):
            mask = (soldermask.thickness_mm, soldermask.er, soldermask.thickness_over_trace_mm)
        elif soldermask is not None:
            mask = (float(soldermask[0]), float(soldermask[1]), None)
        else:
            mask = None
        height = sum(t for t, _ in below)
        if spacings_mm is None:
            spacings_mm = default_spacings_mm(width_mm, height)
        spacings = tuple(sorted({_mm(s) for s in np.ravel(spacings_mm)}))
        return _table(below, above, planes, _mm(width_mm), _mm(thickness_mm), mask, spacings,
                      None if top_width_mm is None else _mm(top_width_mm), mesh)


def default_spacings_mm(width_mm: float, height_mm: float) -> np.ndarray:
    """Log-spaced gaps from a fifth of the smaller of width and height to 20 heights (14 points)."""
    lo = 0.2 * min(width_mm, height_mm)
    return np.geomspace(lo, max(20 * height_mm, 10 * lo), 14)


@lru_cache(maxsize=256)
def _table(below, above, planes, width_mm, thickness_mm, mask, spacings, top_width_mm, mesh) -> CouplingTable:
    soldermask = None if mask is None else Soldermask(*mask)
    top = None if top_width_mm is None else [top_width_mm]
    single = solve_cross_section(traces_on_layer(below, above, planes, [width_mm], [], thickness_mm, soldermask, top),
                                 mesh)
    kb, kf = [], []
    for s in spacings:
        section = traces_on_layer(below, above, planes, [width_mm, width_mm], [s], thickness_mm, soldermask,
                                  None if top is None else top * 2)
        b, f = coupling_coefficients(solve_cross_section(section, mesh), 0, 1)
        kb.append(b)
        kf.append(f)
    s_arr, kb_arr, kf_arr = np.array(spacings), np.array(kb), np.array(kf)
    if _homogeneous(below, above, planes, mask):
        kf_arr = np.zeros_like(kf_arr)
    ratio = kf_arr * single.velocity() / np.maximum(kb_arr, KB_FLOOR)
    return CouplingTable(s_arr, kb_arr, kf_arr, single.velocity(), single.z0(), single.eps_eff(),
                         _LogLogCurve(s_arr, kb_arr), _RatioCurve(s_arr, ratio))


def _homogeneous(below, above, planes, mask) -> bool:
    """One permittivity all around (stripline in a single material): Kf is exactly zero."""
    ers = {er for _, er in below} | {er for _, er in above}
    return planes == "both" and mask is None and len(ers) == 1
