"""Physical checks and discretisation convergence of the cross-section solver."""
from dataclasses import replace

import numpy as np
import pytest

from scanner.physics import (DEFAULT_MESH, TOLERANCE, Conductor, CrossSection, Soldermask,
                             coupling_coefficients, solve_cross_section, traces_on_layer)
from scanner.units import C0

MICROSTRIP = dict(dielectrics_below=[(0.1, 4.2)], dielectrics_above=[], planes="below")
MASKED = dict(MICROSTRIP, soldermask=Soldermask(0.02, 3.5))
STRIPLINE = dict(dielectrics_below=[(0.12, 4.2)], dielectrics_above=[(0.15, 4.2)], planes="both")
LAYERED = dict(dielectrics_below=[(0.1, 4.4)], dielectrics_above=[(0.12, 3.7)], planes="both")


def pair(env, spacing_mm, width_mm=0.12, thickness_mm=0.035, **extra):
    return traces_on_layer(widths_mm=[width_mm, width_mm], spacings_mm=[spacing_mm], thickness_mm=thickness_mm,
                           **env, **extra)


def figures(m):
    kb, kf = coupling_coefficients(m, 0, 1)
    return np.array([m.z0(0), m.eps_eff(0), m.z_even, m.z_odd, kb, kf * m.velocity(0)])


def test_homogeneous_stripline_has_no_forward_coupling():
    m = solve_cross_section(pair(STRIPLINE, 0.1, thickness_mm=0.018))
    kb, kf = coupling_coefficients(m, 0, 1)
    assert m.eps_eff(0) == pytest.approx(4.2, rel=1e-9)
    # homogeneous pair: Kb = (Ze - Zo) / (2 (Ze + Zo)) (docs/physics.md §2)
    assert kb == pytest.approx((m.z_even - m.z_odd) / (2 * (m.z_even + m.z_odd)), rel=1e-9)
    assert kb > 0.01
    assert abs(kf * m.velocity(0)) < 1e-3  # E/C = M/L in a homogeneous medium (docs/physics.md §2)


def test_layered_stripline_forward_coupling_stays_small():
    kb, kf = coupling_coefficients(m := solve_cross_section(pair(LAYERED, 0.1, thickness_mm=0.018)), 0, 1)
    assert abs(kf * m.velocity(0)) < 0.1 * kb


@pytest.mark.parametrize("env", [MICROSTRIP, MASKED])
def test_microstrip_forward_coefficient_is_negative(env):
    _, kf = coupling_coefficients(solve_cross_section(pair(env, 0.15)), 0, 1)
    assert kf < 0  # field partly in air: M/L > E/C (common practice, docs/physics.md §2)


@pytest.mark.parametrize("env", [MICROSTRIP, MASKED, STRIPLINE, LAYERED])
def test_coupling_falls_monotonically_with_spacing(env):
    kb = [coupling_coefficients(solve_cross_section(pair(env, s, thickness_mm=0.018)), 0, 1)[0]
          for s in (0.05, 0.1, 0.2, 0.4, 0.8, 1.6)]
    assert np.all(np.diff(kb) < 0)
    assert kb[-1] < 0.1 * kb[0]


@pytest.mark.parametrize("env", [MICROSTRIP, MASKED, LAYERED])
def test_matrices_symmetric_and_diagonally_dominant(env):
    section = traces_on_layer(widths_mm=[0.1, 0.15, 0.1], spacings_mm=[0.1, 0.2], thickness_mm=0.018, **env)
    m = solve_cross_section(section)
    for mat in (m.C, m.C0, m.L):
        assert np.allclose(mat, mat.T, rtol=1e-12)
        assert np.all(np.linalg.eigvalsh(mat) > 0)
    off = np.abs(m.C) - np.diag(np.diag(np.abs(m.C)))
    assert np.all(np.diag(m.C) > off.sum(axis=1))  # Maxwell matrix: the plane takes some of every field line
    assert np.all(m.C - np.diag(np.diag(m.C)) <= 0)
    assert np.all(m.L > 0)


def test_unsymmetrised_solution_is_nearly_symmetric():
    # the solver averages C and C^T; the raw asymmetry is a discretisation measure
    from scanner.physics.mesh import build_panels
    from scanner.physics.solver import _capacitances

    section = pair(MASKED, 0.1, width_mm=0.1)
    section = CrossSection(section.conductors[:1] + (Conductor.trace(0.3, 0.1, 0.2, 0.035),), section.dielectrics,
                           section.planes, section.soldermask)
    C, C0 = _capacitances(section, build_panels(section))
    for mat in (C, C0):
        assert abs(mat[0, 1] - mat[1, 0]) < TOLERANCE * abs(mat[0, 1])


