"""The scan, stage by stage: board + rules -> environments -> net roles -> coupled runs -> scored findings,
then the impedance check and the per-layer impedance table.

Each stage is one call with named inputs and outputs (see the stage packages' docstrings):
``board`` (layer environments, net roles), ``coupling`` (finder, runs, coefficients),
``scoring`` (directions, noise, budgets, fixes, records). Reports are written by the caller.
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from scanner.board.layerstack import board_environments
from scanner.board.model import Board
from scanner.board.roles import NetRoles, assign_roles, reference_nets
from scanner.coupling.layer_impedance import pair_pieces, signal_layer_table
from scanner.coupling.stage import find_pieces, find_runs
from scanner.input_limits import check_finite
from scanner.memory import stage
from scanner.rules import Rules
from scanner.scoring.results import ScanResult
from scanner.scoring.impedance import check_impedance
from scanner.scoring.stage import build_result, score_runs

Progress = Callable[[str], None]


def run_scan(board: Board, rules: Rules | None = None, progress: Progress | None = None) -> ScanResult:
    rules = rules or Rules()
    say = progress or (lambda _msg: None)

    env = board_environments(board, rules.stackup, rules.planes, rules.scan.skip_layers)
    roles = assign_roles(board.nets, rules, reference_nets(board, env))
    segments = sum(len(board.layers[i].segments) for i in env.signal)
    with stage("finding coupled runs", f"{segments:,} trace segments on {len(env.signal)} signal layers"), \
            np.errstate(all="ignore"):
        coupled = find_runs(board, env, roles, rules.scan, _least_reach_mm(rules), say)
    roles = coupled.roles  # with the pairs found from the routed geometry
    c = coupled.coefficients
    check_finite(np.concatenate([c.kb, c.kf_s_per_m, c.velocity_m_per_s]), "coupling coefficients of the runs")
    say("scoring")
    with stage("scoring", f"{len(coupled.runs):,} coupled runs"), np.errstate(all="ignore"):
        scored = score_runs(board, rules, roles, env, coupled)
        pairs = pair_pieces(board, env.signal, roles.partner)
        impedance = check_impedance(board, rules, roles, env, pairs)
    warnings = (list(roles.warnings) + _unknown_layer_names(board, rules) + list(env.warnings) + list(board.warnings)
                + impedance.notes)
    return build_result(board, rules, roles, env, coupled, scored, warnings,
                        signal_layer_table(board, env, pairs), impedance)


def board_roles(board: Board, rules: Rules | None = None) -> NetRoles:
    """Each net's class, role and differential partner exactly as a scan finds them (by name, by the rules and
    by routed geometry), without scoring anything."""
    rules = rules or Rules()
    env = board_environments(board, rules.stackup, rules.planes, rules.scan.skip_layers)
    roles = assign_roles(board.nets, rules, reference_nets(board, env))
    return find_pieces(board, env, roles, rules.scan, _least_reach_mm(rules)).roles


def _least_reach_mm(rules: Rules) -> float:
    """The search reaches at least as far as the widest geometric class-pair limit."""
    return max([0.0] + [r.within_spacing_mm for r in rules.class_pairs if r.has_geometry])


def _unknown_layer_names(board: Board, rules: Rules) -> list[str]:
    """Layer names in the rules that this board does not have (one rules file may serve several boards)."""
    known = [layer.name for layer in board.layers]
    out = []
    for key, names in (("planes", rules.planes), ("[scan] skip_layers", rules.scan.skip_layers)):
        unknown = [n for n in names if n not in known]
        if unknown:
            out.append(f"the rules' {key} names {', '.join(unknown)}, which this board does not have "
                       f"(its copper layers: {', '.join(known)}); ignored")
    return out
