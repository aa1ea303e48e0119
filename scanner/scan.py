"""The scan pipeline: board + rules -> coupled runs -> scored findings.

Stages: net roles (class, power, differential partner) -> cross-section
environment per signal layer -> coupled pieces (finder) -> runs -> per-piece
coefficients from cached spacing tables -> NEXT/FEXT peaks per run and
direction -> per-victim totals against budgets -> ranking.
"""
from __future__ import annotations

from dataclasses import replace as _replace
from typing import Callable

import numpy as np

from scanner.board import Board
from scanner.coefficients import CouplingLookup
from scanner.finder import find_coupled_pieces
from scanner.fixes import fix_guidance
from scanner.geometric import check_geometric_limits
from scanner.layerstack import effective_stackup, layer_environments
from scanner.directed import DirectedRuns, directed_noise, directed_runs
from scanner.rules import NetRoles, Rules, assign_roles
from scanner.runs import build_runs, CoupledRuns
from scanner.score import Hotspot, PieceCoefficients, ScanResult, VictimTotal, STATUS_ORDER, status_for

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
    warnings = list(board.warnings)

    plane_layers = {layer.index for layer in board.layers if layer.kind == "plane" or layer.name in rules.planes}
    stackup, stack_warnings = effective_stackup(board, rules.stackup)
    warnings += stack_warnings
    envs = layer_environments(board, stackup, plane_layers)
    for layer in board.layers:
        if layer.index not in plane_layers and layer.index not in envs and len(layer.segments):
            warnings.append(f"layer {layer.name} has no reference plane on either side; not scanned")

    plane_nets = _plane_nets(board, plane_layers)
    roles = assign_roles(board.nets, rules, plane_nets)
    search_mm = rules.scan.search_distance_mm or _derived_search_mm(envs)
    search_mm = max([search_mm] + [r.within_spacing_mm for r in rules.class_pairs if r.has_geometry])

    say("finding coupled runs")
    layers = {i: board.layers[i].segments for i in envs}
    pieces = find_coupled_pieces(layers, search_mm, rules.scan.angle_tolerance_deg,
                                 net_active=roles.active, net_partner=roles.partner)
    runs = build_runs(pieces, max_gap_mm=RUN_GAP_MM)
    keep = runs.coupled_length_mm >= rules.scan.min_coupled_length_mm

    say(f"solving cross-sections for {int(keep.sum())} runs")
    lookup = CouplingLookup(envs, search_mm)
    p = runs.pieces
    kb, kf, velocity = lookup.coefficients(p.layer, 0.5 * (p.width_a_mm + p.width_b_mm),
                                           np.maximum(p.spacing_mean_mm, MIN_SPACING_MM))

    say("scoring")
    directed = directed_runs(rules, roles, runs, keep)
    hotspots = _score_runs(board, rules, roles, envs, runs, directed, kb, kf, velocity)
    hotspots = _with_fixes(hotspots, directed, runs, lookup, board)
    geometric = check_geometric_limits(rules, roles, runs, board)
    victims = _victim_totals(board, rules, roles, hotspots)
    hotspots.sort(key=lambda h: (-h.budget_used, STATUS_ORDER[h.status], h.victim, h.aggressor))
    hotspots = [_with_rank(h, i + 1) for i, h in enumerate(hotspots)]
    victims.sort(key=lambda v: (-v.budget_used, v.net))

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
                  "cross_section_solves": lookup.solve_count},
        hotspots=hotspots, victims=victims, geometric=geometric, warnings=warnings, runs=runs,
        piece_coefficients=PieceCoefficients(kb, kf, velocity),
        summary=_summary(hotspots, victims, runs, keep),
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


def _score_runs(board, rules: Rules, roles: NetRoles, envs, runs: CoupledRuns, d: DirectedRuns, kb, kf, velocity):
    """Every kept run in both directions, scored in one vectorised pass."""
    if len(d) == 0:
        return []
    rows = d.piece_rows
    next_v, fext_v, used = directed_noise(d, kb[rows], kf[rows], runs.pieces.length_mm[rows] * 1e-3, velocity[rows])
    kb_max = np.maximum.reduceat(kb[rows], d.piece_start[:-1])
    hotspots = [_hotspot(board, rules, roles, envs, runs, d, j, float(next_v[j]), float(fext_v[j]),
                         float(used[j]), float(kb_max[j])) for j in range(len(d))]
    if rules.scan.differential_aggressor == "odd-mode":
        hotspots = _combine_differential(hotspots, board, roles, rules)
    return hotspots


