"""The scan pipeline: board + rules -> coupled runs -> scored findings.

Stages: net roles (class, power, differential partner) -> cross-section
environment per signal layer -> coupled pieces (finder) -> runs -> per-piece
coefficients from cached spacing tables -> NEXT/FEXT peaks per run and
direction -> per-victim totals against budgets -> ranking.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Callable

import numpy as np

from scanner.board import Board
from scanner.coefficients import BroadsideLookup, CouplingLookup, most_used_width
from scanner.exact_check import EXACT_CHECKS, exact_peaks
from scanner.finder import CoupledPieces, find_broadside_pieces, find_coupled_pieces
from scanner.fixes import fix_guidance
from scanner.geometric import check_geometric_limits
from scanner.layerstack import broadside_environments, effective_stackup, layer_environments
from scanner.directed import DirectedRuns, directed_noise, directed_runs
from scanner.rules import NetRoles, Rules, assign_roles
from scanner.runs import build_runs, CoupledRuns
from scanner.score import Hotspot, PieceCoefficients, ScanResult, VictimTotal, status_for

#: search distance derived from the stackup: this many times the largest trace-to-plane height
SEARCH_HEIGHTS = 4.0
SEARCH_LIMITS_MM = (0.25, 2.0)
#: pieces of one net pair further apart than this along the run become separate runs (hotspots)
RUN_GAP_MM = 5.0
#: smallest edge spacing used for coefficients (touching copper is a netting fault, not crosstalk)
MIN_SPACING_MM = 0.02
STRONG_KB = 0.1

Progress = Callable[[str], None]


def run_scan(board: Board, rules: Rules | None = None, progress: Progress | None = None) -> ScanResult:
    rules = rules or Rules()
    say = progress or (lambda _msg: None)
    warnings: list[str] = []

    plane_layers = {layer.index for layer in board.layers if layer.kind == "plane" or layer.name in rules.planes}
    stackup, stack_warnings = effective_stackup(board, rules.stackup)
    warnings += stack_warnings
    envs = layer_environments(board, stackup, plane_layers)
    for layer in board.layers:
        if layer.index not in plane_layers and layer.index not in envs and len(layer.segments):
            warnings.append(f"layer {layer.name} has no reference plane on either side; not scanned")
    warnings += board.warnings

    plane_nets = _plane_nets(board, plane_layers)
    roles = assign_roles(board.nets, rules, plane_nets)
    search_mm = rules.scan.search_distance_mm or _derived_search_mm(envs)
    search_mm = max([search_mm] + [r.within_spacing_mm for r in rules.class_pairs if r.has_geometry])

    say("finding coupled runs")
    layers = {i: board.layers[i].segments for i in envs}
    pairs = broadside_environments(board, stackup, envs, plane_layers)
    search = dict(search_distance_mm=search_mm, angle_tolerance_deg=rules.scan.angle_tolerance_deg,
                  net_active=roles.active, net_partner=roles.partner)
    pieces = CoupledPieces.concat([find_coupled_pieces(layers, **search),
                                   find_broadside_pieces({k: (layers[k[0]], layers[k[1]]) for k in pairs}, **search)])
    runs = build_runs(pieces, max_gap_mm=RUN_GAP_MM)
    keep = runs.coupled_length_mm >= rules.scan.min_coupled_length_mm

    say(f"solving cross-sections for {int(keep.sum())} runs")
    anchors = most_used_width(layers)
    lookup = CouplingLookup(envs, search_mm, anchors)
    broadside_lookup = BroadsideLookup(pairs, search_mm, anchors)
    kb, kf, velocity = _piece_coefficients(runs.pieces, lookup, broadside_lookup)
    broadside_runs = np.bincount(np.repeat(np.arange(len(runs)), np.diff(runs.run_start)),
                                 weights=runs.pieces.broadside[runs.piece_order], minlength=len(runs)) > 0

    say("scoring")
    directed = directed_runs(rules, roles, runs, keep)
    noise = _score(rules, roles, directed, runs, kb, kf, velocity)
    listed = _listed(noise, rules)
    fixes = fix_guidance(directed, listed[noise.status[listed] > 0], runs, lookup, board, (kb, kf, velocity),
                         broadside_runs)
    hotspots = _hotspots(board, roles, envs, runs, directed, noise, listed, fixes, broadside_runs)
    hotspots = _with_exact_checks(hotspots, runs, envs, broadside_runs)
    victims = _victim_totals(board, rules, roles, directed, noise)
    geometric = check_geometric_limits(rules, roles, runs, board)

    return ScanResult(
        board=_board_summary(board),
        stackup={"source": stackup.source, "layers": [_stack_item(s) for s in stackup.layers],
                 "signal_layers": {board.layers[i].name: _env_summary(e) for i, e in envs.items()}},
        rules=rules.to_dict(),
        settings={"search_distance_mm": round(search_mm, 4),
                  "search_distance_source": "rules" if rules.scan.search_distance_mm else
                  f"{SEARCH_HEIGHTS:g} x largest trace-to-plane height",
                  "min_coupled_length_mm": rules.scan.min_coupled_length_mm,
                  "angle_tolerance_deg": rules.scan.angle_tolerance_deg,
                  "run_gap_mm": RUN_GAP_MM,
                  "budget_basis": rules.scan.budget_basis,
                  "differential_aggressor": rules.scan.differential_aggressor,
                  "broadside_layer_pairs": [f"{board.layers[a].name}/{board.layers[b].name}" for a, b in pairs],
                  "cross_section_solves": lookup.solve_count + broadside_lookup.solve_count},
        hotspots=hotspots, victims=victims, geometric=geometric, warnings=warnings, runs=runs,
        piece_coefficients=PieceCoefficients(kb, kf, velocity),
        summary=_summary(noise, hotspots, victims, runs, keep) | {"list_floor": rules.scan.list_floor},
    )


def _derived_search_mm(envs) -> float:
    heights = [e.height_mm for e in envs.values()] or [0.2]
    return float(np.clip(SEARCH_HEIGHTS * max(heights), *SEARCH_LIMITS_MM))


def _plane_nets(board: Board, plane_layers: set[int]) -> set[str]:
    """Nets that own copper on a plane layer (their pour makes them reference nets)."""
    nets = set()
    for layer in board.layers:
        if layer.index in plane_layers:
            ids = np.unique(layer.shapes.net[layer.shapes.role == "region"]) if len(layer.shapes) else []
            nets.update(board.nets[i] for i in ids if i >= 0)
    return nets


@dataclass(frozen=True)
class Noise:
    """Per directed run: predicted peaks, the fraction of budget used, status (0 pass, 1 warn, 2 fail).

    ``alive`` is False for a differential member folded into its partner's entry (odd-mode model).
    """

    next_v: np.ndarray
    fext_v: np.ndarray
    used: np.ndarray
    status: np.ndarray
    kb_max: np.ndarray
    odd_mode: np.ndarray
    alive: np.ndarray


STATUS_NAMES = ("pass", "warn", "fail")


def _score(rules: Rules, roles: NetRoles, d: DirectedRuns, runs: CoupledRuns, kb, kf, velocity) -> Noise:
    """Every kept run in both directions, in one vectorised pass."""
    rows = d.piece_rows
    next_v, fext_v, used = directed_noise(d, kb[rows], kf[rows], runs.pieces.length_mm[rows] * 1e-3, velocity[rows])
    kb_max = np.maximum.reduceat(kb[rows], d.piece_start[:-1]) if len(rows) else np.zeros(0)
    odd = np.zeros(len(d), dtype=bool)
    alive = np.ones(len(d), dtype=bool)
    if rules.scan.differential_aggressor == "odd-mode":
        next_v, fext_v, used, odd, alive = _odd_mode(roles, d, next_v, fext_v)
    status = np.where(used > 1.0, 2, np.where(used >= rules.scan.warn_fraction, 1, 0))
    return Noise(next_v, fext_v, used, status, kb_max, odd, alive)


def _odd_mode(roles: NetRoles, d: DirectedRuns, next_v, fext_v):
    """Both members of a differential aggressor drive opposite edges, so on one victim their
    contributions subtract. Approximation: the members' peaks are taken as coincident in time.
    The combined figure is kept on the positive member's entry; the negative member's is folded in."""
    partner = roles.partner[d.aggressor]
    member = partner >= 0
    positive = np.where(roles.polarity[d.aggressor] > 0, d.aggressor, partner)
    sign = np.where(roles.polarity[d.aggressor] > 0, 1.0, -1.0)
    key = np.where(member, positive.astype(np.int64) << np.int64(32) | d.victim, -1 - np.arange(len(d)))
    uniq, group = np.unique(key, return_inverse=True)
    group = group.ravel()
    next_sum = np.bincount(group, weights=sign * next_v, minlength=len(uniq))
    fext_sum = np.bincount(group, weights=sign * fext_v, minlength=len(uniq))
    size = np.bincount(group, minlength=len(uniq))
    combined = member & (size[group] == 2)
    next_v = np.where(combined, np.abs(next_sum[group]), next_v)
    fext_v = np.where(combined, fext_sum[group], fext_v)
    alive = ~combined | (sign > 0)
    used = np.maximum(np.abs(next_v) / d.next_budget_v, np.abs(fext_v) / d.fext_budget_v)
    return next_v, fext_v, used, combined, alive


def _listed(noise: Noise, rules: Rules) -> np.ndarray:
    """Directed runs to list, ranked by budget used: every warn and fail, passes from ``list_floor`` up."""
    candidates = np.flatnonzero(noise.alive & ((noise.used >= rules.scan.list_floor) | (noise.status > 0)))
    return candidates[np.argsort(-noise.used[candidates], kind="stable")]


def _hotspots(board, roles: NetRoles, envs, runs: CoupledRuns, d: DirectedRuns, noise: Noise,
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


def _piece_coefficients(p, lookup: CouplingLookup, broadside_lookup: BroadsideLookup):
    """Kb, Kf, velocity per piece: same-layer pieces by edge spacing, broadside pieces by lateral centre offset."""
    width = 0.5 * (p.width_a_mm + p.width_b_mm)
    kb, kf, velocity = lookup.coefficients(p.layer, width, np.maximum(p.spacing_mean_mm, MIN_SPACING_MM))
    cross = np.flatnonzero(p.broadside)
    if len(cross):
        kb[cross], kf[cross], velocity[cross] = broadside_lookup.coefficients(
            p.layer[cross], p.layer_b[cross], width[cross], p.centre_mean_mm[cross])
    return kb, kf, velocity


def _with_exact_checks(hotspots: list[Hotspot], runs, envs, broadside_runs: np.ndarray) -> list[Hotspot]:
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


def _victim_totals(board, rules: Rules, roles: NetRoles, d: DirectedRuns, noise: Noise) -> list[VictimTotal]:
    """Per victim over all its aggressors: worst-case sum and root-sum-square of the peaks."""
    alive = np.flatnonzero(noise.alive)
    if len(alive) == 0:
        return []
    victim = d.victim[alive]
    nets, group = np.unique(victim, return_inverse=True)
    group = group.ravel()
    next_abs, fext_abs = np.abs(noise.next_v[alive]) * 1e3, np.abs(noise.fext_v[alive]) * 1e3
    worst_next = np.bincount(group, weights=next_abs)
    worst_fext = np.bincount(group, weights=fext_abs)
    rss_next = np.sqrt(np.bincount(group, weights=next_abs ** 2))
    rss_fext = np.sqrt(np.bincount(group, weights=fext_abs ** 2))
    cls = [roles.classes[c] for c in roles.class_index[nets]]
    nb = np.array([c.next_budget_v() for c in cls]) * 1e3
    fb = np.array([c.fext_budget_v() for c in cls]) * 1e3
    swing_mv = np.array([c.swing_v for c in cls]) * 1e3
    basis = (worst_next, worst_fext) if rules.scan.budget_basis == "worst-case" else (rss_next, rss_fext)
    used = np.maximum(basis[0] / nb, basis[1] / fb)
    # each victim's aggressors, most budget first
    order = np.lexsort((-noise.used[alive], group))
    bounds = np.searchsorted(group[order], np.arange(len(nets) + 1))
    out = []
    for g in np.argsort(-used, kind="stable"):
        members = alive[order[bounds[g]:bounds[g + 1]]]
        out.append(VictimTotal(
            net=board.nets[int(nets[g])], net_class=cls[g].name, status=status_for(used[g], rules.scan.warn_fraction),
            next_worst_pct=_r(100 * worst_next[g] / swing_mv[g]), fext_worst_pct=_r(100 * worst_fext[g] / swing_mv[g]),
            next_rss_pct=_r(100 * rss_next[g] / swing_mv[g]), fext_rss_pct=_r(100 * rss_fext[g] / swing_mv[g]),
            next_worst_mv=_r(worst_next[g]), fext_worst_mv=_r(worst_fext[g]), next_budget_mv=_r(nb[g]),
            fext_budget_mv=_r(fb[g]), budget_used=_r(used[g], 4),
            aggressors=[board.nets[int(a)] for a in d.aggressor[members]]))
    return out


def _r(x, digits=3) -> float:
    return round(float(x), digits)


def _board_summary(board: Board) -> dict:
    netting = board.netting
    return {
        "name": board.name, "source": board.source, "format": board.format,
        "layers": [{"name": l.name, "index": l.index, "side": l.side, "kind": l.kind, "kind_source": l.kind_source,
                    "segments": len(l.segments), "trace_length_mm": _r(l.trace_length_mm, 1)} for l in board.layers],
        "nets": len(board.nets),
        "netting": None if netting is None else {
            "method": netting.method, "netted_trace_fraction": _r(netting.netted_trace_fraction, 4),
            "netlist_points_matched": netting.netlist_points_matched,
            "netlist_points_total": netting.netlist_points_total,
            "shorts": len(netting.shorts), "opens": len(netting.opens)},
    }


def _stack_item(s) -> dict:
    return {"kind": s.kind, "name": s.name, "thickness_mm": s.thickness_mm, "epsilon_r": s.epsilon_r}


def _env_summary(e) -> dict:
    return {"structure": e.structure, "height_to_plane_mm": _r(e.height_mm, 4),
            "trace_thickness_mm": e.trace_thickness_mm}


def _summary(noise: Noise, hotspots, victims, runs, keep) -> dict:
    count = {s: sum(1 for v in victims if v.status == s) for s in ("fail", "warn", "pass")}
    alive = noise.alive
    return {"coupled_runs": int(keep.sum()), "coupled_pieces": len(runs.pieces),
            "findings": int(alive.sum()), "findings_fail": int((alive & (noise.status == 2)).sum()),
            "findings_warn": int((alive & (noise.status == 1)).sum()),
            "hotspots_listed": len(hotspots),
            "victims": len(victims), "victims_fail": count["fail"], "victims_warn": count["warn"],
            "victims_pass": count["pass"]}
