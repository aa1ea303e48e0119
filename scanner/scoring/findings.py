"""Finding records: one hotspot per coupled run (both directions), the exact cross-check, per-victim totals."""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from scanner.board.roles import NetRoles
from scanner.coupling.runs import CoupledRuns
from scanner.rules import Rules
from scanner.scoring.directions import DirectedRuns
from scanner.scoring.exact_check import EXACT_CHECKS, exact_peaks
from scanner.scoring.fix_plans import FixPlans
from scanner.scoring.noise import Noise
from scanner.scoring.results import (MM_DIGITS, MV_DIGITS, PCT_DIGITS, SPACING_DIGITS, STATUS_NAMES, Direction,
                                     Hotspot, VictimTotal, finding_id, rounded, status_code)
from scanner.scoring.totals import VictimSums
from scanner.signoff.waiver_match import WaiverMatch

#: Kb above which weak-coupling estimates lose accuracy and the exact simulation is run beside them
STRONG_KB = 0.1


def listed_runs(rules: Rules, d: DirectedRuns, noise: Noise, plans: FixPlans, n_runs: int) -> np.ndarray:
    """Runs to list, worse direction's budget used first: every run with a warn or fail direction or a
    change in a fix plan, and passing runs from ``list_floor`` up."""
    alive = np.flatnonzero(noise.alive)
    worst = np.full(n_runs, -1.0)
    np.maximum.at(worst, d.run[alive], noise.used[alive])
    wanted = (worst >= rules.scan.list_floor) | (worst >= rules.scan.warn_fraction)
    wanted[list(plans.run_fix)] = True
    runs = np.flatnonzero(wanted & (worst >= 0))
    return runs[np.argsort(-worst[runs], kind="stable")]


def hotspot_records(board, roles: NetRoles, envs, runs: CoupledRuns, d: DirectedRuns, noise: Noise,
                    listed: np.ndarray, plans: FixPlans, broadside_runs: np.ndarray) -> list[Hotspot]:
    """Hotspot records for the listed runs, ranked in the given order (columns built in numpy)."""
    rank_of = np.full(len(runs), -1)
    rank_of[listed] = np.arange(len(listed))
    j = np.flatnonzero(noise.alive & (rank_of[d.run] >= 0))
    j = j[np.lexsort((-noise.used[j], rank_of[d.run[j]]))]  # run by run, worse direction first
    directions = _directions(board, roles, d, noise, j)
    per_run: dict[int, list[Direction]] = {}
    for row, direction in zip(j.tolist(), directions):
        per_run.setdefault(int(d.run[row]), []).append(direction)

    r = listed
    names = board.nets
    layer_text = {}
    for mask in np.unique(runs.layer_mask[r]):
        ids = [k for k in range(int(mask).bit_length()) if int(mask) >> k & 1]
        kinds = {envs[k].structure for k in ids}
        layer_text[int(mask)] = ([board.layers[k].name for k in ids], kinds.pop() if len(kinds) == 1 else "mixed")
    main_layer = [board.layers[k].name for k in runs.main_layer[r].tolist()]
    x, y = _col(runs.worst_x_mm[r], MM_DIGITS), _col(runs.worst_y_mm[r], MM_DIGITS)
    ids = [finding_id(names[a], names[b], m, xx, yy)
           for a, b, m, xx, yy in zip(runs.net_a[r].tolist(), runs.net_b[r].tolist(), main_layer, x, y)]
    id_of_run = dict(zip(r.tolist(), ids))
    kb_max = np.zeros(len(runs))
    np.maximum.at(kb_max, d.run, noise.kb_max)
    partners: dict[int, set[int]] = {}
    for plan in plans.victim_runs.values():
        for run in plan:
            partners.setdefault(run, set()).update(plan)
    columns = zip(
        r.tolist(), ids, main_layer, [layer_text[m] for m in runs.layer_mask[r].tolist()],
        broadside_runs[r].tolist(), _col(runs.coupled_length_mm[r], MM_DIGITS),
        _col(runs.spacing_min_mm[r], SPACING_DIGITS), _col(runs.spacing_mean_mm[r], SPACING_DIGITS), x, y,
        zip(*(_col(getattr(runs, f"worst_{k}_mm")[r], MM_DIGITS) for k in ("x0", "y0", "x1", "y1"))),
        zip(*(_col(getattr(runs, f"{k}_mm")[r], MM_DIGITS) for k in ("x_min", "y_min", "x_max", "y_max"))),
        _col(kb_max[r], 5))
    out = []
    for rank, (run, fid, main, (layers, kind), broadside, length, s_min, s_mean, xx, yy, extent, bbox,
               kb) in enumerate(columns, 1):
        both = per_run[run]
        out.append(Hotspot(
            rank=rank, id=fid, status=both[0].status, budget_used_pct=both[0].budget_used_pct, layer=main,
            layers=layers, structure=f"{kind} with broadside coupling" if broadside else kind,
            coupled_length_mm=length, min_spacing_mm=s_min, mean_spacing_mm=s_mean, x_mm=xx, y_mm=yy,
            extent_mm=list(extent), bbox_mm=list(bbox), kb_max=kb, strong_coupling=kb > STRONG_KB,
            directions=both, run=run, fix=_run_fix(run, plans, partners, id_of_run)))
    return out


