"""Batch NEXT/FEXT peaks against the closed forms of the weak-coupling model and a brute-force time grid."""
import numpy as np
from hypothesis import given, settings, strategies as st

from scanner.scoring.peaks import run_peaks

V = 1.5e8  # m/s, about er 4 (common practice: ~15 cm/ns in FR-4 stripline)


def brute_force_next(kb, length_m, v, swing, ramp, reverse=False):
    """Sum of shifted ramps on a fine time grid (the waveform definition itself)."""
    if reverse:
        kb, length_m, v = kb[::-1], length_m[::-1], v[::-1]
    delay = length_m / v
    s = 2 * np.concatenate([[0], np.cumsum(delay)])
    t = np.linspace(0, s[-1] + 2 * ramp, 200_001)
    r = lambda x: np.clip(x / ramp, 0, 1)
    wave = sum(k * (r(t - s[i]) - r(t - s[i + 1])) for i, k in enumerate(kb))
    return swing * np.abs(wave).max()


def test_saturated_next_equals_kb_times_swing():
    # saturated near end: peak = Kb * dV once 2*TD >= T (standard weak-coupling result, see docs/physics.md §3)
    p = run_peaks([0.04], [-2e-11], [0.2], [V], np.array([0, 1]), 3.3, 1e-9)
    assert np.isclose(p.next_v[0], 0.04 * 3.3, rtol=1e-12)


def test_short_run_next_scales_with_two_td_over_t():
    # below saturation: peak = Kb * dV * 2*TD / T (same source)
    length = 0.01
    p = run_peaks([0.04], [0.0], [length], [V], np.array([0, 1]), 1.0, 1e-9)
    assert np.isclose(p.next_v[0], 0.04 * 2 * length / V / 1e-9, rtol=1e-12)


def test_fext_is_kf_length_swing_over_ramp_and_both_double_into_high_z():
    # far end: Kf * l * dV / T (same source); a wave arriving at an open (high-impedance)
    # receiver doubles (reflection coefficient +1, any transmission-line text)
    p = run_peaks([0.02], [-3e-11], [0.05], [V], np.array([0, 1]), 2.5, 0.5e-9, receiver_gain=[2.0])
    assert np.isclose(p.fext_v[0], 2 * -3e-11 * 0.05 * 2.5 / 0.5e-9, rtol=1e-12)
    assert np.isclose(p.next_v[0], 2 * 0.02 * 2.5, rtol=1e-12)


def test_splitting_a_uniform_run_changes_nothing():
    one = run_peaks([0.03], [-1e-11], [0.03], [V], np.array([0, 1]), 1.0, 0.4e-9)
    ten = run_peaks(np.full(10, 0.03), np.full(10, -1e-11), np.full(10, 0.003), np.full(10, V),
                    np.array([0, 10]), 1.0, 0.4e-9)
    assert np.isclose(one.next_v[0], ten.next_v[0], rtol=1e-9)
    assert np.isclose(one.fext_v[0], ten.fext_v[0], rtol=1e-9)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.floats(0.001, 0.08), st.floats(0.0005, 0.03)), min_size=1, max_size=6),
       st.floats(0.05e-9, 2e-9))
def test_nonuniform_next_matches_brute_force(pieces, ramp):
    kb = np.array([k for k, _ in pieces])
    length = np.array([l for _, l in pieces])
    v = np.full(len(kb), V)
    p = run_peaks(kb, np.zeros(len(kb)), length, v, np.array([0, len(kb)]), 1.0, ramp)
    expect = brute_force_next(kb, length, v, 1.0, ramp)
    assert np.isclose(p.next_v[0], expect, rtol=2e-4, atol=1e-9)


def test_many_runs_in_one_call_match_single_calls():
    rng = np.random.default_rng(7)
    counts = rng.integers(1, 8, 50)
    start = np.concatenate([[0], np.cumsum(counts)])
    n = start[-1]
    kb, kf, ln = rng.uniform(0.001, 0.05, n), rng.uniform(-5e-11, 0, n), rng.uniform(1e-4, 0.02, n)
    v = rng.uniform(1.4e8, 1.9e8, n)
    ramp = rng.uniform(0.1e-9, 2e-9, 50)
    swing = rng.uniform(1, 5, 50)
    batch = run_peaks(kb, kf, ln, v, start, swing, ramp)
    for r in range(50):
        sl = slice(start[r], start[r + 1])
        single = run_peaks(kb[sl], kf[sl], ln[sl], v[sl], np.array([0, counts[r]]), swing[r], ramp[r])
        assert np.isclose(batch.next_v[r], single.next_v[0], rtol=1e-12)
        assert np.isclose(batch.fext_v[r], single.fext_v[0], rtol=1e-12)


def test_driver_end_does_not_change_the_near_end_peak():
    # the near-end wave is the Kb profile filtered by a box of the ramp length, so reversing the
    # run mirrors it in time; the brute-force sum of shifted ramps shows the same peak both ways
    kb = np.array([0.08, 0.01, 0.03, 0.01])
    length = np.array([0.01, 0.004, 0.02, 0.007])
    v = np.array([V, 1.9e8, V, 1.7e8])
    p = run_peaks(kb, np.zeros(4), length, v, np.array([0, 4]), 1.0, 0.3e-9)
    a = brute_force_next(kb, length, v, 1.0, 0.3e-9)
    b = brute_force_next(kb, length, v, 1.0, 0.3e-9, reverse=True)
    assert np.isclose(a, b, rtol=1e-4)
    assert np.isclose(p.next_v[0], a, rtol=1e-4)
