"""Per-victim sums over all aggressors, and the victim's status consistent with its findings.

A victim's total is checked against its class's budgets, on the rules' basis (worst-case
sum of peak magnitudes, or root-sum-square). A single finding can be held to a tighter
class-pair budget; the victim's status is the worse of the two, so a victim never passes
while one of its findings warns or fails. Contributions a waiver covers are left out of the
totals and the status; what they would have made is kept beside them.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board.roles import NetRoles
from scanner.rules import NetClass, Rules
from scanner.scoring.directions import DirectedRuns
from scanner.scoring.noise import Noise
from scanner.scoring.results import status_code


@dataclass(frozen=True)
class VictimSums:
    """Per victim (arrays indexed like ``net``); ``rows`` are the alive directed runs, ``group`` their victim,
    ``counted`` whether a row counts (no waiver covers it); ``used_with_waived`` had every row counted."""

    net: np.ndarray
    rows: np.ndarray
    group: np.ndarray
    next_worst_v: np.ndarray
    fext_worst_v: np.ndarray
    next_rss_v: np.ndarray
    fext_rss_v: np.ndarray
    next_budget_v: np.ndarray
    fext_budget_v: np.ndarray
    swing_v: np.ndarray
    total_used: np.ndarray
    finding_used: np.ndarray  # the worst single finding, on its own budgets
    used: np.ndarray
    status: np.ndarray
    counted: np.ndarray
    used_with_waived: np.ndarray

    def __len__(self) -> int:
        return len(self.net)


def victim_sums(rules: Rules, roles: NetRoles, d: DirectedRuns, noise: Noise,
                covered: np.ndarray | None = None) -> VictimSums:
    """Sums per victim; directed runs ``covered`` by a waiver are left out of the totals and the status."""
    rows = np.flatnonzero(noise.alive)
    nets, group = np.unique(d.victim[rows], return_inverse=True)
    group = group.ravel()
    n = len(nets)
    counted = np.ones(len(rows), dtype=bool) if covered is None else ~covered[rows]
    cls = roles.class_index[nets]
    per_class = lambda f: np.array([f(c) for c in roles.classes], dtype=float)[cls]  # noqa: E731
    next_budget, fext_budget = per_class(NetClass.next_budget_v), per_class(NetClass.fext_budget_v)
    next_abs, fext_abs = np.abs(noise.next_v[rows]), np.abs(noise.fext_v[rows])

    def totals(weight):
        worst = (np.bincount(group, weights=next_abs * weight, minlength=n),
                 np.bincount(group, weights=fext_abs * weight, minlength=n))
        rss = (np.sqrt(np.bincount(group, weights=next_abs ** 2 * weight, minlength=n)),
               np.sqrt(np.bincount(group, weights=fext_abs ** 2 * weight, minlength=n)))
        basis = worst if rules.scan.budget_basis == "worst-case" else rss
        finding = np.zeros(n)
        np.maximum.at(finding, group, noise.used[rows] * weight)
        total = np.maximum(basis[0] / next_budget, basis[1] / fext_budget)
        return worst, rss, total, finding

    (worst_next, worst_fext), (rss_next, rss_fext), total, finding = totals(counted)
    used = np.maximum(total, finding)
    used_all = np.maximum(*totals(np.ones(len(rows), dtype=bool))[2:]) if not counted.all() else used
    return VictimSums(nets, rows, group, worst_next, worst_fext, rss_next, rss_fext, next_budget, fext_budget,
                      per_class(lambda c: c.swing_v), total, finding, used,
                      status_code(used, rules.scan.warn_fraction), counted, used_all)
