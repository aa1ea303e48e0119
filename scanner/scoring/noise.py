"""Predicted NEXT/FEXT per directed run, the differential-aggressor model and the budget status."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board.roles import NetRoles
from scanner.coupling.coefficients import PieceCoefficients
from scanner.coupling.runs import CoupledRuns
from scanner.rules import Rules
from scanner.scoring.directions import DirectedRuns, directed_noise
from scanner.scoring.results import status_code


@dataclass(frozen=True)
class Noise:
    """Per directed run: predicted peaks, the fraction of budget used, status (0 pass, 1 warn, 2 fail).

    ``alive`` is False for a differential member folded into its partner's entry (odd-mode model);
    ``own_next_v``/``own_fext_v`` are each directed run's own peaks before that model.
    """

    next_v: np.ndarray
    fext_v: np.ndarray
    used: np.ndarray
    status: np.ndarray
    kb_max: np.ndarray
    odd_mode: np.ndarray
    alive: np.ndarray
    own_next_v: np.ndarray
    own_fext_v: np.ndarray


def score_noise(rules: Rules, roles: NetRoles, d: DirectedRuns, runs: CoupledRuns, coefficients: PieceCoefficients) -> Noise:
    """Every kept run in both directions, in one vectorised pass."""
    kb, kf, velocity = coefficients.kb, coefficients.kf_s_per_m, coefficients.velocity_m_per_s
    rows = d.piece_rows
    next_v, fext_v, _ = directed_noise(d, kb[rows], kf[rows], runs.pieces.length_mm[rows] * 1e-3, velocity[rows])
    kb_max = np.maximum.reduceat(kb[rows], d.piece_start[:-1]) if len(rows) else np.zeros(0)
    return finish_noise(rules, roles, d, next_v, fext_v, kb_max)


def finish_noise(rules: Rules, roles: NetRoles, d: DirectedRuns, next_v, fext_v, kb_max) -> Noise:
    """Noise records from each directed run's own peaks: the differential-aggressor model, budget used, status.

    Fix guidance re-scores changed runs through here, so a fix is judged exactly as the finding was."""
    own_next_v, own_fext_v = next_v, fext_v
    odd = np.zeros(len(d), dtype=bool)
    alive = np.ones(len(d), dtype=bool)
    if rules.scan.differential_aggressor == "odd-mode":
        next_v, fext_v, used, odd, alive = _odd_mode(roles, d, next_v, fext_v)
    else:
        used = np.maximum(np.abs(next_v) / d.next_budget_v, np.abs(fext_v) / d.fext_budget_v)
    return Noise(next_v, fext_v, used, status_code(used, rules.scan.warn_fraction), kb_max, odd, alive,
                 own_next_v, own_fext_v)


def odd_members(roles: NetRoles, d: DirectedRuns) -> np.ndarray:
    """Per directed run: its group of differential-aggressor members on one victim (odd-mode model);
    runs that are not combined get a group of their own."""
    partner = roles.partner[d.aggressor]
    positive = np.where(roles.polarity[d.aggressor] > 0, d.aggressor, partner)
    key = np.where(partner >= 0, positive.astype(np.int64) << np.int64(32) | d.victim, -1 - np.arange(len(d)))
    return np.unique(key, return_inverse=True)[1].ravel()


def _odd_mode(roles: NetRoles, d: DirectedRuns, next_v, fext_v):
    """Both members of a differential aggressor drive opposite edges, so on one victim their
    contributions subtract. Approximation: the members' peaks are taken as coincident in time.
    The combined figure is kept on the positive member's entry; the negative member's is folded in."""
    member = roles.partner[d.aggressor] >= 0
    sign = np.where(roles.polarity[d.aggressor] > 0, 1.0, -1.0)
    group = odd_members(roles, d)
    n_groups = int(group.max()) + 1 if len(group) else 0
    next_sum = np.bincount(group, weights=sign * next_v, minlength=n_groups)
    fext_sum = np.bincount(group, weights=sign * fext_v, minlength=n_groups)
    size = np.bincount(group, minlength=n_groups)
    combined = member & (size[group] == 2)
    next_v = np.where(combined, np.abs(next_sum[group]), next_v)
    fext_v = np.where(combined, fext_sum[group], fext_v)
    alive = ~combined | (sign > 0)
    used = np.maximum(np.abs(next_v) / d.next_budget_v, np.abs(fext_v) / d.fext_budget_v)
    return next_v, fext_v, used, combined, alive