@pytest.mark.parametrize("env", [MICROSTRIP, MASKED, LAYERED])
def test_refining_the_mesh_changes_results_less_than_tolerance(env):
    section = pair(env, 0.1, thickness_mm=0.035 if env["planes"] == "below" else 0.018)
    base = figures(solve_cross_section(section))
    fine = figures(solve_cross_section(section, DEFAULT_MESH.refined(0.5)))
    assert np.all(np.abs(base / fine - 1) < TOLERANCE)


def test_zero_thickness_strip_converges_under_refinement():
    # charge singularity at strip edges: the error halves with the panel size (first-order)
    section = pair(MICROSTRIP, 0.05, width_mm=0.2, thickness_mm=0.0)
    results = [figures(solve_cross_section(section, DEFAULT_MESH.refined(f))) for f in (1.0, 0.5, 0.25)]
    step1 = np.abs(results[1] / results[0] - 1)
    step2 = np.abs(results[2] / results[1] - 1)
    assert np.all(step1 < TOLERANCE)
    assert np.all(step2 < 0.75 * step1 + 1e-6)


@pytest.mark.parametrize("env", [MICROSTRIP, MASKED])
def test_interface_truncation_is_far_enough(env):
    section = pair(env, 0.2)
    base = figures(solve_cross_section(section))
    wider = figures(solve_cross_section(section, replace(DEFAULT_MESH, truncation=60.0)))
    assert np.all(np.abs(base / wider - 1) < 1e-3)


def test_soldermask_raises_effective_permittivity_and_coupling():
    bare = solve_cross_section(pair(MICROSTRIP, 0.1))
    masked = solve_cross_section(pair(MASKED, 0.1))
    assert masked.eps_eff(0) > bare.eps_eff(0)
    assert masked.z0(0) < bare.z0(0)
    assert 1 < bare.eps_eff(0) < masked.eps_eff(0) < 4.2


def test_grounded_guard_trace_reduces_coupling():
    plain = pair(MICROSTRIP, 0.4)
    guarded = CrossSection(plain.conductors + (Conductor.trace(0.0, 0.1, 0.1, 0.035, grounded=True),),
                           plain.dielectrics, "below")
    kb_plain, _ = coupling_coefficients(solve_cross_section(plain), 0, 1)
    m = solve_cross_section(guarded)
    assert m.count == 2  # grounded conductors leave the line matrices
    assert coupling_coefficients(m, 0, 1)[0] < 0.7 * kb_plain


def test_trapezoid_lies_between_its_rectangles():
    def z0(top):
        return solve_cross_section(traces_on_layer(widths_mm=[0.15], spacings_mm=[], thickness_mm=0.035,
                                                   top_widths_mm=[top], **MICROSTRIP)).z0()
    assert z0(0.15) < z0(0.11) < solve_cross_section(traces_on_layer(
        widths_mm=[0.11], spacings_mm=[], thickness_mm=0.035, **MICROSTRIP)).z0()


def test_vacuum_figures_are_consistent():
    # with every dielectric at er = 1 every mode is TEM at the speed of light
    section = traces_on_layer([(0.1, 1.0)], [], "below", [0.1, 0.1], [0.1], 0.035)
    m = solve_cross_section(section)
    assert np.allclose(m.C, m.C0)
    assert np.allclose(m.modes()[0], C0, rtol=1e-9)
    assert m.velocity(0) == pytest.approx(C0, rel=1e-9) and m.eps_eff(1) == pytest.approx(1.0, rel=1e-9)
    assert m.eps_eff_even == pytest.approx(1.0, rel=1e-9) and m.eps_eff_odd == pytest.approx(1.0, rel=1e-9)
    _, kf = coupling_coefficients(m, 0, 1)
    assert abs(kf) * C0 < 1e-9



def test_offset_stripline_and_unequal_lines():
    section = traces_on_layer([(0.1, 4.2)], [(0.3, 4.2)], "both", [0.1, 0.2], [0.15], 0.018)
    m = solve_cross_section(section)
    assert m.z0(0) > m.z0(1)
    kb01, kf01 = coupling_coefficients(m, 0, 1)
    kb10, kf10 = coupling_coefficients(m, 1, 0)
    assert kb01 > 0 and kb10 > 0
    assert abs(kf01) * m.velocity(0) < 1e-3 and abs(kf10) * m.velocity(0) < 1e-3


def test_strip_on_the_mid_plane_interface_sees_the_mean_permittivity():
    # zero-thickness strips on the interface of a symmetric two-material stripline: by symmetry the
    # normal field on the interface vanishes, so C = (er1 + er2)/2 C0 exactly and both modes travel
    # together (exact, from the mirror symmetry of the vacuum solution)
    section = traces_on_layer([(0.1, 4.2)], [(0.1, 3.0)], "both", [0.1, 0.1], [0.1], 0.0)
    m = solve_cross_section(section)
    assert np.allclose(m.C, 3.6 * m.C0, rtol=1e-6)
    kb, kf = coupling_coefficients(m, 0, 1)
    assert abs(kf * m.velocity(0)) < 1e-6 * kb
