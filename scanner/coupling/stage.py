"""The coupling stage as one call: signal-layer copper in, coupled runs with per-piece coefficients out."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from scanner.board.layerstack import BoardEnvironments, LayerEnvironment
from scanner.board.model import NO_NET, Board
from scanner.board.netmap import is_synthetic
from scanner.board.pairing import SidePieces, geometry_pairs
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
    ``lookup``: the per-layer coefficient tables, reused by fix guidance;
    ``roles``: the net roles with the pairs found from the routed geometry added.
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
    roles: NetRoles


@dataclass(frozen=True)
class FoundPieces:
    """Coupled pieces between nets that are not differential partners, the roles with every pair, and the
    search distances used (per scanned layer, and across broadside layer pairs)."""

    pieces: CoupledPieces
    roles: NetRoles
    search_distance_mm: float
    search_distance_source: str
    search_by_layer_mm: dict[int, float]
    broadside_mm: float


def find_runs(board: Board, env: BoardEnvironments, roles: NetRoles, settings: ScanSettings,
              least_reach_mm: float = 0.0, progress: Callable[[str], None] = lambda _msg: None) -> CoupledSet:
    """Search the scanned signal layers for coupled pieces, join them into runs and look up their coefficients.

    ``least_reach_mm``: the search reaches at least this far (class-pair geometric limits need it).
    """
    found = find_pieces(board, env, roles, settings, least_reach_mm, progress)
    layers = {i: board.layers[i].segments for i in env.signal}
    runs = build_runs(found.pieces, max_gap_mm=RUN_GAP_MM)
    kept = runs.coupled_length_mm >= settings.min_coupled_length_mm

    progress(f"solving cross-sections for {int(kept.sum())} runs")
    anchors = most_used_width(layers)
    lookup = CouplingLookup(env.signal, found.search_by_layer_mm, anchors)
    broadside_lookup = BroadsideLookup(env.broadside, found.broadside_mm, anchors)
    coefficients = _piece_coefficients(runs.pieces, lookup, broadside_lookup)
    broadside_runs = np.bincount(np.repeat(np.arange(len(runs)), np.diff(runs.run_start)),
                                 weights=runs.pieces.broadside[runs.piece_order], minlength=len(runs)) > 0
    return CoupledSet(runs, kept, coefficients, broadside_runs, lookup, found.search_distance_mm,
                      found.search_distance_source, lookup.solve_count + broadside_lookup.solve_count,
                      found.search_by_layer_mm, found.roles)


def find_pieces(board: Board, env: BoardEnvironments, roles: NetRoles, settings: ScanSettings,
                least_reach_mm: float = 0.0, progress: Callable[[str], None] = lambda _msg: None) -> FoundPieces:
    """Coupled pieces on the scanned signal layers; nets routed as a pair are paired and their pieces dropped.

    The finder skips partners known by name or rules; pairs by geometry need every other
    net's pieces first (a pair is recognised by what runs beside each leg).
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
    if settings.pair_by_geometry != "off" and len(pieces):
        roles = _pair_by_geometry(board.nets, layers, roles, pieces, settings.pair_by_geometry)
        pieces = pieces.take(roles.partner[pieces.net_a] != pieces.net_b)
    return FoundPieces(pieces, roles, search_mm, source, by_layer, broadside_mm)


def _pair_by_geometry(names: list[str], layers: dict, roles: NetRoles, pieces: CoupledPieces, mode: str) -> NetRoles:
    """Roles with the nets routed as differential pairs paired (unnamed nets only, unless ``mode`` is all-nets)."""
    routed = np.zeros(len(names))
    for seg in layers.values():
        named = seg.net != NO_NET
        routed += np.bincount(seg.net[named], weights=seg.length_mm[named], minlength=len(names))
    eligible = roles.active & (roles.partner < 0)
    if mode == "unnamed-nets":
        eligible &= np.fromiter((is_synthetic(name) for name in names), dtype=bool, count=len(names))
    same = np.flatnonzero(~pieces.broadside)
    side = SidePieces(pieces.net_a[same], pieces.net_b[same], pieces.layer[same], pieces.length_mm[same],
                      pieces.spacing_mean_mm[same], 0.5 * (pieces.width_a_mm + pieces.width_b_mm)[same])
    return roles.with_pairs(geometry_pairs(side, routed, eligible), "geometry")


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
