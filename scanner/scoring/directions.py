"""Coupled runs taken once per direction (aggressor -> victim) with the classes' edges and budgets.

The scorer and the fix guidance both evaluate noise through ``directed_noise``,
so a suggested fix is checked with exactly the model that raised the finding.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.scoring.peaks import run_peaks
from scanner.board.roles import NetRoles
from scanner.rules import NetClass, Rules
from scanner.coupling.runs import CoupledRuns

#: a 10-90 % rise time is 80 % of the linear ramp's full duration
RAMP_PER_RISE = 1 / 0.8


def _expand(first: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Indices first[i] .. first[i] + counts[i] - 1 for every i, concatenated."""
    within = np.arange(int(counts.sum())) - np.repeat(np.cumsum(counts) - counts, counts)
    return np.repeat(first, counts) + within


def _starts(counts: np.ndarray) -> np.ndarray:
    return np.concatenate([[0], np.cumsum(counts)]).astype(np.int64)


@dataclass(frozen=True)
class DirectedRuns:
    """Each kept run once per direction (aggressor -> victim), with its pieces gathered in order."""

    run: np.ndarray  # index into CoupledRuns
    aggressor: np.ndarray  # net ids
    victim: np.ndarray
    swing_v: np.ndarray  # aggressor swing
    ramp_s: np.ndarray  # aggressor ramp (0-100 %)
    receiver_gain: np.ndarray  # 2 into a high-impedance receiver (either end)
    next_budget_v: np.ndarray
    fext_budget_v: np.ndarray
    piece_rows: np.ndarray  # rows of runs.pieces, run by run (CSR with piece_start)
    piece_start: np.ndarray

    def __len__(self) -> int:
        return len(self.run)

    def take(self, select: np.ndarray) -> "DirectedRuns":
        """The directed runs ``select`` (indices), with their pieces."""
        counts = np.diff(self.piece_start)[select]
        rows = self.piece_rows[_expand(self.piece_start[select], counts)]
        return DirectedRuns(self.run[select], self.aggressor[select], self.victim[select], self.swing_v[select],
                            self.ramp_s[select], self.receiver_gain[select], self.next_budget_v[select],
                            self.fext_budget_v[select], rows, _starts(counts))


def directed_runs(rules: Rules, roles: NetRoles, runs: CoupledRuns, keep: np.ndarray) -> DirectedRuns:
    idx = np.flatnonzero(keep)
    run = np.concatenate([idx, idx])
    aggressor = np.concatenate([runs.net_a[idx], runs.net_b[idx]]).astype(np.int64)
    victim = np.concatenate([runs.net_b[idx], runs.net_a[idx]]).astype(np.int64)
    classes = roles.classes
    agg_c, vic_c = roles.class_index[aggressor], roles.class_index[victim]
    table = lambda f: np.array([f(c) for c in classes], dtype=float)  # per-class values, then gathered
    next_budget = table(NetClass.next_budget_v)[vic_c]
    fext_budget = table(NetClass.fext_budget_v)[vic_c]
    rule_of = class_pair_rules([r for r in rules.class_pairs if r.has_budget], classes, agg_c, vic_c)
    for k, rule in enumerate(r for r in rules.class_pairs if r.has_budget):
        hit = rule_of == k
        if hit.any():
            nb, fb = rule.budgets_v(classes[int(vic_c[np.argmax(hit)])])
            next_budget[hit], fext_budget[hit] = nb, fb
    counts = np.diff(runs.run_start)[run]
    return DirectedRuns(
        run=run, aggressor=aggressor, victim=victim,
        swing_v=table(lambda c: c.swing_v)[agg_c],
        ramp_s=table(lambda c: c.rise_time_ns)[agg_c] * 1e-9 * RAMP_PER_RISE,
        receiver_gain=table(lambda c: c.receiver_gain)[vic_c],
        next_budget_v=next_budget, fext_budget_v=fext_budget,
        piece_rows=runs.piece_order[_expand(runs.run_start[run], counts)], piece_start=_starts(counts))


def class_pair_rules(pair_rules, classes, aggressor_class: np.ndarray, victim_class: np.ndarray) -> np.ndarray:
    """Per (aggressor class index, victim class index): the index in ``pair_rules`` of the rule for that pair,
    or -1. One lookup in a sorted table, so the cost grows with the rules plus the runs, not their product."""
    index: dict[str, list[int]] = {}
    for i, c in enumerate(classes):
        index.setdefault(c.name, []).append(i)
    n = len(classes)
    keys, which = [], []
    for k, rule in enumerate(pair_rules):
        for a in index.get(rule.aggressor_class, []):
            for v in index.get(rule.victim_class, []):
                keys.append(a * n + v)
                which.append(k)
    if not keys:
        return np.full(len(aggressor_class), -1, dtype=np.int64)
    order = np.argsort(keys)
    keys, which = np.asarray(keys, dtype=np.int64)[order], np.asarray(which, dtype=np.int64)[order]
    wanted = np.asarray(aggressor_class, dtype=np.int64) * n + np.asarray(victim_class, dtype=np.int64)
    at = np.minimum(np.searchsorted(keys, wanted), len(keys) - 1)
    return np.where(keys[at] == wanted, which[at], -1)


def directed_noise(d: DirectedRuns, kb, kf, length_m, velocity):
    """(NEXT V, FEXT V signed, fraction of budget used) per directed run, from per-piece values in d's piece order."""
    peaks = run_peaks(kb, kf, length_m, velocity, d.piece_start, d.swing_v, d.ramp_s, d.receiver_gain)
    used = np.maximum(np.abs(peaks.next_v) / d.next_budget_v, np.abs(peaks.fext_v) / d.fext_budget_v)
    return peaks.next_v, peaks.fext_v, used