def _hotspot(board, rules, roles, envs, runs, d: DirectedRuns, j, next_v, fext_v, used, kb_max) -> Hotspot:
    r, aggressor, victim = int(d.run[j]), int(d.aggressor[j]), int(d.victim[j])
    agg_cls = roles.classes[roles.class_index[aggressor]]
    vic_cls = roles.classes[roles.class_index[victim]]
    layer_ids = runs.layers_of(r)
    structures = {envs[i].structure for i in layer_ids}
    model = "differential (two lines)" if roles.partner[aggressor] >= 0 else "single"
    return Hotspot(
        rank=0, status=status_for(used, rules.scan.warn_fraction),
        victim=board.nets[victim], aggressor=board.nets[aggressor],
        victim_class=vic_cls.name, aggressor_class=agg_cls.name, aggressor_model=model,
        layer=board.layers[int(runs.main_layer[r])].name, layers=[board.layers[i].name for i in layer_ids],
        structure=structures.pop() if len(structures) == 1 else "mixed",
        coupled_length_mm=_r(runs.coupled_length_mm[r]), min_spacing_mm=_r(runs.spacing_min_mm[r], 4),
        mean_spacing_mm=_r(runs.spacing_mean_mm[r], 4),
        x_mm=_r(runs.worst_x_mm[r]), y_mm=_r(runs.worst_y_mm[r]),
        extent_mm=[_r(runs.worst_x0_mm[r]), _r(runs.worst_y0_mm[r]), _r(runs.worst_x1_mm[r]), _r(runs.worst_y1_mm[r])],
        bbox_mm=[_r(runs.x_min_mm[r]), _r(runs.y_min_mm[r]), _r(runs.x_max_mm[r]), _r(runs.y_max_mm[r])],
        next_mv=_r(next_v * 1e3), fext_mv=_r(fext_v * 1e3),
        next_pct=_r(100 * next_v / vic_cls.swing_v), fext_pct=_r(100 * fext_v / vic_cls.swing_v),
        next_budget_mv=_r(d.next_budget_v[j] * 1e3), fext_budget_mv=_r(d.fext_budget_v[j] * 1e3),
        budget_used=_r(used, 4), kb_max=_r(kb_max, 5),
        strong_coupling=kb_max > STRONG_KB, rise_time_ns=agg_cls.rise_time_ns, swing_v=agg_cls.swing_v,
        termination=vic_cls.termination, victim_swing_v=vic_cls.swing_v, run=r, direction=j)


def _combine_differential(hotspots: list[Hotspot], board, roles, rules) -> list[Hotspot]:
    """Odd-mode model: the two members of a pair drive opposite edges, so their contributions on a
    victim subtract. Approximation: the members' peaks are taken as coincident in time."""
    by_key = {}
    rest = []
    for h in hotspots:
        a = board.net_id(h.aggressor)
        if roles.partner[a] >= 0:
            pos = a if roles.polarity[a] > 0 else int(roles.partner[a])
            by_key.setdefault((board.nets[pos], h.victim), []).append(h)
        else:
            rest.append(h)
    for (pos_name, _victim), group in by_key.items():
        sign = {h.aggressor: (1 if h.aggressor == pos_name else -1) for h in group}
        next_v = abs(sum(sign[h.aggressor] * h.next_mv for h in group))
        fext_v = sum(sign[h.aggressor] * h.fext_mv for h in group)
        lead = max(group, key=lambda h: h.budget_used)
        used = max(next_v / lead.next_budget_mv, abs(fext_v) / lead.fext_budget_mv)
        swing_mv = lead.victim_swing_v * 1e3
        names = sorted({h.aggressor for h in group})
        rest.append(_replace(lead, aggressor=" / ".join(names), aggressor_model="differential (odd mode)",
                             next_mv=_r(next_v), fext_mv=_r(fext_v), next_pct=_r(100 * next_v / swing_mv),
                             fext_pct=_r(100 * fext_v / swing_mv), budget_used=_r(used, 4),
                             status=status_for(used, rules.scan.warn_fraction)))
    return rest


def _victim_totals(board, rules: Rules, roles: NetRoles, hotspots: list[Hotspot]) -> list[VictimTotal]:
    by_victim: dict[str, list[Hotspot]] = {}
    for h in hotspots:
        by_victim.setdefault(h.victim, []).append(h)
    out = []
    for net, group in by_victim.items():
        cls = roles.classes[roles.class_index[board.net_id(net)]]
        next_abs = np.array([abs(h.next_mv) for h in group])
        fext_abs = np.array([abs(h.fext_mv) for h in group])
        worst_next, worst_fext = next_abs.sum(), fext_abs.sum()
        rss_next, rss_fext = np.sqrt((next_abs ** 2).sum()), np.sqrt((fext_abs ** 2).sum())
        nb, fb = cls.next_budget_v() * 1e3, cls.fext_budget_v() * 1e3
        basis_next, basis_fext = (worst_next, worst_fext) if rules.scan.budget_basis == "worst-case" else (rss_next, rss_fext)
        used = max(basis_next / nb, basis_fext / fb)
        swing_mv = cls.swing_v * 1e3
        aggressors = [h.aggressor for h in sorted(group, key=lambda h: -h.budget_used)]
        out.append(VictimTotal(
            net=net, net_class=cls.name, status=status_for(used, rules.scan.warn_fraction),
            next_worst_pct=_r(100 * worst_next / swing_mv), fext_worst_pct=_r(100 * worst_fext / swing_mv),
            next_rss_pct=_r(100 * rss_next / swing_mv), fext_rss_pct=_r(100 * rss_fext / swing_mv),
            next_worst_mv=_r(worst_next), fext_worst_mv=_r(worst_fext), next_budget_mv=_r(nb), fext_budget_mv=_r(fb),
            budget_used=_r(used, 4), aggressors=aggressors))
    return out


def _with_fixes(hotspots: list[Hotspot], directed, runs, lookup, board) -> list[Hotspot]:
    """Attach fix guidance to warn and fail findings of single (or two-line) aggressors."""
    todo = [h for h in hotspots if h.status != "pass" and h.aggressor_model != "differential (odd mode)"]
    fixes = fix_guidance(directed, np.array([h.direction for h in todo], dtype=np.int64), runs, lookup, board)
    return [_replace(h, fix=fixes[h.direction]) if h.direction in fixes else h for h in hotspots]


def _with_rank(h: Hotspot, rank: int) -> Hotspot:
    return _replace(h, rank=rank)


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


def _summary(hotspots, victims, runs, keep) -> dict:
    count = {s: sum(1 for v in victims if v.status == s) for s in ("fail", "warn", "pass")}
    return {"coupled_runs": int(keep.sum()), "coupled_pieces": len(runs.pieces), "hotspots": len(hotspots),
            "victims": len(victims), "victims_fail": count["fail"], "victims_warn": count["warn"],
            "victims_pass": count["pass"]}