def _col(values, digits: int) -> list[float]:
    return np.round(np.asarray(values, dtype=float), digits).tolist()


def _directions(board, roles: NetRoles, d: DirectedRuns, noise: Noise, j: np.ndarray) -> list[Direction]:
    agg, vic = d.aggressor[j], d.victim[j]
    classes = roles.classes
    agg_c, vic_c = roles.class_index[agg], roles.class_index[vic]
    vic_swing = np.array([c.swing_v for c in classes])[vic_c]
    partner = roles.partner[agg]
    odd = noise.odd_mode[j]
    model = np.where(partner < 0, "single", np.where(odd, "differential (odd mode)", "differential (two lines)"))
    names = board.nets
    aggressor_names = [names[a] if not o else f"{names[a]} / {names[p]}"
                       for a, p, o in zip(agg.tolist(), partner.tolist(), odd.tolist())]
    rows = zip(j.tolist(), [STATUS_NAMES[k] for k in noise.status[j].tolist()], [names[v] for v in vic.tolist()],
               aggressor_names, [classes[k] for k in agg_c.tolist()], [classes[k] for k in vic_c.tolist()],
               model.tolist(), _col(noise.next_v[j] * 1e3, MV_DIGITS), _col(noise.fext_v[j] * 1e3, MV_DIGITS),
               _col(100 * noise.next_v[j] / vic_swing, PCT_DIGITS), _col(100 * noise.fext_v[j] / vic_swing, PCT_DIGITS),
               _col(d.next_budget_v[j] * 1e3, MV_DIGITS), _col(d.fext_budget_v[j] * 1e3, MV_DIGITS),
               _col(100 * noise.used[j], PCT_DIGITS))
    return [Direction(status=st, victim=victim, aggressor=aggressor, victim_class=vc.name, aggressor_class=ac.name,
                      aggressor_model=mdl, next_mv=n_mv, fext_mv=f_mv, next_pct=n_pct, fext_pct=f_pct,
                      next_budget_mv=n_budget, fext_budget_mv=f_budget, budget_used_pct=used,
                      rise_time_ns=ac.rise_time_ns, swing_v=ac.swing_v, termination=vc.termination,
                      victim_swing_v=vc.swing_v, index=jj)
            for jj, st, victim, aggressor, ac, vc, mdl, n_mv, f_mv, n_pct, f_pct, n_budget, f_budget, used in rows]


def _run_fix(run: int, plans: FixPlans, partners: dict[int, set[int]], id_of_run: dict[int, str]) -> dict | None:
    """The run's change, with the ids of the runs that share a victim's plan with it."""
    fix = plans.run_fix.get(run)
    if fix is None:
        return None
    return dict(fix, together_with=sorted(id_of_run[r] for r in partners.get(run, set()) - {run}))


def with_exact_checks(hotspots: list[Hotspot], runs, envs, broadside_runs: np.ndarray) -> list[Hotspot]:
    """The exact line simulation of the worse direction for the worst strong-coupling findings (single
    aggressors, same-layer runs)."""
    out = list(hotspots)
    todo = [i for i, h in enumerate(out) if h.strong_coupling and h.aggressor_model != "differential (odd mode)"
            and not broadside_runs[h.run]]
    for i in todo[:EXACT_CHECKS]:
        h = out[i]
        worse = h.directions[0]
        next_v, fext_v = exact_peaks(runs, h.run, envs, worse.rise_time_ns, worse.swing_v, worse.termination)
        used = max(abs(next_v) * 1e3 / worse.next_budget_mv, abs(fext_v) * 1e3 / worse.fext_budget_mv)
        exact = {"next_mv": rounded(next_v * 1e3, MV_DIGITS), "fext_mv": rounded(fext_v * 1e3, MV_DIGITS),
                 "budget_used_pct": rounded(100 * used, PCT_DIGITS)}
        out[i] = replace(h, directions=[replace(worse, exact=exact)] + h.directions[1:])
    return out


