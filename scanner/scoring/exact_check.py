"""Exact cross-check of strong-coupling findings.

Where a run's backward coefficient exceeds about 0.1 the weak-coupling
figures lose accuracy. For the worst such findings the run is rebuilt as a
cascade of uniform coupled-line sections (one per stretch of constant layer,
width and spacing, each solved with the field solver) and simulated with the
full lossless line equations and resistive terminations
(scanner.physics.simulate_coupled_lines): the aggressor driven and loaded by
its own impedance; the victim matched at both ends, or — for a
high-impedance receiver — open at the end where each noise is read.
"""
from __future__ import annotations

import numpy as np

from scanner.coupling.coefficients import TABLE_MIN_SPACING_MM, section_arguments
from scanner.physics import LineSection, simulate_coupled_lines, solve_cross_section, traces_on_layer

#: how many strong-coupling findings (worst first) get the exact simulation
EXACT_CHECKS = 10
#: stretches of a run whose spacing or width differ by less than this (mm) share one section
SECTION_STEP_MM = 0.01
OPEN_OHM = 1e6


def exact_peaks(runs, run: int, envs, rise_time_ns: float, swing_v: float, termination: str) -> tuple[float, float]:
    """(NEXT V, FEXT V signed) on the victim of one run from the exact multiconductor simulation."""
    sections = _sections(runs, run, envs)
    z0 = sections[0].matrices.z0(0)
    rise_s = rise_time_ns * 1e-9
    if termination == "high-z-receiver":
        far = simulate_coupled_lines(sections, [z0, z0], [z0, OPEN_OHM], 0, rise_s, 2 * swing_v)
        near = simulate_coupled_lines(sections, [z0, OPEN_OHM], [z0, z0], 0, rise_s, 2 * swing_v)
    else:
        far = near = simulate_coupled_lines(sections, [z0, z0], [z0, z0], 0, rise_s, 2 * swing_v)
    fext = far.far_end_v[1]
    return float(np.abs(near.near_end_v[1]).max()), float(fext[np.argmax(np.abs(fext))])


def _sections(runs, run: int, envs) -> list[LineSection]:
    p = runs.pieces
    rows = runs.pieces_of(run)
    width = np.round(0.5 * (p.width_a_mm + p.width_b_mm)[rows] / SECTION_STEP_MM) * SECTION_STEP_MM
    spacing = np.round(np.maximum(p.spacing_mean_mm[rows], TABLE_MIN_SPACING_MM) / SECTION_STEP_MM) * SECTION_STEP_MM
    layer = p.layer[rows]
    sections: list[LineSection] = []
    key_prev = None
    for k in range(len(rows)):
        key = (int(layer[k]), float(width[k]), float(spacing[k]))
        length_m = float(p.length_mm[rows[k]]) * 1e-3
        if key == key_prev:
            sections[-1] = LineSection(sections[-1].matrices, sections[-1].length_m + length_m)
            continue
        args = section_arguments(envs[key[0]])
        cross = traces_on_layer(args["dielectrics_below"], args["dielectrics_above"], args["planes"],
                                [key[1], key[1]], [key[2]], args["thickness_mm"], args["soldermask"])
        sections.append(LineSection(solve_cross_section(cross), length_m))
        key_prev = key
    return sections
