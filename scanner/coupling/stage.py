"""The coupling stage as one call: signal-layer copper in, coupled runs with per-piece coefficients out."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from scanner.board.layerstack import BoardEnvironments, LayerEnvironment
from scanner.board.model import Board
from scanner.board.roles import NetRoles
from scanner.coupling.coefficients import BroadsideLookup, CouplingLookup, PieceCoefficients, most_used_width
from scanner.coupling.finder import CoupledPieces, find_broadside_pieces, find_coupled_pieces
from scanner.coupling.runs import CoupledRuns, build_runs
from scanner.rules import ScanSettings

#: search distance derived from the stackup: this many times each layer's trace-to-reference height
#: (coupling over a plane falls to a few percent of its close-spaced value there), within these limits;
#: the upper one keeps a thick board's far-side reference from searching the whole board
SEARCH_HEIGHTS = 4.0
SEARCH_LIMITS_MM = (0.25, 10.0)
#: pieces of one net pair further apart than this along the run become separate runs (hotspots)
RUN_GAP_MM = 5.0
#: smallest edge spacing used for coefficients (touching copper is a netting fault, not crosstalk)
MIN_SPACING_MM = 0.02


@dataclass(frozen=True)
class CoupledSet:
    """Every coupled run of the board with the coefficients of its pieces.

    ``kept``: runs at least the minimum coupled length long (the ones scored); ``search_distance_mm``: the
    largest search distance, ``search_by_layer_mm`` each scanned layer's own;
    ``broadside_runs``: runs with at least one piece across a dual-stripline layer pair;
    ``lookup``: the per-layer coefficient tables, reused by fix guidance.
    """

    runs: CoupledRuns
    kept: np.ndarray
    coefficients: PieceCoefficients
    broadside_runs: np.ndarray
    lookup: CouplingLookup
    search_distance_mm: float
    search_distance_source: str
    solves: int
    search_by_layer_mm: dict[int, float]


def find_runs(board: Board, env: BoardEnvironments, roles: NetRoles, settings: ScanSettings,
              least_reach_mm: float = 0.0, progress: Callable[[str], None] = lambda _msg: None) -> CoupledSet:
    """Search the scanned signal layers for coupled pieces, join them into runs and look up their coefficients.

    ``least_reach_mm``: the search reaches at least this far (class-pair geometric limits need it).
    """
    by_layer = {i: max(settings.search_distance_mm or _derived_search_mm(e), least_reach_mm)
                for i, e in env.signal.items()}
    search_mm = max(by_layer.values(), default=settings.search_distance_mm or least_reach_mm)
    broadside_mm = max((max(by_layer[a], by_layer[b]) for a, b in env.broadside), default=search_mm)
    source = "rules" if settings.search_distance_mm else f"{SEARCH_HEIGHTS:g} x each layer's trace-to-reference height"

    progress("finding coupled runs")
    layers = {i: board.layers[i].segments for i in env.signal}
    search = dict(angle_tolerance_deg=settings.angle_tolerance_deg, net_active=roles.active, net_partner=roles.partner)
    pieces = CoupledPieces.concat(
        [find_coupled_pieces({i: seg}, search_distance_mm=by_layer[i], **search) for i, seg in layers.items()]
        + [find_broadside_pieces({k: (layers[k[0]], layers[k[1]]) for k in env.broadside},
                                 search_distance_mm=broadside_mm, **search)])
    runs = build_runs(pieces, max_gap_mm=RUN_GAP_MM)
    kept = runs.coupled_length_mm >= settings.min_coupled_length_mm

    progress(f"solving cross-sections for {int(kept.sum())} runs")
    anchors = most_used_width(layers)
    lookup = CouplingLookup(env.signal, by_layer, anchors)
    broadside_lookup = BroadsideLookup(env.broadside, broadside_mm, anchors)
    coefficients = _piece_coefficients(runs.pieces, lookup, broadside_lookup)
    broadside_runs = np.bincount(np.repeat(np.arange(len(runs)), np.diff(runs.run_start)),
                                 weights=runs.pieces.broadside[runs.piece_order], minlength=len(runs)) > 0
    return CoupledSet(runs, kept, coefficients, broadside_runs, lookup, search_mm, source,
                      lookup.solve_count + broadside_lookup.solve_count, by_layer)


def _derived_search_mm(env: LayerEnvironment) -> float:
    return float(np.clip(SEARCH_HEIGHTS * env.height_mm, *SEARCH_LIMITS_MM))


def _piece_coefficients(p, lookup: CouplingLookup, broadside_lookup: BroadsideLookup) -> PieceCoefficients:
    """Kb, Kf, velocity per piece: same-layer pieces by edge spacing, broadside pieces by lateral centre offset."""
    width = 0.5 * (p.width_a_mm + p.width_b_mm)
    kb, kf, velocity = lookup.coefficients(p.layer, width, np.maximum(p.spacing_mean_mm, MIN_SPACING_MM))
    cross = np.flatnonzero(p.broadside)
    if len(cross):
        kb[cross], kf[cross], velocity[cross] = broadside_lookup.coefficients(
            p.layer[cross], p.layer_b[cross], width[cross], p.centre_mean_mm[cross])
    return PieceCoefficients(kb, kf, velocity)
