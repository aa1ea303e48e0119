"""The scan, stage by stage: board + rules -> environments -> net roles -> coupled runs -> scored findings.

Each stage is one call with named inputs and outputs (see the stage packages' docstrings):
``board`` (layer environments, net roles), ``coupling`` (finder, runs, coefficients),
``scoring`` (directions, noise, budgets, fixes, records). Reports are written by the caller.
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from scanner.board.layerstack import board_environments
from scanner.board.model import Board
from scanner.board.roles import NetRoles, assign_roles
from scanner.coupling.stage import find_pieces, find_runs
from scanner.rules import Rules
from scanner.scoring.results import ScanResult
from scanner.scoring.stage import build_result, score_runs

Progress = Callable[[str], None]


def run_scan(board: Board, rules: Rules | None = None, progress: Progress | None = None) -> ScanResult:
    rules = rules or Rules()
    say = progress or (lambda _msg: None)

    env = board_environments(board, rules.stackup, rules.planes)
    roles = assign_roles(board.nets, rules, _plane_nets(board, env.plane_layers))
    coupled = find_runs(board, env, roles, rules.scan, _least_reach_mm(rules), say)
    say("scoring")
    scored = score_runs(board, rules, coupled.roles, env, coupled)
    return build_result(board, rules, env, coupled, scored,
                        list(roles.warnings) + list(env.warnings) + list(board.warnings))


def board_roles(board: Board, rules: Rules | None = None) -> NetRoles:
    """Each net's class, role and differential partner exactly as a scan finds them (by name, by the rules and
    by routed geometry), without scoring anything."""
    rules = rules or Rules()
    env = board_environments(board, rules.stackup, rules.planes)
    roles = assign_roles(board.nets, rules, _plane_nets(board, env.plane_layers))
    return find_pieces(board, env, roles, rules.scan, _least_reach_mm(rules)).roles


def _least_reach_mm(rules: Rules) -> float:
    """The search reaches at least as far as the widest geometric class-pair limit."""
    return max([0.0] + [r.within_spacing_mm for r in rules.class_pairs if r.has_geometry])


def _plane_nets(board: Board, plane_layers) -> set[str]:
    """Nets that own copper on a plane layer (their pour makes them reference nets)."""
    nets = set()
    for layer in board.layers:
        if layer.index in plane_layers:
            ids = np.unique(layer.shapes.net[layer.shapes.role == "region"]) if len(layer.shapes) else []
            nets.update(board.nets[i] for i in ids if i >= 0)
    return nets
