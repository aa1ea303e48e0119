"""Finding records: hotspots for the listed directed runs, the exact cross-check, per-victim totals."""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from scanner.board.roles import NetRoles
from scanner.coupling.runs import CoupledRuns
from scanner.rules import Rules
from scanner.scoring.directions import DirectedRuns
from scanner.scoring.exact_check import EXACT_CHECKS, exact_peaks
from scanner.scoring.noise import STATUS_NAMES, Noise
from scanner.scoring.results import Hotspot, VictimTotal, rounded, status_for
from scanner.signoff.waiver_match import WaiverMatch

#: Kb above which weak-coupling estimates lose accuracy and the exact simulation is run beside them
STRONG_KB = 0.1


def hotspot_records(board, roles: NetRoles, envs, runs: CoupledRuns, d: DirectedRuns, noise: Noise,
              listed: np.ndarray, fixes: dict, broadside_runs: np.ndarray) -> list[Hotspot]:
    """Hotspot records for the listed directed runs, ranked in the given order (columns built in numpy)."""
    j = listed
    r = d.run[j]
    agg, vic = d.aggressor[j], d.victim[j]
    classes = roles.classes
    agg_c, vic_c = roles.class_index[agg], roles.class_index[vic]
    vic_swing = np.array([c.swing_v for c in classes])[vic_c]

    def col(values, digits=3):
        return np.round(np.asarray(values, dtype=float), digits).tolist()

    layer_text = {}
    for mask in np.unique(runs.layer_mask[r]):
        ids = [k for k in range(int(mask).bit_length()) if int(mask) >> k & 1]
        kinds = {envs[k].structure for k in ids}
        layer_text[int(mask)] = ([board.layers[k].name for k in ids], kinds.pop() if len(kinds) == 1 else "mixed")
    partner = roles.partner[agg]
    odd = noise.odd_mode[j]
    model = np.where(partner < 0, "single", np.where(odd, "differential (odd mode)", "differential (two lines)"))
    names = board.nets
    status = [STATUS_NAMES[k] for k in noise.status[j].tolist()]
    aggressor_names = [names[a] if not o else f"{names[a]} / {names[p]}"
                       for a, p, o in zip(agg.tolist(), partner.tolist(), odd.tolist())]
    layer_info = [layer_text[m] for m in runs.layer_mask[r].tolist()]
    structures = [f"{s} with broadside coupling" if b else s
                  for (_, s), b in zip(layer_info, broadside_runs[r].tolist())]
    main_layer = [board.layers[k].name for k in runs.main_layer[r].tolist()]
    kb_max = col(noise.kb_max[j], 5)
    rows = zip(
        j.tolist(), r.tolist(), status, [names[v] for v in vic.tolist()], aggressor_names,
        [classes[k] for k in agg_c.tolist()], [classes[k] for k in vic_c.tolist()], model.tolist(), main_layer,
        layer_info, structures, col(runs.coupled_length_mm[r]), col(runs.spacing_min_mm[r], 4),
        col(runs.spacing_mean_mm[r], 4), col(runs.worst_x_mm[r]), col(runs.worst_y_mm[r]),
        zip(col(runs.worst_x0_mm[r]), col(runs.worst_y0_mm[r]), col(runs.worst_x1_mm[r]), col(runs.worst_y1_mm[r])),
        zip(col(runs.x_min_mm[r]), col(runs.y_min_mm[r]), col(runs.x_max_mm[r]), col(runs.y_max_mm[r])),
        col(noise.next_v[j] * 1e3), col(noise.fext_v[j] * 1e3), col(100 * noise.next_v[j] / vic_swing),
        col(100 * noise.fext_v[j] / vic_swing), col(d.next_budget_v[j] * 1e3), col(d.fext_budget_v[j] * 1e3),
        col(noise.used[j], 4), kb_max)
    out = []
    for rank, (jj, rr, st, victim, aggressor, ac, vc, mdl, main, (layers, _), structure, length, s_min, s_mean,
               x, y, extent, bbox, n_mv, f_mv, n_pct, f_pct, n_budget, f_budget, used, kb) in enumerate(rows, 1):
        out.append(Hotspot(
            rank=rank, status=st, victim=victim, aggressor=aggressor, victim_class=vc.name,
            aggressor_class=ac.name, aggressor_model=mdl, layer=main, layers=layers, structure=structure,
            coupled_length_mm=length, min_spacing_mm=s_min, mean_spacing_mm=s_mean, x_mm=x, y_mm=y,
            extent_mm=list(extent), bbox_mm=list(bbox), next_mv=n_mv, fext_mv=f_mv, next_pct=n_pct, fext_pct=f_pct,
            next_budget_mv=n_budget, fext_budget_mv=f_budget, budget_used=used, kb_max=kb,
            strong_coupling=kb > STRONG_KB, rise_time_ns=ac.rise_time_ns, swing_v=ac.swing_v,
            termination=vc.termination, victim_swing_v=vc.swing_v, run=rr, direction=jj, fix=fixes.get(jj)))
    return out


