"""Characteristic impedance of a trace and of an edge-coupled pair on one layer, from the field solver.

Single-ended: ``Z0 = sqrt(L/C)`` of the trace alone. Differential: twice the
odd-mode impedance of two equal traces, ``Zdiff = 2 Zo`` with
``Zo = sqrt((L - M)/(C + E))`` (docs/physics.md, "Line figures"); the
common-mode figure is ``Ze / 2``.

Layer arguments are those of ``traces_on_layer``: ``dielectrics_below`` from
the plane up to the trace base, ``dielectrics_above`` from the base outward,
``planes`` ("below" or "both"), ``thickness_mm`` and ``soldermask``.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.interpolate import PchipInterpolator

from scanner.physics.geometry import traces_on_layer
from scanner.physics.solver import solve_cross_section

#: gap grid of a differential table: from this (mm; closer copper is a netting fault) ...
TABLE_MIN_GAP_MM = 0.02
#: ... to this many trace-to-plane heights or trace widths, whichever is further
TABLE_REACH = 10.0
TABLE_POINTS = 9


def trace_impedance(width_mm: float, **layer) -> float:
    """Single-ended Z0 (ohm) of one trace of ``width_mm`` on the layer."""
    return solve_cross_section(traces_on_layer(widths_mm=[width_mm], spacings_mm=[], **layer)).z0(0)


def differential_impedance(width_mm: float, gap_mm: float, **layer) -> float:
    """Differential impedance (ohm) of two traces of ``width_mm``, ``gap_mm`` apart edge to edge: 2 Zo."""
    return 2.0 * solve_cross_section(traces_on_layer(widths_mm=[width_mm, width_mm], spacings_mm=[gap_mm],
                                                     **layer)).z_odd


@dataclass(frozen=True)
class DifferentialTable:
    """Zdiff of one trace width on one layer over the edge-to-edge gap, solved at a few gaps and interpolated.

    Monotone (PCHIP) in log gap; gaps beyond the grid take its end values (Zdiff has all but reached
    twice the single-ended Z0 there; closer than the first point is touching copper).
    """

    gaps_mm: np.ndarray
    zdiff_ohm: np.ndarray
    _curve: PchipInterpolator = field(repr=False, compare=False)

    @classmethod
    def for_layer(cls, width_mm: float, **layer) -> "DifferentialTable":
        height = sum(float(t) for t, _ in layer["dielectrics_below"])
        gaps = np.geomspace(TABLE_MIN_GAP_MM, TABLE_REACH * max(height, width_mm), TABLE_POINTS)
        z = np.array([differential_impedance(width_mm, g, **layer) for g in gaps])
        return cls(gaps, z, PchipInterpolator(np.log(gaps), z, extrapolate=False))

    def __call__(self, gap_mm) -> np.ndarray:
        x = np.clip(np.log(np.maximum(np.asarray(gap_mm, dtype=float), TABLE_MIN_GAP_MM)),
                    np.log(self.gaps_mm[0]), np.log(self.gaps_mm[-1]))
        return self._curve(x)
