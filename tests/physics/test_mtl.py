"""Exact coupled-line simulation against the weak-coupling model and line theory."""
import numpy as np
import pytest

from scanner.physics import (LineMatrices, LineSection, coupling_coefficients, piecewise_peaks, saturation_length_m,
                             simulate_coupled_lines, solve_cross_section, traces_on_layer)
from scanner.physics.crosstalk import far_end_waveform, near_end_waveform
from scanner.physics.mtl import chain_matrix

TR = 100e-12
MICROSTRIP = ([(0.1, 4.2)], [], "below")


def pair(spacing_mm, env=MICROSTRIP, thickness_mm=0.035):
    return solve_cross_section(traces_on_layer(*env, [0.15, 0.15], [spacing_mm], thickness_mm))


def weak_waveforms(m, lengths, kbkf, response, swing, termination="matched", oversample=16):
    """Weak-coupling waveforms on the simulation's time grid, with its Gaussian corner rounding applied.

    The weak-coupling far-end pulse has sharp edges, so it is built on a finer grid before rounding.
    """
    dt = (response.time_s[1] - response.time_s[0]) / oversample
    t = np.arange(len(response.time_s) * oversample) * dt - response.edge_start_s
    pieces = dict(kb=[c[0] for c in kbkf], kf=[c[1] for c in kbkf], length_m=lengths,
                  velocity_m_per_s=[m_.velocity(0) for m_ in m], rise_time_s=TR, swing_v=swing,
                  termination=termination)
    half = int(6 * response.rounding_s / dt)
    kernel = np.exp(-0.5 * (np.arange(-half, half + 1) * dt / response.rounding_s) ** 2)
    kernel /= kernel.sum()
    return tuple(np.convolve(f(t, **pieces), kernel, mode="same")[::oversample]
                 for f in (near_end_waveform, far_end_waveform))


@pytest.mark.parametrize("spacing_mm,length_m", [(0.3, 0.005), (0.3, 0.02), (0.6, 0.05)])
def test_matched_exact_waveforms_match_weak_coupling(spacing_mm, length_m):
    # the weak-coupling far-end pulse ignores the even/odd delay split 2 |Kf| l: kept well below the ramp here
    m = pair(spacing_mm)
    kb, kf = coupling_coefficients(m, 0, 1)
    assert kb < 0.05
    z0 = m.z0(0)
    res = simulate_coupled_lines([LineSection(m, length_m)], z0, z0, driven=0, rise_time_s=TR, source_step_v=2.0)
    ne, fe = weak_waveforms([m], [length_m], [(kb, kf)], res, swing=1.0)
    for exact, weak in ((res.near_end_v[1], ne), (res.far_end_v[1], fe)):
        peak = np.max(np.abs(weak))
        # weak coupling (docs/physics.md §3) against the full line equations: within 5 % of the peak
        assert np.max(np.abs(exact - weak)) < 0.05 * peak
    # the aggressor's far end settles at the launched wave (half the open-circuit step, matched source)
    assert res.far_end_v[0][-1] == pytest.approx(1.0, rel=0.02)


def test_exact_near_end_noise_saturates():
    m = pair(0.3)
    z0 = m.z0(0)
    l_sat = float(saturation_length_m(m.velocity(0), TR))
    peaks = []
    for factor in (0.25, 0.5, 2.0, 4.0):
        res = simulate_coupled_lines([LineSection(m, factor * l_sat)], z0, z0, 0, TR, 2.0)
        peaks.append(res.near_end_v[1].max())
    assert peaks[1] == pytest.approx(2 * peaks[0], rel=0.05)  # grows with length below l_sat
    assert peaks[3] == pytest.approx(peaks[2], rel=0.01)  # and stops beyond it
    assert peaks[1] == pytest.approx(0.5 * peaks[3], rel=0.05)


def test_high_impedance_receiver_roughly_doubles_far_end_noise():
    # victim driven from the same end as the aggressor (matched source there), received at the far end
    m = pair(0.3)
    z0 = m.z0(0)
    matched = simulate_coupled_lines([LineSection(m, 0.05)], z0, z0, 0, TR, 2.0)
    open_end = simulate_coupled_lines([LineSection(m, 0.05)], z0, [z0, 1e6], 0, TR, 2.0)
    ratio = open_end.far_end_v[1].min() / matched.far_end_v[1].min()
    assert 1.9 < ratio < 2.1  # docs/physics.md §4: the far end sees roughly double
    weak_peak = piecewise_peaks(*coupling_coefficients(m, 0, 1), 0.05, m.velocity(0), TR, 1.0,
                                termination="high-z-receiver").fext_v
    assert open_end.far_end_v[1].min() == pytest.approx(weak_peak, rel=0.05)