def with_exact_checks(hotspots: list[Hotspot], runs, envs, broadside_runs: np.ndarray) -> list[Hotspot]:
    """The exact line simulation for the worst strong-coupling findings (single aggressors, same-layer runs)."""
    out = list(hotspots)
    todo = [i for i, h in enumerate(out) if h.strong_coupling and h.aggressor_model != "differential (odd mode)"
            and not broadside_runs[h.run]]
    for i in todo[:EXACT_CHECKS]:
        h = out[i]
        next_v, fext_v = exact_peaks(runs, h.run, envs, h.rise_time_ns, h.swing_v, h.termination)
        used = max(abs(next_v) * 1e3 / h.next_budget_mv, abs(fext_v) * 1e3 / h.fext_budget_mv)
        out[i] = replace(h, exact={"next_mv": round(next_v * 1e3, 3), "fext_mv": round(fext_v * 1e3, 3),
                                   "budget_used": round(used, 4)})
    return out


def victim_totals(board, rules: Rules, roles: NetRoles, d: DirectedRuns, noise: Noise,
                  waived: WaiverMatch | None = None) -> list[VictimTotal]:
    """Per victim over all its aggressors: worst-case sum and root-sum-square of the peaks.

    Contributions ``waived`` covers (per directed run; waivers from ``rules``) are left out of the totals and
    the status, and reported beside them."""
    alive = np.flatnonzero(noise.alive)
    if len(alive) == 0:
        return []
    victim = d.victim[alive]
    nets, group = np.unique(victim, return_inverse=True)
    group = group.ravel()
    next_abs, fext_abs = np.abs(noise.next_v[alive]) * 1e3, np.abs(noise.fext_v[alive]) * 1e3
    covered = np.zeros(len(alive), dtype=bool) if waived is None else waived.covered[alive]
    cls = [roles.classes[c] for c in roles.class_index[nets]]
    nb = np.array([c.next_budget_v() for c in cls]) * 1e3
    fb = np.array([c.fext_budget_v() for c in cls]) * 1e3
    swing_mv = np.array([c.swing_v for c in cls]) * 1e3
    basis_worst = rules.scan.budget_basis == "worst-case"

    def totals(weight):
        worst = np.bincount(group, weights=next_abs * weight), np.bincount(group, weights=fext_abs * weight)
        rss = (np.sqrt(np.bincount(group, weights=next_abs ** 2 * weight)),
               np.sqrt(np.bincount(group, weights=fext_abs ** 2 * weight)))
        basis = worst if basis_worst else rss
        return worst, rss, np.maximum(basis[0] / nb, basis[1] / fb)

    (worst_next, worst_fext), (rss_next, rss_fext), used = totals(~covered)
    used_all = totals(np.ones(len(alive), dtype=bool))[2] if covered.any() else used
    # each victim's aggressors, most budget first
    order = np.lexsort((-noise.used[alive], group))
    bounds = np.searchsorted(group[order], np.arange(len(nets) + 1))
    out = []
    for g in np.argsort(-used, kind="stable"):
        members = order[bounds[g]:bounds[g + 1]]
        gone = members[covered[members]]
        extra = {} if len(gone) == 0 else {
            "waived_aggressors": [board.nets[int(a)] for a in d.aggressor[alive[gone]]],
            "waivers": list(dict.fromkeys(rules.waivers[w].id for w in waived.waiver[alive[gone]].tolist())),
            "budget_used_with_waived": rounded(used_all[g], 4),
            "status_with_waived": status_for(used_all[g], rules.scan.warn_fraction)}
        out.append(VictimTotal(
            net=board.nets[int(nets[g])], net_class=cls[g].name, status=status_for(used[g], rules.scan.warn_fraction),
            next_worst_pct=rounded(100 * worst_next[g] / swing_mv[g]), fext_worst_pct=rounded(100 * worst_fext[g] / swing_mv[g]),
            next_rss_pct=rounded(100 * rss_next[g] / swing_mv[g]), fext_rss_pct=rounded(100 * rss_fext[g] / swing_mv[g]),
            next_worst_mv=rounded(worst_next[g]), fext_worst_mv=rounded(worst_fext[g]), next_budget_mv=rounded(nb[g]),
            fext_budget_mv=rounded(fb[g]), budget_used=rounded(used[g], 4),
            aggressors=[board.nets[int(a)] for a in d.aggressor[alive[members]]], **extra))
    return out
