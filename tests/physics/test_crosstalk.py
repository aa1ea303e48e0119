"""Weak-coupling waveforms and peaks (docs/physics.md §3)."""
import numpy as np
import pytest

from scanner.physics import far_end_peak, near_end_peak, piecewise_peaks, saturation_length_m
from scanner.physics.crosstalk import far_end_waveform, near_end_waveform, ramp_duration_s

V = 1.5e8  # m/s, about 15 cm/ns: stripline in er 4 (common practice)
TR = 100e-12


def test_ramp_and_saturation_length():
    assert ramp_duration_s(80e-12) == pytest.approx(100e-12)
    # l_sat = v T / 2 (docs/physics.md §3): 15 cm/ns * 125 ps / 2
    assert saturation_length_m(V, TR) == pytest.approx(V * 125e-12 / 2)


def test_near_end_peak_grows_then_saturates():
    l_sat = saturation_length_m(V, TR)
    lengths = np.array([0.25, 0.5, 1.0, 2.0, 8.0]) * l_sat
    peaks = near_end_peak(0.05, lengths, V, TR, 1.0)
    assert np.allclose(peaks, 0.05 * np.minimum(1, lengths / l_sat))


def test_far_end_peak_linear_in_length_and_doubles_at_high_impedance():
    kf = -1e-10
    assert far_end_peak(kf, 0.1, TR, 1.0) == pytest.approx(kf * 0.1 / 125e-12)
    assert far_end_peak(kf, 0.2, TR, 1.0) == pytest.approx(2 * far_end_peak(kf, 0.1, TR, 1.0))
    assert far_end_peak(kf, 0.1, TR, 1.0, "high-z-receiver") == pytest.approx(2 * far_end_peak(kf, 0.1, TR, 1.0))
    with pytest.raises(ValueError):
        far_end_peak(kf, 0.1, TR, 1.0, "open")


@pytest.mark.parametrize("length_m", [0.002, 0.01, 0.05])
def test_single_piece_matches_uniform_formulas(length_m):
    res = piecewise_peaks([0.04], [-2e-10], [length_m], [V], TR, 3.3, waveforms=True)
    assert res.next_v == pytest.approx(near_end_peak(0.04, length_m, V, TR, 3.3))
    assert res.fext_v == pytest.approx(far_end_peak(-2e-10, length_m, TR, 3.3))
    assert np.max(np.abs(res.near_end_v)) == pytest.approx(abs(res.next_v), rel=0.01)
    assert res.far_end_v.min() == pytest.approx(res.fext_v, rel=1e-9)
    assert res.weak_coupling


def test_equal_pieces_add_up_to_one_run():
    whole = piecewise_peaks([0.03], [-1e-10], [0.004], [V], TR, 1.0)
    split = piecewise_peaks([0.03] * 4, [-1e-10] * 4, [0.001] * 4, [V] * 4, TR, 1.0)
    assert split.next_v == pytest.approx(whole.next_v)
    assert split.fext_v == pytest.approx(whole.fext_v)


def test_pieces_do_not_simply_add_their_peaks():
    # two saturated pieces far apart: the near-end waveform holds two separate bumps
    l_long = 4 * saturation_length_m(V, TR)
    res = piecewise_peaks([0.05, 0.0, 0.05], [0, 0, 0], [l_long, l_long, l_long], [V] * 3, TR, 1.0)
    assert res.next_v == pytest.approx(0.05)


def test_matched_near_end_peak_does_not_depend_on_orientation():
    # each piece adds a symmetric trapezoid; reversing the run mirrors the whole waveform in time
    rng = np.random.default_rng(7)
    for _ in range(20):
        n = rng.integers(1, 6)
        res = piecewise_peaks(rng.uniform(-0.01, 0.06, n), rng.uniform(-3e-10, 0, n), rng.uniform(1e-4, 0.05, n),
                              rng.uniform(1.4e8, 1.9e8, n), TR, 1.0)
        assert res.next_v_a == pytest.approx(res.next_v_b, rel=1e-9, abs=1e-15)


@pytest.mark.parametrize("termination", ["matched", "high-z-receiver"])
def test_breakpoint_search_finds_the_dense_grid_extreme(termination):
    pieces = dict(kb=[0.005, 0.06], kf=[-1e-11, -3e-10], length_m=[0.1, 0.003], velocity_m_per_s=[V, V])
    edge = dict(rise_time_s=TR, swing_v=1.0, termination=termination)
    res = piecewise_peaks(**pieces, **edge)
    assert abs(res.next_v) == pytest.approx(max(abs(res.next_v_a), abs(res.next_v_b)), rel=1e-9)
    t = np.linspace(0, 2e-9, 400_001)
    reverse = {k: v[::-1] for k, v in pieces.items()}
    for run, expected in ((pieces, res.next_v_a), (reverse, res.next_v_b)):
        wave = near_end_waveform(t, **run, **edge)
        assert wave[np.argmax(np.abs(wave))] == pytest.approx(expected, rel=1e-3)


def test_far_end_waveform_is_the_scaled_edge_derivative():
    t = np.linspace(0, 1e-9, 10_001)
    wave = far_end_waveform(t, [0.02], [-2e-10], [0.03], [V], TR, 1.0)
    inside = (t > 0.2e-9 + 1e-12) & (t < 0.2e-9 + 125e-12 - 1e-12)
    assert np.allclose(wave[inside], -2e-10 * 0.03 / 125e-12)
    assert np.all(wave[(t < 0.2e-9 - 1e-12) | (t > 0.2e-9 + 125e-12 + 1e-12)] == 0)


def test_far_end_sum_of_pieces_with_different_speeds():
    res = piecewise_peaks([0.02, 0.03], [-1e-10, -3e-10], [0.02, 0.01], [1.8e8, 1.5e8], TR, 1.0)
    assert res.fext_v == pytest.approx((-1e-10 * 0.02 - 3e-10 * 0.01) / 125e-12)


def test_high_impedance_receiver_doubles_each_figure_in_its_own_case():
    # docs/physics.md, terminations: NEXT is read with the receiver at the aggressor's driver end (victim
    # driven from the far end), FEXT with the receiver at the far end; each case whole, the wave doubling
    # at the open input (reflection coefficient +1, any transmission-line text)
    matched = piecewise_peaks([0.01], [-4e-10], [0.1], [V], TR, 1.0, waveforms=True)
    open_end = piecewise_peaks([0.01], [-4e-10], [0.1], [V], TR, 1.0, termination="high-z-receiver",
                               waveforms=True)
    assert open_end.fext_v == pytest.approx(2 * matched.fext_v)
    assert open_end.next_v == pytest.approx(2 * matched.next_v)
    assert np.allclose(open_end.near_end_v, 2 * matched.near_end_v)
    with pytest.raises(ValueError):
        piecewise_peaks([0.01], [-4e-10], [0.1], [V], TR, 1.0, termination="high_z")


def test_strong_coupling_is_flagged():
    assert not piecewise_peaks([0.02, 0.15], [0, 0], [0.01, 0.01], [V, V], TR, 1.0).weak_coupling
