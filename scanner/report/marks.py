"""What the overlays show: which findings, where their markers sit, which traces they highlight.

Findings are the ranked noise findings (labelled by rank) and the broken
geometric limits (labelled G1, G2, … in report order). A noise finding and a
broken limit on the same coupled run share one marker whose label lists both.
Trace roles (victim, aggressor) follow the first finding of each run (for a noise
finding, its worse direction). A run that changes layer has a marker on every layer it uses: at the
finding's location on its main layer, at the middle of its longest piece on the others.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board.model import Board, TraceSegments
from scanner.scoring.results import STATUS_ORDER, Hotspot, ScanResult

#: findings that pass their budgets are drawn only within this many top ranks
PASS_SHOWN_TOP = 10


@dataclass(frozen=True)
class Finding:
    """One thing to mark: its run, victim net, label, status, drawing priority, location (mm) and a line
    of text naming the nets and figures (the hover title in vector output)."""

    run: int
    victim: str
    label: str
    status: str
    order: int
    x_mm: float
    y_mm: float
    title: str = ""


@dataclass(frozen=True)
class Mark:
    """One marker: board position (mm), label text, worst status, priority (lower first), copper side,
    hover title."""

    x_mm: float
    y_mm: float
    text: str
    status: str
    order: int
    side: str
    title: str = ""


@dataclass(frozen=True)
class RoleTraces:
    """Victim and aggressor trace segments to highlight on one layer."""

    victim: TraceSegments
    aggressor: TraceSegments


def geometric_label(index: int) -> str:
    """Label of the broken geometric limit at ``index`` (0-based) in the report's list."""
    return f"G{index + 1}"


def has_geometric(marks: list[Mark]) -> bool:
    """Whether any marker carries a broken geometric limit."""
    return any(part.startswith("G") for m in marks for part in m.text.split(","))


def shown_findings(result: ScanResult, pass_top: int = PASS_SHOWN_TOP) -> list[Finding]:
    """Noise findings with status fail or warn, passing ones among the first ``pass_top`` ranks, and every
    broken geometric limit."""
    out = [Finding(h.run, h.victim, str(h.rank), h.status, h.rank, h.x_mm, h.y_mm, hotspot_title(h))
           for h in result.hotspots if h.status != "pass" or h.rank <= pass_top]
    after = len(result.hotspots) + 1
    out += [Finding(g.run, g.victim, geometric_label(i), g.status, after + i, g.x_mm, g.y_mm,
                    f"{geometric_label(i)} {g.victim} beside {g.aggressor}: {g.parallel_mm:.4g} mm within "
                    f"{g.within_spacing_mm:g} mm, limit {g.max_parallel_mm:g} mm")
            for i, g in enumerate(result.geometric)]
    return out


def hotspot_title(h: Hotspot) -> str:
    """One line naming a finding's nets and figures."""
    return (f"#{h.rank} {h.victim} (victim) ← {h.aggressor}: {h.budget_used_pct:.0f} % of budget, "
            f"NEXT {h.next_mv:.4g} mV, FEXT {h.fext_mv:.4g} mV, {h.coupled_length_mm:.4g} mm at "
            f"≥ {h.min_spacing_mm:.3g} mm on {'+'.join(h.layers)}")


def by_run(findings: list[Finding]) -> dict[int, list[Finding]]:
    """Findings grouped by coupled run, each group in order, groups in order of their first finding."""
    groups: dict[int, list[Finding]] = {}
    for f in sorted(findings, key=lambda f: f.order):
        groups.setdefault(f.run, []).append(f)
    return groups


def _mark(group: list[Finding], x: float, y: float, side: str) -> Mark:
    status = min((f.status for f in group), key=STATUS_ORDER.__getitem__)
    return Mark(float(x), float(y), ",".join(f.label for f in group), status, group[0].order, side,
                "\n".join(f.title for f in group))


def run_rows_on(result: ScanResult, run: int, layer_index: int) -> np.ndarray:
    """Rows of ``result.runs.pieces`` of one run with a trace on one layer, in order along the run."""
    rows = result.runs.pieces_of(run)
    p = result.runs.pieces
    return rows[(p.layer[rows] == layer_index) | (p.layer_b[rows] == layer_index)]


def layer_marks(result: ScanResult, board: Board, findings: list[Finding], layer_index: int) -> list[Mark]:
    """Markers on one layer for the runs of the given findings that have pieces there."""
    p = result.runs.pieces
    side = board.layers[layer_index].side
    marks = []
    for run, group in by_run(findings).items():
        rows = run_rows_on(result, run, layer_index)
        if len(rows) == 0:
            continue
        if int(result.runs.main_layer[run]) == layer_index:
            x, y = group[0].x_mm, group[0].y_mm
        else:
            k = rows[np.argmax(p.length_mm[rows])]
            x, y = 0.5 * (p.x0_mm[k] + p.x1_mm[k]), 0.5 * (p.y0_mm[k] + p.y1_mm[k])
        marks.append(_mark(group, x, y, side))
    return marks


def composite_marks(result: ScanResult, board: Board, findings: list[Finding]) -> list[Mark]:
    """One marker per run at its findings' location, with the side of its main layer."""
    return [_mark(group, group[0].x_mm, group[0].y_mm, board.layers[int(result.runs.main_layer[run])].side)
            for run, group in by_run(findings).items()]


def role_segments(result: ScanResult, board: Board, finding: Finding | Hotspot,
                  layer_index: int) -> tuple[np.ndarray, np.ndarray]:
    """Segment indices (on the layer) of the victim and of the aggressor along the finding's run."""
    p = result.runs.pieces
    rows = run_rows_on(result, finding.run, layer_index)
    victim_is_a = p.net_a[rows] == board.net_id(finding.victim)
    a_here, b_here = p.layer[rows] == layer_index, p.layer_b[rows] == layer_index  # broadside: one of the two
    victim = np.concatenate([p.seg_a[rows][victim_is_a & a_here], p.seg_b[rows][~victim_is_a & b_here]])
    aggressor = np.concatenate([p.seg_b[rows][victim_is_a & b_here], p.seg_a[rows][~victim_is_a & a_here]])
    return np.unique(victim), np.unique(aggressor)


def layer_roles(result: ScanResult, board: Board, findings: list[Finding], layer_index: int) -> RoleTraces:
    """Victim and aggressor segments of the findings' runs on one layer (roles of each run's first finding).

    A trace that is victim in one run and aggressor in another is listed as victim only.
    """
    pairs = [role_segments(result, board, group[0], layer_index) for group in by_run(findings).values()]
    empty = np.zeros(0, dtype=np.int64)
    victim = np.unique(np.concatenate([v for v, _ in pairs] + [empty]))
    aggressor = np.setdiff1d(np.concatenate([a for _, a in pairs] + [empty]), victim)
    segments = board.layers[layer_index].segments
    return RoleTraces(segments.select(victim), segments.select(aggressor))


def layers_with_findings(result: ScanResult, findings: list[Finding]) -> list[int]:
    """Indices of the layers where any of the findings' runs has a piece, in stack order."""
    return sorted({k for run in by_run(findings) for k in result.runs.layers_of(run)})
