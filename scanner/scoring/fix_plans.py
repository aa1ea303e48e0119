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
    reach = np.full(len(runs), np.inf)
    np.minimum.at(reach, sub.run, np.nan_to_num(solved.reach_mm, nan=np.inf))
    run_fix = {r: _fix_record(r, per_run, reach[r], broadside_runs, board, lookup) for r in per_run}
    complete = {v: all(_offered(run_fix[r]) for r in rs) for v, rs in targets.victim_runs.items()}
    return FixPlans(run_fix, targets.victim_runs, complete, targets.each_needed)


def _targets(rules: Rules, roles: NetRoles, d: DirectedRuns, noise: Noise, sums: VictimSums) -> _Targets:
    """Directed runs to change and the budgets each must meet (module docstring), for all victims at once."""
    limit = rules.scan.warn_fraction * FIX_MARGIN
    rows, group = sums.rows, sums.group
    next_share = np.abs(noise.next_v[rows]) / sums.next_budget_v[group]
    fext_share = np.abs(noise.fext_v[rows]) / sums.fext_budget_v[group]
    share_used = np.maximum(next_share, fext_share) * sums.counted  # a waived contribution needs no change
    n = len(sums)
    # per victim, couplings worst first; only victims that warn or fail make a plan
    order = np.lexsort((-share_used, group))
    order = order[sums.status[group[order]] > 0]
    g, used = group[order], share_used[order]
    must = (noise.used[rows[order]] >= rules.scan.warn_fraction) & sums.counted[order]
    optional = np.where(must, 0.0, used)
    rest_all = np.bincount(g, weights=optional, minlength=n)
    # an optional coupling joins while the ones left alone use more than REST_SHARE of the limit
    before = _cumsum_within(g, optional) - optional
    chosen = must | ((rest_all[g] - before > REST_SHARE * limit) & (used > 0))
    rest = rest_all - np.bincount(g, weights=optional * chosen, minlength=n)
    chosen_sum = np.bincount(g, weights=used * chosen, minlength=n)
    planned = chosen & (chosen_sum[g] > 0)
    part = np.where(planned, (limit - np.maximum(rest, 0.0))[g] * used / np.where(chosen_sum[g] > 0, chosen_sum[g], 1), 0)
    # no single chosen coupling, even removed, brings the victim within the pass limit
    next_all = np.bincount(group, weights=next_share * sums.counted, minlength=n)
    fext_all = np.bincount(group, weights=fext_share * sums.counted, minlength=n)
    without = np.maximum(next_all[g] - next_share[order], fext_all[g] - fext_share[order])
    count = np.bincount(g, weights=planned, minlength=n)
    short = np.bincount(g, weights=planned & (without < rules.scan.warn_fraction), minlength=n)
    each = (count > 1) & (short == 0)

    sel = np.flatnonzero(planned)
    row_sel, g_sel, part_sel = rows[order[sel]], g[sel], part[sel]
    members = _member_rows(roles, d, noise)
    out_rows, out_next, out_fext, victim_runs = [], [], [], {}
    for row, gg, pp in zip(row_sel.tolist(), g_sel.tolist(), part_sel.tolist()):
        own = members.get(row, [row])
        for m in own:
            out_rows.append(m)
            out_next.append(min(pp * sums.next_budget_v[gg], limit * d.next_budget_v[row]) / len(own))
            out_fext.append(min(pp * sums.fext_budget_v[gg], limit * d.fext_budget_v[row]) / len(own))
            victim_runs.setdefault(int(sums.net[gg]), []).append(int(d.run[m]))
    victim_runs = {v: list(dict.fromkeys(r)) for v, r in victim_runs.items()}
    each_needed = {int(sums.net[k]): bool(each[k]) for k in np.unique(g_sel).tolist()}
    return _Targets(np.asarray(out_rows, dtype=np.int64), np.asarray(out_next), np.asarray(out_fext), victim_runs,
                    each_needed)


def _cumsum_within(group: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Cumulative sums restarting at each new value of ``group`` (rows sorted by group)."""
    total = np.cumsum(values)
    first = np.r_[True, group[1:] != group[:-1]] if len(group) else np.zeros(0, dtype=bool)
    offset = np.maximum.accumulate(np.where(first, np.arange(len(group)), 0)) if len(group) else group
    return total - (total[offset] - values[offset])


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
    """One value per run and option, meeting every targeted direction of the run (None when one has none):
    the widest spacing, the shortest length, the layer when all agree."""
    runs, inverse = np.unique(run_of_row, return_inverse=True)
    inverse = inverse.ravel()
    n = len(runs)

    def per_run(vals, ufunc, start):
        out = np.full(n, start)
        ufunc.at(out, inverse, np.where(np.isnan(vals), start, vals))
        missing = np.bincount(inverse, weights=np.isnan(vals), minlength=n) > 0
        return np.where(missing, np.nan, out)

    spacing = per_run(values["spacing"], np.maximum, -np.inf)
    length = per_run(values["length"], np.minimum, np.inf)
    layer = np.where(values["layer"] < 0, np.nan, values["layer"])
    low, high = per_run(layer, np.minimum, np.inf), per_run(layer, np.maximum, -np.inf)
    layer = np.where(low == high, low, np.nan)
    none = lambda v: None if np.isnan(v) else float(v)  # noqa: E731
    return {int(r): {"spacing": none(a), "length": none(b), "layer": none(c)}
            for r, a, b, c in zip(runs.tolist(), spacing.tolist(), length.tolist(), layer.tolist())}


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


def _fix_record(run: int, per_run: dict, reach_mm: float, broadside_runs, board, lookup) -> dict:
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
        notes.append(f"no uniform spacing up to {reach_mm:.3f} mm meets the budget" if np.isfinite(reach_mm)
                     else "no uniform spacing meets the budget")
    if entry["length"] is None:
        notes.append("no shorter coupled length meets the budget")
    if notes:
        fix["note"] = "; ".join(notes)
    return fix


def _offered(fix: dict) -> bool:
    return any(fix[k] is not None for k in ("spacing_needed_mm", "max_length_mm", "alternative_layer"))
