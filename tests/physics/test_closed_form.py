"""Closed-form line models against scikit-rf and their own limiting cases."""
import warnings

import numpy as np
import pytest

from scanner.physics import (cohn_coupled_stripline, cohn_stripline, hammerstad_jensen, kirschning_jansen_coupled,
                             wire_over_ground)
from scanner.units import EPS0

skrf = pytest.importorskip("skrf")


@pytest.mark.parametrize("t_over_h", [0.0, 0.05, 0.3])
def test_hammerstad_jensen_equals_scikit_rf(t_over_h):
    u = np.array([0.1, 0.5, 1.0, 4.0, 20.0])
    for er in (1.5, 4.4, 12.0):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            line = skrf.media.MLine(frequency=skrf.Frequency(1, 1, 1, "GHz"), w=u * 1e-4, h=1e-4,
                                    t=None if t_over_h == 0 else t_over_h * 1e-4, ep_r=er, disp="none",
                                    diel="frequencyinvariant", tand=0.0, rho=1.7e-8, rough=0.0,
                                    compatibility_mode="qucs")
        z0, eps = hammerstad_jensen(u, 1.0, er, t_over_h)
        # scikit-rf MLine implements the same paper (Hammerstad & Jensen 1980)
        assert np.allclose(z0, np.real(line.zl_eff), rtol=1e-6)
        assert np.allclose(eps, np.real(line.ep_reff), rtol=1e-9)


def test_kirschning_jansen_tends_to_single_line_at_wide_spacing():
    z_even, z_odd, e_even, e_odd = kirschning_jansen_coupled(0.2, 5.0, 0.1, 4.4)  # s/h = 50
    z0, eps = hammerstad_jensen(0.2, 0.1, 4.4)
    assert z_even == pytest.approx(z0, rel=0.005) and z_odd == pytest.approx(z0, rel=0.005)
    assert e_even == pytest.approx(eps, rel=0.005) and e_odd == pytest.approx(eps, rel=0.005)


def test_kirschning_jansen_orders_modes():
    z_even, z_odd, e_even, e_odd = kirschning_jansen_coupled(0.1, 0.05, 0.1, 4.4)
    assert z_even > z_odd  # common practice: even mode sees less capacitance
    assert e_even > e_odd  # odd mode has more field in air


def test_cohn_coupled_tends_to_single_at_wide_spacing():
    z_even, z_odd = cohn_coupled_stripline(0.5, 10.0, 1.0, 4.0)
    assert z_even == pytest.approx(cohn_stripline(0.5, 1.0, 4.0), rel=1e-6)
    assert z_odd == pytest.approx(cohn_stripline(0.5, 1.0, 4.0), rel=1e-6)


def test_cohn_wide_strip_approaches_parallel_plates():
    # a very wide strip between two planes is two parallel-plate lines of gap b/2 in parallel
    w, b, er = 40.0, 1.0, 4.0
    eta0 = np.sqrt(4e-7 * np.pi / EPS0)
    plate = eta0 / np.sqrt(er) * (b / 2) / w / 2
    assert cohn_stripline(w, b, er) == pytest.approx(plate, rel=0.02)


def test_wire_over_ground_matches_image_pair():
    # line charge at height h with its image: C = 2 pi eps / acosh(h/r) tends to 2 pi eps / ln(2h/r) for h >> r
    c, z = wire_over_ground(0.01, 10.0, 1.0)
    assert c == pytest.approx(2 * np.pi * EPS0 / np.log(2 * 10.0 / 0.01), rel=1e-6)
    assert z * c == pytest.approx(1 / 299792458.0, rel=1e-6)  # Z0 C = 1/v in air
