"""The far-side reference of a board without planes, checked against published microstrip models.

A two-layer board's top trace referenced to the bottom copper is a microstrip 1.53 mm above a plane; its
environment, solved the way the scan solves it, must agree with Hammerstad-Jensen (single line, through
scikit-rf) and Kirschning-Jansen (coupled pair) at that height.
"""
import warnings

import numpy as np
import pytest

from scanner import scan
from scanner.board.layerstack import layer_environments
from scanner.coupling.coefficients import section_arguments
from scanner.physics import solve_cross_section
from scanner.physics.closed_form import kirschning_jansen_coupled
from scanner.physics.coupling import coupling_coefficients
from scanner.physics.geometry import traces_on_layer
from scanner.rules import parse_rules
from tests.scan.synthetic import polyline, two_layer_board, two_layer_stackup

skrf = pytest.importorskip("skrf")

HEIGHT_MM, ER, WIDTH_MM, GAP_MM = 1.53, 4.5, 0.3, 0.3
C0 = 299_792_458.0


def bare_board():
    """Zero-thickness copper, no soldermask: the published models' own geometry."""
    pitch = WIDTH_MM + GAP_MM
    top = polyline([(0, 0), (60, 0)], 0, WIDTH_MM) + polyline([(0, pitch), (60, pitch)], 1, WIDTH_MM)
    return two_layer_board({0: top}, ["SIG_A", "SIG_B"], stackup=two_layer_stackup(mask=False, copper_mm=0.0))


def top_environment():
    board = bare_board()
    return layer_environments(board, board.stackup, set())[0]


def kj_backward_coefficient():
    """Kb = (E/C + M/L)/4 from the even and odd modes of Kirschning & Jansen, IEEE Trans. MTT-32, 1984."""
    z_e, z_o, eps_e, eps_o = kirschning_jansen_coupled(WIDTH_MM, GAP_MM, HEIGHT_MM, ER)
    c_e, c_o = np.sqrt(eps_e) / (C0 * z_e), np.sqrt(eps_o) / (C0 * z_o)
    l_e, l_o = z_e * np.sqrt(eps_e) / C0, z_o * np.sqrt(eps_o) / C0
    return ((c_o - c_e) / (c_o + c_e) + (l_e - l_o) / (l_e + l_o)) / 4


def test_the_far_side_is_a_plane_at_the_board_thickness():
    env = top_environment()
    assert env.structure == "microstrip" and env.reference.kind == "far side"
    assert env.height_mm == pytest.approx(HEIGHT_MM) and env.away == () and env.soldermask is None


def test_single_trace_over_the_far_side_matches_hammerstad_jensen():
    m = solve_cross_section(traces_on_layer(widths_mm=[WIDTH_MM], spacings_mm=[], **section_arguments(top_environment())))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        line = skrf.media.MLine(frequency=skrf.Frequency(1, 1, 1, "GHz"), w=WIDTH_MM * 1e-3, h=HEIGHT_MM * 1e-3,
                                t=None, ep_r=ER, model="hammerstadjensen", disp="none", diel="frequencyinvariant",
                                tand=0.0, rho=1.7e-8, rough=0.0, compatibility_mode="qucs")
    # scikit-rf MLine: Hammerstad & Jensen, IEEE MTT-S Digest 1980, quasi-static (about 1 % in its range)
    assert m.z0() == pytest.approx(float(np.real(line.zl_eff)), rel=0.01)  # measured 0.2 %
    assert m.eps_eff() == pytest.approx(float(np.real(line.ep_reff)), rel=0.01)


def test_coupled_pair_over_the_far_side_matches_kirschning_jansen():
    args = section_arguments(top_environment())
    m = solve_cross_section(traces_on_layer(widths_mm=[WIDTH_MM, WIDTH_MM], spacings_mm=[GAP_MM], **args))
    z_e, z_o, _, _ = kirschning_jansen_coupled(WIDTH_MM, GAP_MM, HEIGHT_MM, ER)
    # Kirschning & Jansen 1984, quasi-static part (w/h 0.2 and s/h 0.2 are inside its 0.1-10 range)
    assert m.z_even == pytest.approx(z_e, rel=0.02)  # measured 0.4 %
    assert m.z_odd == pytest.approx(z_o, rel=0.02)  # measured 1.2 %
    kb, _ = coupling_coefficients(m, 0, 1)
    assert kb == pytest.approx(kj_backward_coefficient(), rel=0.02)  # measured 0.7 %


def test_the_scan_uses_that_coupling_on_a_board_without_planes():
    rules = parse_rules({"scan": {"min_coupled_length_mm": 1.0}}, "test")
    result = scan(bare_board(), rules)
    kb = result.piece_coefficients.kb
    # the scan interpolates its per-layer table between solved spacings: within 5 % of the published value
    assert len(kb) and np.allclose(kb, kj_backward_coefficient(), rtol=0.05)
    # strong: over a 1.53 mm reference this close pair couples several times more than over a 0.2 mm plane
    assert kb.max() > 0.1
