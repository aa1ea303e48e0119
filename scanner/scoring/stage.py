"""The scoring stage as one call, and the scan result built from all stages' outputs."""
from __future__ import annotations

from dataclasses import dataclass

from scanner.board.layerstack import BoardEnvironments
from scanner.board.model import Board
from scanner.board.roles import NetRoles
from scanner.coupling.stage import RUN_GAP_MM, CoupledSet
from scanner.rules import Rules
from scanner.scoring.class_limits import GeometricFinding, check_geometric_limits
from scanner.scoring.directions import DirectedRuns, directed_runs
from scanner.scoring.findings import hotspot_records, listed_runs, victim_totals, with_exact_checks
from scanner.scoring.fix_plans import plan_fixes
from scanner.scoring.noise import Noise, score_noise
from scanner.scoring.results import Hotspot, ScanResult, VictimTotal, rounded
from scanner.scoring.totals import victim_sums


@dataclass(frozen=True)
class Scored:
    """Scoring output: every kept run in both directions with its noise, and the records built from them."""

    directed: DirectedRuns
    noise: Noise
    hotspots: list[Hotspot]
    victims: list[VictimTotal]
    geometric: list[GeometricFinding]


def score_runs(board: Board, rules: Rules, roles: NetRoles, env: BoardEnvironments, coupled: CoupledSet) -> Scored:
    """Directions, noise against budgets, victim sums, fix plans, records, class-pair limits."""
    runs = coupled.runs
    directed = directed_runs(rules, roles, runs, coupled.kept)
    noise = score_noise(rules, roles, directed, runs, coupled.coefficients)
    sums = victim_sums(rules, roles, directed, noise)
    c = coupled.coefficients
    plans = plan_fixes(rules, roles, directed, noise, sums, runs, coupled.lookup, board,
                       (c.kb, c.kf_s_per_m, c.velocity_m_per_s), coupled.broadside_runs)
    listed = listed_runs(rules, directed, noise, plans, len(runs))
    hotspots = hotspot_records(board, roles, env.signal, runs, directed, noise, listed, plans, coupled.broadside_runs)
    hotspots = with_exact_checks(hotspots, runs, env.signal, coupled.broadside_runs)
    victims = victim_totals(board, roles, runs, directed, noise, sums, hotspots, plans)
    geometric = check_geometric_limits(rules, roles, runs, board)
    return Scored(directed, noise, hotspots, victims, geometric)


def build_result(board: Board, rules: Rules, env: BoardEnvironments, coupled: CoupledSet, scored: Scored,
                 warnings: list[str]) -> ScanResult:
    """The scan result (report.json and everything the reports draw) from the stages' outputs."""
    stackup = env.stackup
    return ScanResult(
        board=_board_summary(board),
        stackup={"source": stackup.source, "layers": [_stack_item(s) for s in stackup.layers],
                 "signal_layers": {board.layers[i].name: _env_summary(e) for i, e in env.signal.items()}},
        rules=rules.to_dict(),
        settings={"search_distance_mm": round(coupled.search_distance_mm, 4),
                  "search_distance_source": coupled.search_distance_source,
                  "min_coupled_length_mm": rules.scan.min_coupled_length_mm,
                  "angle_tolerance_deg": rules.scan.angle_tolerance_deg,
                  "run_gap_mm": RUN_GAP_MM,
                  "budget_basis": rules.scan.budget_basis,
                  "differential_aggressor": rules.scan.differential_aggressor,
                  "pair_by_geometry": rules.scan.pair_by_geometry,
                  "broadside_layer_pairs": [f"{board.layers[a].name}/{board.layers[b].name}" for a, b in env.broadside],
                  "cross_section_solves": coupled.solves},
        hotspots=scored.hotspots, victims=scored.victims, geometric=scored.geometric, warnings=warnings,
        pairs=coupled.roles.pairs(board.nets),
        runs=coupled.runs, piece_coefficients=coupled.coefficients,
        summary=_summary(scored.noise, scored.hotspots, scored.victims, coupled.runs, coupled.kept)
        | {"list_floor": rules.scan.list_floor},
        coverage=_coverage(board, env),
        unchecked=_unchecked(board, env),
    )


