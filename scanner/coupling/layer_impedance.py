"""Per signal layer: structure, reference planes, heights, and the impedances at the board's own geometry.

The table a designer holds against the fabricator's impedance table. For each
signal layer: the single-ended Z0 at the layer's most used trace width, and the
differential impedance at the most used gap between the two legs of the board's
differential pairs where they run side by side on that layer (at the pairs' own
most used width). Both come from the field solver in the layer's cross-section,
the same one the crosstalk tables use. Legs further apart than two
trace-to-plane heights (fan-outs at pads) do not count; a layer with no pair
routed on it gets its differential figure at a gap of one trace width, marked
as assumed.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.board.layerstack import BoardEnvironments
from scanner.board.model import Board
from scanner.coupling.coefficients import most_used_width, section_arguments
from scanner.coupling.finder import CoupledPieces, find_coupled_pieces
from scanner.physics import differential_impedance, trace_impedance

#: pair legs are searched for each other this far apart, edge to edge (mm)
PAIR_SEARCH_MM = 1.0
#: gaps are counted on this grid (mm) when finding the most used one
GAP_GRID_MM = 0.001
#: legs further apart than this many trace-to-plane heights (or trace widths, if more) barely couple:
#: such stretches (fan-outs at pads) do not count as the pair's routed gap
PAIR_GAP_LIMIT = 2.0
GAP_FROM_PAIRS = "pairs"
GAP_ASSUMED = "assumed: no pair routed on this layer, gap = width"


@dataclass(frozen=True)
class SignalLayerRow:
    """One signal layer's cross-section and its impedances; figures are None where the layer is not scanned."""

    name: str
    index: int
    structure: str  # microstrip, stripline, dual stripline, ... or "none" (not scanned)
    references: tuple[str, ...]
    height_mm: float | None  # trace base to its (nearer) reference
    height_second_mm: float | None  # trace base to the second plane of a stripline
    trace_thickness_mm: float | None
    width_mm: float | None
    z0_ohm: float | None
    pair_width_mm: float | None
    gap_mm: float | None
    gap_source: str | None
    zdiff_ohm: float | None

    @property
    def scanned(self) -> bool:
        return self.height_mm is not None

    def to_dict(self) -> dict:
        def r(value, digits):
            return None if value is None else round(float(value), digits)
        return {"name": self.name, "structure": self.structure, "references": list(self.references),
                "height_mm": r(self.height_mm, 4), "height_second_mm": r(self.height_second_mm, 4),
                "trace_thickness_mm": r(self.trace_thickness_mm, 4), "width_mm": r(self.width_mm, 4),
                "z0_ohm": r(self.z0_ohm, 2), "pair_width_mm": r(self.pair_width_mm, 4), "gap_mm": r(self.gap_mm, 4),
                "gap_source": self.gap_source, "zdiff_ohm": r(self.zdiff_ohm, 2)}


def pair_pieces(board: Board, layers, partner: np.ndarray) -> CoupledPieces:
    """Coupled pieces between the two legs of each differential pair on ``layers`` (indices into board.layers).

    ``partner``: per net id, its partner's id or -1 (``NetRoles.partner``)."""
    segments = {i: board.layers[i].segments for i in layers}
    pieces = find_coupled_pieces(segments, PAIR_SEARCH_MM, net_active=partner >= 0)
    return pieces.take(partner[pieces.net_a] == pieces.net_b)


def most_used_gap(pieces: CoupledPieces, layer: int, max_gap_mm: float) -> tuple[float, float] | None:
    """(gap, width) in mm carrying the most pair length on ``layer`` among gaps up to ``max_gap_mm``;
    None without such pair pieces there."""
    on = ((pieces.layer == layer) & (pieces.spacing_mean_mm > 0) & (pieces.spacing_mean_mm <= max_gap_mm)
          & (pieces.width_a_mm + pieces.width_b_mm > 0))
    if not on.any():
        return None
    gap = np.round(pieces.spacing_mean_mm[on] / GAP_GRID_MM) * GAP_GRID_MM
    width = np.round(0.5 * (pieces.width_a_mm[on] + pieces.width_b_mm[on]), 4)
    keys, inverse = np.unique(np.c_[gap, width], axis=0, return_inverse=True)
    length = np.bincount(inverse.ravel(), weights=pieces.length_mm[on])
    best = keys[np.argmax(length)]
    return float(best[0]), float(best[1])


def signal_layer_table(board: Board, env: BoardEnvironments, pairs: CoupledPieces) -> list[SignalLayerRow]:
    """One row per copper layer that is not a plane, top to bottom. ``pairs``: pieces from ``pair_pieces``."""
    widths = most_used_width({layer.index: layer.segments for layer in board.layers})
    dual = {i for pair in env.broadside for i in pair}
    rows = []
    for layer in board.layers:
        if layer.index in env.plane_layers:
            continue
        e = env.signal.get(layer.index)
        if e is None:
            rows.append(SignalLayerRow(layer.name, layer.index, "none", (), None, None, None,
                                       widths.get(layer.index), None, None, None, None, None))
            continue
        args = section_arguments(e)
        width = widths.get(layer.index)
        found = most_used_gap(pairs, layer.index, PAIR_GAP_LIMIT * max(e.height_mm, width or 0.0))
        pair_width, gap, source = (found[1], found[0], GAP_FROM_PAIRS) if found else (width, width, GAP_ASSUMED)
        rows.append(SignalLayerRow(
            layer.name, layer.index, "dual stripline" if layer.index in dual else e.structure,
            tuple(board.layers[k].name for k in e.reference.layers), e.height_mm,
            sum(t for t, _ in e.away) if args["planes"] == "both" else None, e.trace_thickness_mm,
            width, None if width is None else trace_impedance(width, **args),
            pair_width, gap, None if gap is None else source,
            None if gap is None else differential_impedance(pair_width, gap, **args)))
    return rows
