"""What the overlays show: which findings, where their markers sit, which traces they highlight.

A coupled run scored in both directions gives two findings at the same place; they
share one marker whose label lists both ranks. Trace roles (victim, aggressor)
follow the best-ranked finding of each run. A run that changes layer has a marker
on every layer it uses: at the finding's location on its main layer, at the middle
of its longest piece on the others.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board import Board, TraceSegments
from scanner.score import STATUS_ORDER, Hotspot, ScanResult

#: findings that pass their budgets are drawn only within this many top ranks
PASS_SHOWN_TOP = 10


@dataclass(frozen=True)
class Mark:
    """One marker: board position (mm), label text (ranks), worst status, best rank, copper side."""

    x_mm: float
    y_mm: float
    text: str
    status: str
    rank: int
    side: str


@dataclass(frozen=True)
class RoleTraces:
    """Victim and aggressor trace segments to highlight on one layer."""

    victim: TraceSegments
    aggressor: TraceSegments


def shown_hotspots(hotspots: list[Hotspot], pass_top: int = PASS_SHOWN_TOP) -> list[Hotspot]:
    """Findings with status fail or warn, and passing ones among the first ``pass_top`` ranks."""
    return [h for h in hotspots if h.status != "pass" or h.rank <= pass_top]


def by_run(hotspots: list[Hotspot]) -> dict[int, list[Hotspot]]:
    """Findings grouped by coupled run, each group in rank order, groups in order of their best rank."""
    groups: dict[int, list[Hotspot]] = {}
    for h in sorted(hotspots, key=lambda h: h.rank):
        groups.setdefault(h.run, []).append(h)
    return groups


def _label(group: list[Hotspot]) -> tuple[str, str, int]:
    status = min((h.status for h in group), key=STATUS_ORDER.__getitem__)
    return ",".join(str(h.rank) for h in group), status, group[0].rank


def run_rows_on(result: ScanResult, run: int, layer_index: int) -> np.ndarray:
    """Rows of ``result.runs.pieces`` of one run on one layer, in order along the run."""
    rows = result.runs.pieces_of(run)
    return rows[result.runs.pieces.layer[rows] == layer_index]


def layer_marks(result: ScanResult, board: Board, hotspots: list[Hotspot], layer_index: int) -> list[Mark]:
    """Markers on one layer for the runs of the given findings that have pieces there."""
    p = result.runs.pieces
    side = board.layers[layer_index].side
    marks = []
    for run, group in by_run(hotspots).items():
        rows = run_rows_on(result, run, layer_index)
        if len(rows) == 0:
            continue
        if int(result.runs.main_layer[run]) == layer_index:
            x, y = group[0].x_mm, group[0].y_mm
        else:
            k = rows[np.argmax(p.length_mm[rows])]
            x, y = 0.5 * (p.x0_mm[k] + p.x1_mm[k]), 0.5 * (p.y0_mm[k] + p.y1_mm[k])
        marks.append(Mark(float(x), float(y), *_label(group), side))
    return marks


def composite_marks(result: ScanResult, board: Board, hotspots: list[Hotspot]) -> list[Mark]:
    """One marker per run at its findings' location, shaped by the side of its main layer."""
    return [Mark(group[0].x_mm, group[0].y_mm, *_label(group), board.layers[int(result.runs.main_layer[run])].side)
            for run, group in by_run(hotspots).items()]


def role_segments(result: ScanResult, board: Board, hotspot: Hotspot, layer_index: int) -> tuple[np.ndarray, np.ndarray]:
    """Segment indices (on the layer) of the victim and of the aggressor along the finding's run."""
    p = result.runs.pieces
    rows = run_rows_on(result, hotspot.run, layer_index)
    victim_is_a = p.net_a[rows] == board.net_id(hotspot.victim)
    victim = np.where(victim_is_a, p.seg_a[rows], p.seg_b[rows])
    aggressor = np.where(victim_is_a, p.seg_b[rows], p.seg_a[rows])
    return np.unique(victim), np.unique(aggressor)


def layer_roles(result: ScanResult, board: Board, hotspots: list[Hotspot], layer_index: int) -> RoleTraces:
    """Victim and aggressor segments of the given findings' runs on one layer (roles of each run's best rank).

    A trace that is victim in one run and aggressor in another is listed as victim only.
    """
    pairs = [role_segments(result, board, group[0], layer_index) for group in by_run(hotspots).values()]
    empty = np.zeros(0, dtype=np.int64)
    victim = np.unique(np.concatenate([v for v, _ in pairs] + [empty]))
    aggressor = np.setdiff1d(np.concatenate([a for _, a in pairs] + [empty]), victim)
    segments = board.layers[layer_index].segments
    return RoleTraces(segments.select(victim), segments.select(aggressor))


def layers_with_findings(result: ScanResult, hotspots: list[Hotspot]) -> list[int]:
    """Indices of the layers where any of the findings' runs has a piece, in stack order."""
    layers = {k for run in by_run(hotspots) for k in result.runs.layers_of(run)}
    return sorted(layers)