def victim_totals(board, rules: Rules, roles: NetRoles, runs: CoupledRuns, d: DirectedRuns, noise: Noise,
                  sums: VictimSums, hotspots: list[Hotspot], plans: FixPlans,
                  waived: WaiverMatch | None = None) -> list[VictimTotal]:
    """Per victim over all its aggressors: worst-case sum and root-sum-square, consistent status, where each
    aggressor couples, and the plan that brings a warn or fail victim within budget.

    Contributions ``waived`` covers (per directed run; waivers from ``rules``) are left out of the totals and
    the status (``sums``), and reported beside them."""
    if len(sums) == 0:
        return []
    rows, group = sums.rows, sums.group
    id_of_run = {h.run: h.id for h in hotspots}
    order = np.lexsort((-noise.used[rows], group))
    bounds = np.searchsorted(group[order], np.arange(len(sums) + 1))
    names = board.nets
    # every aggressor record built column-wise once, then handed out victim by victim
    m = rows[order]
    a, r = d.aggressor[m], d.run[m]
    partner = roles.partner[a]
    layer_names = [layer.name for layer in board.layers]
    records = [{"aggressor": names[ai] if not odd else f"{names[ai]} / {names[pi]}", "budget_used_pct": used,
                "next_mv": n_mv, "fext_mv": f_mv, "layer": layer_names[li], "x_mm": x, "y_mm": y,
                "finding": id_of_run.get(ri)}
               for ai, pi, odd, used, n_mv, f_mv, li, x, y, ri in zip(
                   a.tolist(), partner.tolist(), noise.odd_mode[m].tolist(), _col(100 * noise.used[m], PCT_DIGITS),
                   _col(1e3 * noise.next_v[m], MV_DIGITS), _col(1e3 * noise.fext_v[m], MV_DIGITS),
                   runs.main_layer[r].tolist(), _col(runs.worst_x_mm[r], MM_DIGITS),
                   _col(runs.worst_y_mm[r], MM_DIGITS), r.tolist())]
    out = []
    for g in np.argsort(-sums.used, kind="stable").tolist():
        net = int(sums.net[g])
        swing_mv = 1e3 * sums.swing_v[g]
        aggressors = records[bounds[g]:bounds[g + 1]]
        gone = m[bounds[g]:bounds[g + 1]][~sums.counted[order[bounds[g]:bounds[g + 1]]]]
        extra = {} if len(gone) == 0 else {
            "waived_aggressors": [names[int(x)] for x in d.aggressor[gone]],
            "waivers": list(dict.fromkeys(rules.waivers[w].id for w in waived.waiver[gone].tolist())),
            "budget_used_with_waived_pct": rounded(100 * sums.used_with_waived[g], PCT_DIGITS),
            "status_with_waived": STATUS_NAMES[int(status_code(sums.used_with_waived[g], rules.scan.warn_fraction))]}
        out.append(VictimTotal(
            net=names[net], net_class=roles.classes[int(roles.class_index[net])].name,
            status=STATUS_NAMES[int(sums.status[g])], budget_used_pct=rounded(100 * sums.used[g], PCT_DIGITS),
            total_used_pct=rounded(100 * sums.total_used[g], PCT_DIGITS),
            next_worst_pct=rounded(1e5 * sums.next_worst_v[g] / swing_mv, PCT_DIGITS),
            fext_worst_pct=rounded(1e5 * sums.fext_worst_v[g] / swing_mv, PCT_DIGITS),
            next_rss_pct=rounded(1e5 * sums.next_rss_v[g] / swing_mv, PCT_DIGITS),
            fext_rss_pct=rounded(1e5 * sums.fext_rss_v[g] / swing_mv, PCT_DIGITS),
            next_worst_mv=rounded(1e3 * sums.next_worst_v[g], MV_DIGITS),
            fext_worst_mv=rounded(1e3 * sums.fext_worst_v[g], MV_DIGITS),
            next_budget_mv=rounded(1e3 * sums.next_budget_v[g], MV_DIGITS),
            fext_budget_mv=rounded(1e3 * sums.fext_budget_v[g], MV_DIGITS),
            aggressors=aggressors, fix=_victim_fix(net, plans, id_of_run), **extra))
    return out


def _victim_fix(net: int, plans: FixPlans, id_of_run: dict[int, str]) -> dict | None:
    plan = plans.victim_runs.get(net)
    if not plan:
        return None
    fix = {"findings": [id_of_run[r] for r in plan], "complete": plans.complete[net],
           "each_needed": plans.each_needed[net]}
    notes = []
    if plans.each_needed[net]:
        notes.append("both couplings need changing: neither alone brings this victim within budget" if len(plan) == 2
                     else f"all {len(plan)} couplings need changing: none alone brings this victim within budget")
    elif len(plan) > 1:
        notes.append(f"change these {len(plan)} couplings together")
    if not plans.complete[net]:
        notes.append("at least one of them has no change the model confirms: reroute it")
    if notes:
        fix["note"] = "; ".join(notes)
    return fix
