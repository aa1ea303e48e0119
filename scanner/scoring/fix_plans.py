"""Fix plans: which coupled runs to change so that every warn or fail victim passes, and how.

Per victim that warns or fails, its couplings are taken worst first: every coupling that warns
or fails on its own, then more until the ones left alone use at most REST_SHARE of the pass limit
(``warn_fraction``, less FIX_MARGIN). The room left is shared among the chosen couplings in
proportion to what each uses now, and each gets the spacing, length or layer that brings it
within its share (``fixes.solve_rows``) — and within the pass limit of its own finding (a class
pair can be tighter). A victim failing from two neighbours thus gets both changed. Since the
victim's total never exceeds the sum of its couplings, any mix of the offered changes on the
chosen runs brings the victim within budget.

Every offered change is then re-scored with the scan's own model: rounded the safe way (spacing
up, length down), each run changed in both directions, all victims summed again. A change that
leaves a planned victim short of passing, or makes a passing victim worse than pass, is
withdrawn. A run already at the offered spacing is never told to move to it.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from scanner.board.roles import NetRoles
from scanner.coupling.coefficients import CouplingLookup
from scanner.rules import Rules
from scanner.scoring.directions import DirectedRuns
from scanner.scoring.fixes import RowFixes, peaks_at_layer, peaks_at_length, peaks_at_spacing, solve_rows
from scanner.scoring.noise import Noise, finish_noise, odd_members
from scanner.scoring.totals import VictimSums, victim_sums

#: a fix aims this far inside the pass limit, so rounding and interpolation keep it there
FIX_MARGIN = 0.98
#: couplings left unchanged may use at most this share of a victim's pass limit
REST_SHARE = 0.5
#: offered spacings are rounded up and lengths down to these steps (mm)
SPACING_STEP_MM = 0.001
LENGTH_STEP_MM = 0.1
#: rounds of withdrawing changes that fail the re-scoring
VERIFY_ROUNDS = 4
OPTIONS = ("spacing", "length", "layer")


@dataclass(frozen=True)
class FixPlans:
    """``run_fix``: per run, the change offered (report.json ``fix``); ``victim_runs``: per victim net id, the
    runs its plan changes, worst first; ``complete``: whether every one of them has a change offered;
    ``each_needed``: whether no single one of them, even removed entirely, would bring the victim within
    budget (a victim failing from two neighbours)."""

    run_fix: dict[int, dict]
    victim_runs: dict[int, list[int]]
    complete: dict[int, bool]
    each_needed: dict[int, bool]


@dataclass(frozen=True)
class _Targets:
    rows: np.ndarray  # directed runs to change
    next_budget_v: np.ndarray  # their targets
    fext_budget_v: np.ndarray
    victim_runs: dict[int, list[int]]
    each_needed: dict[int, bool]


def plan_fixes(rules: Rules, roles: NetRoles, d: DirectedRuns, noise: Noise, sums: VictimSums, runs,
               lookup: CouplingLookup, board, coefficients, broadside_runs: np.ndarray) -> FixPlans:
    targets = _targets(rules, roles, d, noise, sums)
    if len(targets.rows) == 0:
        return FixPlans({}, {}, {}, {})
    sub = replace(d.take(targets.rows), next_budget_v=targets.next_budget_v, fext_budget_v=targets.fext_budget_v)
    solved = solve_rows(sub, runs, lookup, coefficients, broadside_runs)
    values = _rounded_and_checked(sub, solved, runs, lookup, coefficients)
    per_run = _per_run(sub.run, values)
    context = (rules, roles, d, noise, sums, runs, lookup, coefficients)
    for option in OPTIONS:
        _withdraw_failing(option, per_run, targets.victim_runs, context)
    run_fix = {r: _fix_record(r, per_run, solved, sub, broadside_runs, board, lookup) for r in per_run}
    complete = {v: all(_offered(run_fix[r]) for r in rs) for v, rs in targets.victim_runs.items()}
    return FixPlans(run_fix, targets.victim_runs, complete, targets.each_needed)


def _targets(rules: Rules, roles: NetRoles, d: DirectedRuns, noise: Noise, sums: VictimSums) -> _Targets:
    """Directed runs to change and the budgets each must meet (module docstring)."""
    limit = rules.scan.warn_fraction * FIX_MARGIN
    rows, group = sums.rows, sums.group
    next_share = np.abs(noise.next_v[rows]) / sums.next_budget_v[group]
    fext_share = np.abs(noise.fext_v[rows]) / sums.fext_budget_v[group]
    share_used = np.maximum(next_share, fext_share)
    order = np.lexsort((-share_used, group))
    bounds = np.searchsorted(group[order], np.arange(len(sums) + 1))
    members = _member_rows(roles, d, noise)
    out_rows, out_next, out_fext, victim_runs, each_needed = [], [], [], {}, {}
    for g in np.flatnonzero(sums.status > 0).tolist():
        k = order[bounds[g]:bounds[g + 1]]
        used = share_used[k]
        chosen = noise.used[rows[k]] >= rules.scan.warn_fraction
        rest = float(used[~chosen].sum())
        for i in range(len(k)):
            if rest <= REST_SHARE * limit:
                break
            if not chosen[i]:
                chosen[i] = True
                rest -= float(used[i])
        if not chosen.any() or used[chosen].sum() <= 0:
            continue
        share = (limit - max(rest, 0.0)) * used[chosen] / used[chosen].sum()
        plan_runs = []
        for row, part in zip(rows[k[chosen]].tolist(), share.tolist()):
            own = members.get(row, [row])
            for m in own:
                out_rows.append(m)
                out_next.append(min(part * sums.next_budget_v[g], limit * d.next_budget_v[row]) / len(own))
                out_fext.append(min(part * sums.fext_budget_v[g], limit * d.fext_budget_v[row]) / len(own))
                plan_runs.append(int(d.run[m]))
        victim_runs[int(sums.net[g])] = list(dict.fromkeys(plan_runs))
        without_one = np.maximum(next_share[k].sum() - next_share[k][chosen], fext_share[k].sum() - fext_share[k][chosen])
        each_needed[int(sums.net[g])] = bool(chosen.sum() > 1 and np.all(without_one >= rules.scan.warn_fraction))
    return _Targets(np.asarray(out_rows, dtype=np.int64), np.asarray(out_next), np.asarray(out_fext), victim_runs,
                    each_needed)


def _member_rows(roles: NetRoles, d: DirectedRuns, noise: Noise) -> dict[int, list[int]]:
    """For a combined differential aggressor (odd-mode model): its entry's directed run -> both members' runs."""
    if not noise.odd_mode.any():
        return {}
    group = odd_members(roles, d)
    combined = np.flatnonzero(noise.odd_mode)
    out: dict[int, list[int]] = {}
    for g in np.unique(group[combined]).tolist():
        rows = combined[group[combined] == g].tolist()
        for r in rows:
            if noise.alive[r]:
                out[r] = rows
    return out


def _rounded_and_checked(sub: DirectedRuns, solved: RowFixes, runs, lookup, coefficients) -> dict[str, np.ndarray]:
    """Per targeted directed run: rounded spacing (mm), length factor and layer; NaN / -1 where the rounded
    value does not meet the target when re-scored, or asks for a gap the run already has."""
    coupled = runs.coupled_length_mm[sub.run]
    spacing = np.ceil(np.round(solved.spacing_mm / SPACING_STEP_MM, 6)) * SPACING_STEP_MM
    spacing = np.where(spacing > runs.spacing_min_mm[sub.run] + 0.5 * SPACING_STEP_MM, spacing, np.nan)
    length = np.floor(np.round(solved.length_factor * coupled / LENGTH_STEP_MM, 6)) * LENGTH_STEP_MM
    length = np.where(length > 0, length, np.nan)
    ok_spacing = peaks_at_spacing(sub, runs, lookup, np.nan_to_num(spacing, nan=1.0))[2] <= 1.0
    ok_length = peaks_at_length(sub, runs, coefficients, np.nan_to_num(length / coupled, nan=1.0))[2] <= 1.0
    return {"spacing": np.where(ok_spacing, spacing, np.nan),
            "length": np.where(ok_length, length, np.nan),
            "layer": np.where(solved.layer_used <= 1.0, solved.layer, -1).astype(float)}


def _per_run(run_of_row: np.ndarray, values: dict[str, np.ndarray]) -> dict[int, dict[str, float | None]]:
    """One value per run and option, meeting every targeted direction of the run (None when one has none)."""
    out: dict[int, dict[str, float | None]] = {}
    pick = {"spacing": max, "length": min, "layer": lambda v: v[0] if len(set(v)) == 1 else -1.0}
    for r in np.unique(run_of_row).tolist():
        mine = run_of_row == r
        entry = {}
        for option, vals in values.items():
            v = vals[mine].tolist()
            bad = any(np.isnan(x) or (option == "layer" and x < 0) for x in v)
            entry[option] = None if bad else float(pick[option](v))
        out[int(r)] = entry
    return out


def _withdraw_failing(option: str, per_run: dict, victim_runs: dict[int, list[int]], context) -> None:
    """Re-score every run that offers ``option`` with it applied, in both directions, and sum the victims
    again; withdraw the option from the plans it leaves short and from runs that harm a passing victim."""
    rules, roles, d, noise, sums, runs, lookup, coefficients = context
    before = dict(zip(sums.net.tolist(), sums.status.tolist()))
    for _ in range(VERIFY_ROUNDS):
        changed = {r: e[option] for r, e in per_run.items() if e[option] is not None}
        if not changed:
            return
        rows = np.flatnonzero(np.isin(d.run, list(changed)))
        sub = d.take(rows)
        value = np.array([changed[int(r)] for r in sub.run])
        next_v, fext_v = noise.own_next_v.copy(), noise.own_fext_v.copy()
        next_v[rows], fext_v[rows] = _peaks_with(option, sub, value, runs, lookup, coefficients)
        after = victim_sums(rules, roles, d, finish_noise(rules, roles, d, next_v, fext_v, noise.kb_max))
        status = dict(zip(after.net.tolist(), after.status.tolist()))
        drop = set()
        for victim, plan in victim_runs.items():
            if all(r in changed for r in plan) and status.get(victim, 0) > 0:
                drop.update(plan)
        for victim, s in status.items():
            if s > before.get(victim, 0):
                drop.update(int(r) for r in sub.run[d.victim[rows] == victim])
        if not drop:
            return
        for r in drop & set(changed):
            per_run[r][option] = None


def _peaks_with(option: str, sub: DirectedRuns, value: np.ndarray, runs, lookup, coefficients):
    if option == "spacing":
        return peaks_at_spacing(sub, runs, lookup, value)[:2]
    if option == "length":
        return peaks_at_length(sub, runs, coefficients, value / runs.coupled_length_mm[sub.run])[:2]
    return peaks_at_layer(sub, runs, lookup, value)[:2]


def _fix_record(run: int, per_run: dict, solved: RowFixes, sub: DirectedRuns, broadside_runs, board, lookup) -> dict:
    entry = per_run[run]
    layer = entry["layer"]
    fix = {"spacing_needed_mm": None if entry["spacing"] is None else round(entry["spacing"], 3),
           "max_length_mm": None if entry["length"] is None else round(entry["length"], 1),
           "alternative_layer": None if layer is None else {
               "layer": board.layers[int(layer)].name, "structure": lookup.envs[int(layer)].structure}}
    notes = []
    if broadside_runs[run]:
        notes.append("the run couples broadside to the neighbouring signal layer: offset the traces in plan view, "
                     "shorten the overlap, or put a plane between the layers")
    elif entry["spacing"] is None:
        reach = np.nanmin(solved.reach_mm[sub.run == run])
        notes.append(f"no uniform spacing up to {reach:.3f} mm meets the budget" if np.isfinite(reach)
                     else "no uniform spacing meets the budget")
    if entry["length"] is None:
        notes.append("no shorter coupled length meets the budget")
    if notes:
        fix["note"] = "; ".join(notes)
    return fix


def _offered(fix: dict) -> bool:
    return any(fix[k] is not None for k in ("spacing_needed_mm", "max_length_mm", "alternative_layer"))
