"""Geometric limits between classes of nets: parallel length at or below a spacing.

For couplings the edge-rate model does not describe — slow, high-current
switching copper beside an analog sensing line couples mainly through its
magnetic field, not a fast edge — a rules file can cap how long nets of two
classes may run side by side within a given edge spacing. Checked on the
coupled runs directly: the length of a run's pieces whose mean spacing is at
or below the limit's spacing.
"""
from __future__ import annotations

from dataclasses import dataclass, asdict

import numpy as np

from scanner.board.roles import NetRoles
from scanner.scoring.directions import class_pair_rules
from scanner.rules import Rules
from scanner.coupling.runs import CoupledRuns
from scanner.scoring.results import is_waived


@dataclass(frozen=True)
class GeometricFinding:
    status: str  # "fail"
    aggressor: str
    victim: str
    aggressor_class: str
    victim_class: str
    layers: list[str]
    parallel_mm: float  # coupled length within the spacing
    max_parallel_mm: float
    within_spacing_mm: float
    min_spacing_mm: float
    x_mm: float
    y_mm: float
    run: int
    waiver: dict | None = None  # as Hotspot.waiver

    @property
    def waived(self) -> bool:
        return is_waived(self.waiver)

    def to_dict(self) -> dict:
        d = asdict(self)
        d.pop("run")
        d["kind"] = "geometric"
        return d


def check_geometric_limits(rules: Rules, roles: NetRoles, runs: CoupledRuns, board) -> list[GeometricFinding]:
    limits = [r for r in rules.class_pairs if r.has_geometry]
    if not limits or len(runs) == 0:
        return []
    p = runs.pieces
    order = runs.piece_order
    piece_run = np.repeat(np.arange(len(runs)), np.diff(runs.run_start))
    ca, cb = roles.class_index[runs.net_a], roles.class_index[runs.net_b]
    forward = class_pair_rules(limits, roles.classes, ca, cb)
    backward = class_pair_rules(limits, roles.classes, cb, ca)
    out = []
    # a run meets a rule as aggressor -> victim in either direction; a rule met both ways counts once
    for rule, is_forward in ((forward, True), (np.where(backward != forward, backward, -1), False)):
        within = np.array([r.within_spacing_mm for r in limits] + [-np.inf])[rule]
        most = np.array([r.max_parallel_mm for r in limits] + [np.inf])[rule]
        close = (p.spacing_mean_mm[order] <= within[piece_run]) * p.length_mm[order]
        parallel = np.bincount(piece_run, weights=close, minlength=len(runs))
        for r in np.flatnonzero((rule >= 0) & (parallel > most)):
            limit = limits[rule[r]]
            a, v = (runs.net_a[r], runs.net_b[r]) if is_forward else (runs.net_b[r], runs.net_a[r])
            out.append(GeometricFinding(
                status="fail", aggressor=board.nets[a], victim=board.nets[v],
                aggressor_class=limit.aggressor_class, victim_class=limit.victim_class,
                layers=[board.layers[i].name for i in runs.layers_of(int(r))],
                parallel_mm=round(float(parallel[r]), 3), max_parallel_mm=limit.max_parallel_mm,
                within_spacing_mm=limit.within_spacing_mm, min_spacing_mm=round(float(runs.spacing_min_mm[r]), 4),
                x_mm=round(float(runs.worst_x_mm[r]), 3), y_mm=round(float(runs.worst_y_mm[r]), 3), run=int(r)))
    return sorted(out, key=lambda g: -g.parallel_mm / g.max_parallel_mm)
