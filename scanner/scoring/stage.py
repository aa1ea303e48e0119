"""The scoring stage as one call, and the scan result built from all stages' outputs."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board.layerstack import BoardEnvironments
from scanner.board.model import Board
from scanner.board.references import describe_reference
from scanner.board.roles import NetRoles
from scanner.coupling.layer_impedance import SignalLayerRow
from scanner.coupling.stage import RUN_GAP_MM, CoupledSet
from scanner.input_limits import check_finite
from scanner.rules import Rules
from scanner.scoring.class_limits import GeometricFinding, check_geometric_limits
from scanner.scoring.coverage import coverage_and_gaps
from scanner.scoring.directions import DirectedRuns, directed_runs
from scanner.scoring.findings import hotspot_records, listed_runs, victim_totals, with_exact_checks
from scanner.scoring.fix_plans import plan_fixes
from scanner.scoring.impedance import ImpedanceCheck
from scanner.scoring.noise import Noise, score_noise
from scanner.scoring.results import Hotspot, ScanResult, VictimTotal, rounded
from scanner.scoring.totals import victim_sums
from scanner.signoff.waiver_marks import Waived, apply_waivers, mark_geometric, mark_hotspots


@dataclass(frozen=True)
class Scored:
    """Scoring output: every kept run in both directions with its noise, and the records built from them."""

    directed: DirectedRuns
    noise: Noise
    hotspots: list[Hotspot]
    victims: list[VictimTotal]
    geometric: list[GeometricFinding]
    waived: Waived


def score_runs(board: Board, rules: Rules, roles: NetRoles, env: BoardEnvironments, coupled: CoupledSet) -> Scored:
    """Directions, noise against budgets, class-pair limits, waivers, victim sums (waived contributions left
    out), fix plans, records."""
    runs = coupled.runs
    directed = directed_runs(rules, roles, runs, coupled.kept)
    noise = score_noise(rules, roles, directed, runs, coupled.coefficients)
    check_finite(np.concatenate([noise.next_v, noise.fext_v, noise.used]), "predicted NEXT and FEXT")
    geometric = check_geometric_limits(rules, roles, runs, board)
    waived = apply_waivers(rules.waivers, board, roles, directed, noise, geometric, runs)
    sums = victim_sums(rules, roles, directed, noise, waived.directions.covered)
    c = coupled.coefficients
    plans = plan_fixes(rules, roles, directed, noise, sums, runs, coupled.lookup, board,
                       (c.kb, c.kf_s_per_m, c.velocity_m_per_s), coupled.broadside_runs)
    listed = listed_runs(rules, directed, noise, plans, len(runs))
    hotspots = hotspot_records(board, roles, env.signal, runs, directed, noise, listed, plans, coupled.broadside_runs)
    hotspots = with_exact_checks(hotspots, runs, env.signal, coupled.broadside_runs)
    mark_hotspots(hotspots, rules.waivers, waived.directions)
    victims = victim_totals(board, rules, roles, runs, directed, noise, sums, hotspots, plans, waived.directions)
    geometric = mark_geometric(geometric, rules.waivers, waived.geometric, runs)
    return Scored(directed, noise, hotspots, victims, geometric, waived)


def build_result(board: Board, rules: Rules, roles: NetRoles, env: BoardEnvironments, coupled: CoupledSet,
                 scored: Scored, warnings: list[str], layer_table: list[SignalLayerRow],
                 impedance: ImpedanceCheck) -> ScanResult:
    """The scan result (report.json and everything the reports draw) from the stages' outputs."""
    stackup = env.stackup
    coverage, unchecked = coverage_and_gaps(board, roles, env, coupled)
    return ScanResult(
        board=_board_summary(board),
        stackup={"source": stackup.source, "path": stackup.path, "layers": [_stack_item(s) for s in stackup.layers],
                 "signal_layers": {row.name: _layer_summary(board, env, row) for row in layer_table if row.scanned}},
        rules=rules.to_dict(),
        settings={"search_distance_mm": round(coupled.search_distance_mm, 4),
                  "search_distance_source": coupled.search_distance_source,
                  "min_coupled_length_mm": rules.scan.min_coupled_length_mm,
                  "angle_tolerance_deg": rules.scan.angle_tolerance_deg,
                  "run_gap_mm": RUN_GAP_MM,
                  "budget_basis": rules.scan.budget_basis,
                  "differential_aggressor": rules.scan.differential_aggressor,
                  "pair_by_geometry": rules.scan.pair_by_geometry,
                  "search_distance_by_layer_mm": {board.layers[i].name: round(mm, 4)
                                                  for i, mm in coupled.search_by_layer_mm.items()},
                  "broadside_layer_pairs": [f"{board.layers[a].name}/{board.layers[b].name}" for a, b in env.broadside],
                  "cross_section_solves": coupled.solves},
        hotspots=scored.hotspots, victims=scored.victims, geometric=scored.geometric, warnings=warnings,
        pairs=coupled.roles.pairs(board.nets),
        runs=coupled.runs, piece_coefficients=coupled.coefficients, lookup=coupled.lookup,
        summary=_summary(scored.noise, scored.hotspots, scored.victims, coupled.runs, coupled.kept)
        | {"list_floor": rules.scan.list_floor, "findings_waived": int(scored.waived.directions.covered.sum()),
           "waivers_unused": sum(w["state"] == "unused" for w in scored.waived.states)},
        waivers=scored.waived.states,
        coverage=coverage,
        unchecked=unchecked,
        impedance=impedance,
    )


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


def _layer_summary(board: Board, env: BoardEnvironments, row: SignalLayerRow) -> dict:
    d = row.to_dict()
    return d | {"height_to_plane_mm": d["height_mm"],
                "reference": describe_reference(board, env.signal[row.index], env.plane_layers).reference}


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
