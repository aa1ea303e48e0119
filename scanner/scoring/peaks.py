"""NEXT and FEXT peaks for many non-uniform coupled runs at once.

Weak-coupling model (docs/physics.md): a run is a chain of pieces k with
backward coefficient Kb_k, forward coefficient Kf_k (s/m), length l_k and
velocity v_k, pieces laid end to end along the victim. For an aggressor ramp
of amplitude dV and duration T:

    near end  V(t) = dV * sum_k Kb_k * (r(t - s_k) - r(t - s_{k+1})),  s_k = 2 * tau_k
    far end   V    = dV / T * sum_k Kf_k * l_k   (every piece's forward wave arrives together)

with r(t) = clip(t / T, 0, 1) and tau_k the delay from the near end to piece k.
The near-end sum is piecewise linear in t, so its peak lies on one of the
breakpoints s_k or s_k + T; we evaluate it there exactly, with no time grid,
in O(K log K) per run of K pieces.

The near-end waveform is the run's Kb profile (as a function of round-trip
delay) filtered by a box of the ramp's duration, so driving the run from the
other end only mirrors the waveform in time: the peak does not depend on which
end the aggressor's driver sits at (tests check this against a time grid).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class RunPeaks:
    """Per run: peak near-end voltage and signed far-end voltage."""

    next_v: np.ndarray
    fext_v: np.ndarray


def run_peaks(kb: np.ndarray, kf_s_per_m: np.ndarray, length_m: np.ndarray, velocity_m_per_s: np.ndarray,
              run_start: np.ndarray, swing_v: np.ndarray, ramp_s: np.ndarray,
              receiver_gain: np.ndarray | float = 1.0) -> RunPeaks:
    """Peaks for runs given as consecutive pieces (CSR: run r owns pieces run_start[r]:run_start[r+1]).

    ``swing_v``, ``ramp_s`` and ``receiver_gain`` are per run: the aggressor's swing and
    0–100 % ramp duration, and the gain of the victim's receiver on an arriving wave
    (1 when matched; 2 for a high-impedance input, where the wave doubles).
    """
    kb, kf_s_per_m, length_m, velocity_m_per_s = (np.asarray(a, dtype=float)
                                                   for a in (kb, kf_s_per_m, length_m, velocity_m_per_s))
    run_start = np.asarray(run_start, dtype=np.int64)
    counts = np.diff(run_start).astype(np.int64)
    n_runs = len(counts)
    swing_v = np.broadcast_to(np.asarray(swing_v, dtype=float), (n_runs,))
    ramp_s = np.broadcast_to(np.asarray(ramp_s, dtype=float), (n_runs,))
    receiver_gain = np.broadcast_to(np.asarray(receiver_gain, dtype=float), (n_runs,))
    if n_runs == 0:
        z = np.zeros(0)
        return RunPeaks(z, z)

    run_of_piece = np.repeat(np.arange(n_runs), counts)
    delay = length_m / velocity_m_per_s
    kfl = np.add.reduceat(kf_s_per_m * length_m, run_start[:-1]) if len(kb) else np.zeros(n_runs)
    kfl = np.where(counts > 0, kfl, 0.0)
    fext_v = receiver_gain * swing_v / ramp_s * kfl

    # delay from the run's first piece to the start of each piece
    before = np.cumsum(delay) - delay
    start = before - before[np.minimum(run_start[:-1], len(kb) - 1)][run_of_piece] if len(kb) else before
    next_v = _near_end_peak(kb, 2 * start, 2 * (start + delay), run_of_piece, counts, ramp_s)
    return RunPeaks(receiver_gain * swing_v * next_v, fext_v)


def _near_end_peak(kb, s_begin, s_end, run_of_piece, counts, ramp_s) -> np.ndarray:
    """max_t |sum_k kb_k (r(t - s_begin_k) - r(t - s_end_k))| per run, for a unit swing.

    With pieces end to end (s_end_k = s_begin_{k+1}) the sum is sum_j c_j r(t - b_j) over the
    breakpoints b_j with steps c_j = kb_j - kb_{j-1}. Prefix sums of c and c*b over the sorted
    breakpoints give it at any t in O(log K); every run is shifted by its own offset so one
    global searchsorted serves all runs at once. The breakpoints are already in order (each
    run's piece starts, then its end), so they are laid out sorted without a sort.
    """
    n_runs = len(counts)
    if len(kb) == 0:
        return np.zeros(n_runs)
    first = np.cumsum(counts) - counts
    last = first + counts - 1
    # slots: piece k of run r at k + r, run r's end right after its last piece
    piece_slot = np.arange(len(kb)) + run_of_piece
    end_slot = last + np.arange(n_runs) + 1
    n_points = len(kb) + n_runs
    points = np.empty(n_points)
    steps = np.empty(n_points)
    run_of_point = np.empty(n_points, dtype=np.int64)
    step = kb - np.concatenate([[0.0], kb[:-1]])
    step[first] = kb[first]
    points[piece_slot], points[end_slot] = s_begin, s_end[last]
    steps[piece_slot], steps[end_slot] = step, -kb[last]
    run_of_point[piece_slot], run_of_point[end_slot] = run_of_piece, np.arange(n_runs)
    span = float(np.max(s_end) + np.max(ramp_s)) * 2 + 1e-30
    offset = run_of_point * span
    key = points + offset
    c0 = np.concatenate([[0.0], np.cumsum(steps)])
    c1 = np.concatenate([[0.0], np.cumsum(steps * points)])
    ramp = ramp_s[run_of_point]
    after = np.arange(1, n_points + 1)  # prefix index just past each breakpoint

    def value(t_local, lo, hi):
        # run boundaries: prefix sums restart per run because every run's steps sum to zero
        return c0[lo] + ((c0[hi] - c0[lo]) * t_local - (c1[hi] - c1[lo])) / ramp

    # at a breakpoint b: terms up to b itself have started (equal breakpoints add r(0) = 0);
    # at b + T: terms up to b are complete
    at_point = value(points, np.searchsorted(key, key - ramp, side="right"), after)
    at_ramp_end = value(points + ramp, after, np.searchsorted(key, key + ramp, side="right"))
    v = np.maximum(np.abs(at_point), np.abs(at_ramp_end))
    peak = np.zeros(n_runs)
    np.maximum.at(peak, run_of_point, v)
    return peak