def _coverage(board: Board, env: BoardEnvironments) -> dict:
    """Signal trace length that took part in the search, and each copper layer's part in the scan."""
    signal = [layer for layer in board.layers if layer.index not in env.plane_layers]
    total = sum(layer.trace_length_mm for layer in signal)
    scanned = sum(layer.trace_length_mm for layer in signal if layer.index in env.signal)
    layers = []
    for layer in board.layers:
        if layer.index in env.plane_layers:
            layers.append({"name": layer.name, "scanned": False, "role": "plane", "reference": None,
                           "reason": "reference plane"})
        elif layer.index in env.signal:
            e = env.signal[layer.index]
            layers.append({"name": layer.name, "scanned": True, "role": "signal",
                           "reference": f"{e.structure}, {rounded(e.height_mm, 3)} mm to its reference",
                           "reason": None})
        else:
            layers.append({"name": layer.name, "scanned": False, "role": "signal", "reference": None,
                           "reason": "no reference plane on either side"})
    return {"scanned_trace_fraction": rounded(scanned / total, 4) if total > 0 else 1.0,
            "scanned_trace_mm": rounded(scanned, 1), "signal_trace_mm": rounded(total, 1),
            "scanned_layers": len(env.signal), "layers": layers}


def _unchecked(board: Board, env: BoardEnvironments) -> list[str]:
    """Why the verdict cannot be a pass: import gaps and signal copper the search did not reach."""
    reasons = list(board.incomplete)
    for layer in board.layers:
        if layer.index not in env.plane_layers and layer.index not in env.signal and len(layer.segments):
            reasons.append(f"layer {layer.name} not scanned: no reference plane on either side")
    return reasons


def _board_summary(board: Board) -> dict:
    netting = board.netting
    return {
        "name": board.name, "source": board.source, "format": board.format,
        "layers": [{"name": l.name, "index": l.index, "side": l.side, "kind": l.kind, "kind_source": l.kind_source,
                    "segments": len(l.segments), "trace_length_mm": rounded(l.trace_length_mm, 1)} for l in board.layers],
        "nets": len(board.nets),
        "netting": None if netting is None else {
            "method": netting.method, "netted_trace_fraction": rounded(netting.netted_trace_fraction, 4),
            "netlist_points_matched": netting.netlist_points_matched,
            "netlist_points_total": netting.netlist_points_total,
            "shorts": len(netting.shorts), "opens": len(netting.opens)},
    }


def _stack_item(s) -> dict:
    return {"kind": s.kind, "name": s.name, "thickness_mm": s.thickness_mm, "epsilon_r": s.epsilon_r}


def _env_summary(e) -> dict:
    return {"structure": e.structure, "height_to_plane_mm": rounded(e.height_mm, 4),
            "trace_thickness_mm": e.trace_thickness_mm}


def _summary(noise: Noise, hotspots, victims, runs, keep) -> dict:
    count = {s: sum(1 for v in victims if v.status == s) for s in ("fail", "warn", "pass")}
    alive = noise.alive
    return {"coupled_runs": int(keep.sum()), "coupled_pieces": len(runs.pieces),
            "findings": int(alive.sum()), "findings_fail": int((alive & (noise.status == 2)).sum()),
            "findings_warn": int((alive & (noise.status == 1)).sum()),
            "hotspots_listed": len(hotspots),
            "hotspots_fail": sum(h.status == "fail" for h in hotspots),
            "hotspots_warn": sum(h.status == "warn" for h in hotspots),
            "victims": len(victims), "victims_fail": count["fail"], "victims_warn": count["warn"],
            "victims_pass": count["pass"]}
