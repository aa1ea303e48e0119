"""Field-solver accuracy against published exact and closed-form results."""
import warnings

import numpy as np
import pytest

from scanner.physics import (Conductor, CrossSection, Dielectric, cohn_coupled_stripline, cohn_stripline,
                             kirschning_jansen_coupled, solve_cross_section, wire_over_ground)

skrf = pytest.importorskip("skrf")


def centred_stripline(widths, spacing, b=1.0, er=4.0):
    x = np.cumsum([0.0] + [widths[k] / 2 + spacing + widths[k + 1] / 2 for k in range(len(widths) - 1)])
    x -= x.mean()
    conductors = tuple(Conductor.trace(xc, b / 2, w, 0.0) for xc, w in zip(x, widths))
    return CrossSection(conductors, (Dielectric(b / 2, er), Dielectric(b / 2, er)), "both")


@pytest.mark.parametrize("w_over_b", [0.1, 0.3, 0.7, 1.0, 2.0])
def test_single_stripline_matches_cohn(w_over_b):
    m = solve_cross_section(centred_stripline([w_over_b], 0.0))
    # S. B. Cohn, IRE Trans. MTT-2, 1954 (exact, via scipy.special.ellipk)
    assert m.z0() == pytest.approx(cohn_stripline(w_over_b, 1.0, 4.0), rel=0.01)
    assert m.eps_eff() == pytest.approx(4.0, rel=1e-9)  # homogeneous medium: eps_eff = er exactly


@pytest.mark.parametrize("w_over_b", [0.1, 0.5, 2.0])
@pytest.mark.parametrize("s_over_w", [0.5, 1.0, 2.0, 5.0])
def test_edge_coupled_stripline_matches_cohn(w_over_b, s_over_w):
    m = solve_cross_section(centred_stripline([w_over_b, w_over_b], s_over_w * w_over_b))
    z_even, z_odd = cohn_coupled_stripline(w_over_b, s_over_w * w_over_b, 1.0, 4.0)
    # S. B. Cohn, IRE Trans. MTT-3, 1955 (exact for zero thickness, centred strips)
    assert m.z_even == pytest.approx(z_even, rel=0.01)
    assert m.z_odd == pytest.approx(z_odd, rel=0.01)


def skrf_microstrip(w_over_h, er, t_over_h):
    """scikit-rf 2.x MLine: Hammerstad-Jensen quasi-static values (disp='none')."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        line = skrf.media.MLine(frequency=skrf.Frequency(1, 1, 1, "GHz"), w=w_over_h * 1e-4, h=1e-4,
                                t=None if t_over_h == 0 else t_over_h * 1e-4, ep_r=er, model="hammerstadjensen",
                                disp="none", diel="frequencyinvariant", tand=0.0, rho=1.7e-8, rough=0.0,
                                compatibility_mode="qucs")
    return float(np.real(line.zl_eff)), float(np.real(line.ep_reff))


def microstrip(w_over_h, er, t_over_h, h=0.1):
    return CrossSection((Conductor.trace(0.0, h, w_over_h * h, t_over_h * h),), (Dielectric(h, er),), "below")


@pytest.mark.parametrize("w_over_h", [0.2, 0.5, 1.0, 3.0, 10.0])
@pytest.mark.parametrize("er", [2.0, 4.4, 10.0])
def test_zero_thickness_microstrip_matches_scikit_rf(w_over_h, er):
    m = solve_cross_section(microstrip(w_over_h, er, 0.0))
    z0, eps_eff = skrf_microstrip(w_over_h, er, 0.0)
    # scikit-rf MLine (Hammerstad & Jensen, IEEE MTT-S Digest 1980), quasi-static
    assert m.z0() == pytest.approx(z0, rel=0.02)
    assert m.eps_eff() == pytest.approx(eps_eff, rel=0.02)


@pytest.mark.parametrize("w_over_h,t_over_h", [(0.4, 0.05), (0.5, 0.2), (1.0, 0.35), (3.0, 0.35), (10.0, 0.2)])
@pytest.mark.parametrize("er", [2.0, 4.4, 10.0])
def test_finite_thickness_microstrip_matches_scikit_rf(w_over_h, t_over_h, er):
    # the Hammerstad-Jensen thickness correction is meant for thin strips: compared here for t <= w/2
    m = solve_cross_section(microstrip(w_over_h, er, t_over_h))
    z0, eps_eff = skrf_microstrip(w_over_h, er, t_over_h)
    # scikit-rf MLine with its strip-thickness correction (Hammerstad & Jensen 1980)
    assert m.z0() == pytest.approx(z0, rel=0.02)
    assert m.eps_eff() == pytest.approx(eps_eff, rel=0.02)


@pytest.mark.parametrize("w_over_h", [0.2, 1.0, 3.0, 8.0])
@pytest.mark.parametrize("s_over_h", [0.1, 0.5, 2.0, 8.0])
@pytest.mark.parametrize("er", [2.2, 4.4, 10.0])
def test_coupled_microstrip_matches_kirschning_jansen(w_over_h, s_over_h, er):
    h = 0.1
    w, s = w_over_h * h, s_over_h * h
    section = CrossSection((Conductor.trace(-(w + s) / 2, h, w, 0.0), Conductor.trace((w + s) / 2, h, w, 0.0)),
                           (Dielectric(h, er),), "below")
    m = solve_cross_section(section)
    z_even, z_odd, _, _ = kirschning_jansen_coupled(w, s, h, er)
    # Kirschning & Jansen, IEEE Trans. MTT-32, 1984, quasi-static part; valid 0.1 <= w/h, s/h <= 10
    assert m.z_even == pytest.approx(z_even, rel=0.03)
    assert m.z_odd == pytest.approx(z_odd, rel=0.03)


@pytest.mark.parametrize("h_over_r", [1.2, 2.0, 5.0, 30.0])
def test_round_wire_over_ground_matches_exact(h_over_r):
    r = 0.1
    section = CrossSection((Conductor.round_wire(0.0, h_over_r * r, r, sides=96),),
                           (Dielectric(3 * h_over_r * r, 2.5),), "below", cover_er=2.5)
    m = solve_cross_section(section)
    c_exact, z_exact = wire_over_ground(r, h_over_r * r, 2.5)
    # C = 2 pi eps / acosh(h/r): method of images, exact
    assert m.C[0, 0] == pytest.approx(c_exact, rel=0.005)
    assert m.z0() == pytest.approx(z_exact, rel=0.005)