def test_receiver_at_the_near_end_sees_double_the_near_end_noise():
    # victim driven from the far end (matched source there), received at the aggressor's driver end: the
    # scan's NEXT figure for a high-z-receiver (docs/physics.md, terminations) against the full line equations
    m = pair(0.3)
    z0 = m.z0(0)
    open_near = simulate_coupled_lines([LineSection(m, 0.05)], [z0, 1e6], z0, 0, TR, 2.0)
    weak = piecewise_peaks(*coupling_coefficients(m, 0, 1), 0.05, m.velocity(0), TR, 1.0,
                           termination="high-z-receiver")
    assert open_near.near_end_v[1].max() == pytest.approx(weak.next_v, rel=0.05)
    # and the far-end wave is absorbed by the victim's driver: nothing like the doubled FEXT reaches it
    assert np.max(np.abs(open_near.far_end_v[1])) < 0.7 * abs(weak.fext_v)


def test_cascaded_sections_match_piecewise_weak_coupling():
    near, far = pair(0.2), pair(0.6)
    lengths = [0.01, 0.03]
    z0 = near.z0(0)
    res = simulate_coupled_lines([LineSection(near, lengths[0]), LineSection(far, lengths[1])], z0, z0, 0, TR, 2.0)
    kbkf = [coupling_coefficients(near, 0, 1), coupling_coefficients(far, 0, 1)]
    ne, fe = weak_waveforms([near, far], lengths, kbkf, res, swing=1.0)
    assert np.max(np.abs(res.near_end_v[1] - ne)) < 0.05 * np.max(np.abs(ne))
    assert np.max(np.abs(res.far_end_v[1] - fe)) < 0.05 * np.max(np.abs(fe))


def test_three_lines_in_stripline():
    section = traces_on_layer([(0.12, 4.2)], [(0.12, 4.2)], "both", [0.1, 0.1, 0.1], [0.15, 0.15], 0.018)
    m = solve_cross_section(section)
    z0 = m.z0(0)
    res = simulate_coupled_lines([LineSection(m, 0.04)], z0, z0, driven=1, rise_time_s=TR, source_step_v=2.0)
    for victim in (0, 2):
        kb, kf = coupling_coefficients(m, 1, victim)
        assert res.near_end_v[victim].max() == pytest.approx(kb, rel=0.05)
        # homogeneous stripline: no far-end noise (docs/physics.md §2)
        assert np.max(np.abs(res.far_end_v[victim])) < 0.05 * kb
    assert np.allclose(res.near_end_v[0], res.near_end_v[2], atol=1e-6)


@pytest.mark.parametrize("spacing_mm,weak_ok", [(0.3, True), (0.015, False)])
def test_weak_coupling_flag_marks_where_the_estimate_drifts(spacing_mm, weak_ok):
    # tightly coupled pair (Kb about 0.25): the weak-coupling near-end estimate is several percent low
    m = pair(spacing_mm)
    kb, kf = coupling_coefficients(m, 0, 1)
    z0 = m.z0(0)
    res = simulate_coupled_lines([LineSection(m, 0.05)], z0, z0, 0, TR, 2.0)
    weak = piecewise_peaks([kb], [kf], [0.05], [m.velocity(0)], TR, 1.0)
    assert weak.weak_coupling == weak_ok
    error = abs(res.near_end_v[1].max() / weak.next_v - 1)
    assert (error < 0.01) if weak_ok else (error > 0.05)


def test_chain_matrix_of_single_line_matches_line_theory():
    # one lossless line: V(l) = V0 cos(bl) - j Z0 I0 sin(bl) (any transmission-line text)
    m = LineMatrices.from_capacitances(np.array([[1.2e-10]]), np.array([[3.0e-11]]))
    z0, v = m.z0(), m.velocity()
    omega = np.array([1e9, 7e9])
    phi = chain_matrix(m, 0.1, 1j * omega)
    bl = omega * 0.1 / v
    assert np.allclose(phi[:, 0, 0], np.cos(bl))
    assert np.allclose(phi[:, 0, 1], -1j * z0 * np.sin(bl))
    assert np.allclose(phi[:, 1, 0], -1j * np.sin(bl) / z0)
    assert np.allclose(phi[:, 1, 1], np.cos(bl))


def test_rejects_bad_arguments():
    m = pair(0.3)
    with pytest.raises(ValueError):
        simulate_coupled_lines([], 50, 50, 0, TR, 1.0)
    with pytest.raises(ValueError):
        simulate_coupled_lines([LineSection(m, 0.01)], 50, 50, 2, TR, 1.0)
    with pytest.raises(ValueError):
        simulate_coupled_lines([LineSection(m, 0.01)], -5, 50, 0, TR, 1.0)
