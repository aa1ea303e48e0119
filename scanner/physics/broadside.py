"""Broadside coupling: traces on two neighbouring signal layers between the same pair of planes.

A dual stripline routes two signal layers between one pair of reference planes
with no plane between them; a trace on one layer couples to a trace on the
other through the laminate, most strongly when one lies over the other. The
cross-section is two traces at different heights in the full plane-to-plane
stack, solved by the same method-of-moments solver as same-layer pairs; the
coefficients are tabulated over the lateral (plan-view) offset of the two
centre lines and interpolated (Kb in log scale, monotone cubic).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
from scipy.interpolate import PchipInterpolator

from scanner.physics.coupling import KB_FLOOR, coupling_coefficients
from scanner.physics.geometry import Conductor, CrossSection, Dielectric
from scanner.physics.solver import solve_cross_section


@dataclass(frozen=True)
class BroadsideTable:
    """Kb, Kf (s/m) and velocity of a broadside pair of equal traces against their lateral centre offset (mm)."""

    offsets_mm: np.ndarray
    kb_table: np.ndarray
    kf_table_s_per_m: np.ndarray
    velocity_m_per_s: float
    _log_kb: PchipInterpolator = field(repr=False, compare=False)
    _kf: PchipInterpolator = field(repr=False, compare=False)

    @property
    def solve_count(self) -> int:
        return len(self.offsets_mm)

    def kb(self, offset_mm) -> np.ndarray:
        return np.exp(self._log_kb(np.clip(offset_mm, self.offsets_mm[0], self.offsets_mm[-1])))

    def kf(self, offset_mm) -> np.ndarray:
        return self._kf(np.clip(offset_mm, self.offsets_mm[0], self.offsets_mm[-1]))

    @classmethod
    def for_pair(cls, dielectrics, base_mm: tuple[float, float], thickness_mm: tuple[float, float],
                 width_mm: float, offsets_mm) -> "BroadsideTable":
        """``dielectrics``: (thickness_mm, er) from the lower plane up to the upper plane; ``base_mm``: the
        trace bases of the two layers above the lower plane (the traces' thicknesses in ``thickness_mm``)."""
        return _table(tuple((float(t), float(er)) for t, er in dielectrics), tuple(map(float, base_mm)),
                      tuple(map(float, thickness_mm)), float(width_mm),
                      tuple(float(d) for d in np.unique(np.round(np.ravel(offsets_mm), 9))))


def broadside_section(dielectrics, base_mm, thickness_mm, width_mm: float, offset_mm: float) -> CrossSection:
    """The two traces, ``offset_mm`` apart laterally, in the plane-to-plane stack."""
    conductors = tuple(Conductor.trace(x, y, width_mm, t)
                       for x, y, t in zip((-offset_mm / 2, offset_mm / 2), base_mm, thickness_mm))
    return CrossSection(conductors, tuple(Dielectric(t, er) for t, er in dielectrics), "both")


@lru_cache(maxsize=128)
def _table(dielectrics, base_mm, thickness_mm, width_mm, offsets) -> BroadsideTable:
    kb, kf, velocity = [], [], []
    for d in offsets:
        m = solve_cross_section(broadside_section(dielectrics, base_mm, thickness_mm, width_mm, d))
        # the two traces sit at different heights: take both directions' coefficients and average them
        (b1, f1), (b2, f2) = coupling_coefficients(m, 0, 1), coupling_coefficients(m, 1, 0)
        kb.append(0.5 * (b1 + b2))
        kf.append(0.5 * (f1 + f2))
        velocity.append(0.5 * (m.velocity(0) + m.velocity(1)))
    d, kb, kf = np.array(offsets), np.maximum(np.array(kb), KB_FLOOR), np.array(kf)
    if len({er for _, er in dielectrics}) == 1:
        kf = np.zeros_like(kf)  # one material all round: no forward coupling (docs/physics.md §2)
    return BroadsideTable(d, kb, kf, float(np.mean(velocity)), PchipInterpolator(d, np.log(kb)),
                          PchipInterpolator(d, kf))
