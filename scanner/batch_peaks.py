"""NEXT and FEXT peaks for many non-uniform coupled runs at once.

Weak-coupling model (docs/physics.md): a run is a chain of pieces k with
backward coefficient Kb_k, forward coefficient Kf_k (s/m), length l_k and
velocity v_k, pieces laid end to end along the victim. For an aggressor ramp
of amplitude dV and duration T:

    near end  V(t) = dV * sum_k Kb_k * (r(t - s_k) - r(t - s_{k+1})),  s_k = 2 * tau_k
    far end   V    = dV / T * sum_k Kf_k * l_k   (every piece's forward wave arrives together)

with r(t) = clip(t / T, 0, 1) and tau_k the delay from the near end to piece k.
The near-end sum is piecewise linear in t, so its peak lies on one of the
breakpoints s_k or s_k + T; we evaluate it there exactly, with no time grid.

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


def _group_offsets(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For groups of the given sizes: group id of every element and its position within the group."""
    group = np.repeat(np.arange(len(counts)), counts)
    starts = np.cumsum(counts) - counts
    return group, np.arange(int(counts.sum())) - starts[group]


def run_peaks(kb: np.ndarray, kf_s_per_m: np.ndarray, length_m: np.ndarray, velocity_m_per_s: np.ndarray,
              run_start: np.ndarray, swing_v: np.ndarray, ramp_s: np.ndarray, fext_gain: np.ndarray | float = 1.0,
              chunk_pairs: int = 4_000_000) -> RunPeaks:
    """Peaks for runs given as consecutive pieces (CSR: run r owns pieces run_start[r]:run_start[r+1]).

    ``swing_v``, ``ramp_s`` and ``fext_gain`` are per run (the aggressor's swing and
    0–100 % ramp duration; the far-end gain, 2 for a high-impedance receiver).
    """
    kb, kf_s_per_m, length_m, velocity_m_per_s = (np.asarray(a, dtype=float)
                                                   for a in (kb, kf_s_per_m, length_m, velocity_m_per_s))
    run_start = np.asarray(run_start, dtype=np.int64)
    counts = np.diff(run_start).astype(np.int64)
    n_runs = len(counts)
    swing_v = np.broadcast_to(np.asarray(swing_v, dtype=float), (n_runs,))
    ramp_s = np.broadcast_to(np.asarray(ramp_s, dtype=float), (n_runs,))
    fext_gain = np.broadcast_to(np.asarray(fext_gain, dtype=float), (n_runs,))
    if n_runs == 0:
        z = np.zeros(0)
        return RunPeaks(z, z)

    run_of_piece = np.repeat(np.arange(n_runs), counts)
    delay = length_m / velocity_m_per_s
    kfl = np.add.reduceat(kf_s_per_m * length_m, run_start[:-1]) if len(kb) else np.zeros(n_runs)
    kfl = np.where(counts > 0, kfl, 0.0)
    fext_v = fext_gain * swing_v / ramp_s * kfl

    # delay from the run's first piece to the start of each piece
    before = np.cumsum(delay) - delay
    start = before - before[np.minimum(run_start[:-1], len(kb) - 1)][run_of_piece] if len(kb) else before
    next_v = _near_end_peak(kb, 2 * start, 2 * (start + delay), run_of_piece, counts, ramp_s, chunk_pairs)
    return RunPeaks(swing_v * next_v, fext_v)


def _near_end_peak(kb, s_begin, s_end, run_of_piece, counts, ramp_s, chunk_pairs) -> np.ndarray:
    """max_t |sum_k kb_k (r(t - s_begin_k) - r(t - s_end_k))| per run, for a unit swing."""
    n_runs = len(counts)
    peak = np.zeros(n_runs)
    if len(kb) == 0:
        return peak
    # candidate times: every piece's start and end, and each shifted by the ramp
    t_ramp = ramp_s[run_of_piece]
    cand_t = np.concatenate([s_begin, s_begin + t_ramp, s_end, s_end + t_ramp])
    cand_run = np.tile(run_of_piece, 4)
    order = np.argsort(cand_run, kind="stable")
    cand_t, cand_run = cand_t[order], cand_run[order]
    cand_counts = np.bincount(cand_run, minlength=n_runs)
    piece_first = np.cumsum(counts) - counts

    pairs_per_run = cand_counts * counts
    # process runs in chunks so the (candidate, piece) pair arrays stay bounded
    bounds = _chunks(pairs_per_run, chunk_pairs)
    cand_first = np.cumsum(cand_counts) - cand_counts
    for lo, hi in bounds:
        c_lo, c_hi = cand_first[lo], cand_first[hi - 1] + cand_counts[hi - 1]
        ct = cand_t[c_lo:c_hi]
        cr = cand_run[c_lo:c_hi]
        reps = counts[cr]
        cidx = np.repeat(np.arange(len(ct)), reps)
        _, pos = _group_offsets(reps)
        pidx = piece_first[cr][cidx] + pos
        t = ct[cidx]
        T = ramp_s[cr][cidx]
        contrib = kb[pidx] * (np.clip((t - s_begin[pidx]) / T, 0, 1) - np.clip((t - s_end[pidx]) / T, 0, 1))
        value = np.abs(np.bincount(cidx, weights=contrib, minlength=len(ct)))
        np.maximum.at(peak, cr, value)
    return peak


def _chunks(weights: np.ndarray, limit: int) -> list[tuple[int, int]]:
    """Split 0..len(weights) into consecutive ranges whose weight sum stays near ``limit``."""
    out = []
    lo = 0
    cum = np.cumsum(weights)
    n = len(weights)
    while lo < n:
        base = cum[lo - 1] if lo else 0
        hi = min(max(int(np.searchsorted(cum, base + limit, side="right")), lo + 1), n)
        out.append((lo, hi))
        lo = hi
    return out
