"""Each scanned layer's reference in words: what its traces are referenced to, and on what evidence."""
from __future__ import annotations

from dataclasses import dataclass

from scanner.board.layerstack import LayerEnvironment
from scanner.board.model import Board

#: why a layer counts as a plane, by where its kind came from
PLANE_EVIDENCE = {
    "gerber-x2": "its Gerber X2 file function says so",
    "job-file": "the Gerber job file says so",
    "board-file": "the board file lists it as a plane",
    "odbpp-matrix": "the ODB++ matrix marks it power/ground",
}

FAR_SIDE_NOTE = "referenced to the far side: coupling is stronger than over a plane"


@dataclass(frozen=True)
class ReferenceText:
    """``reference``: e.g. "microstrip over L02 plane, 0.2 mm"; ``evidence``: why that is the reference."""

    reference: str
    evidence: str


def describe_reference(board: Board, env: LayerEnvironment, plane_layers) -> ReferenceText:
    """The reference of one scanned layer in words, with its evidence."""
    ref = env.reference
    near = board.layers[ref.layers[0]].name
    height = f"{env.height_mm:.3g} mm"
    own = "plane layer; its traces: " if env.on_plane else ""
    if ref.kind == "plane":
        if env.structure == "stripline":
            upper, lower = (board.layers[i].name for i in sorted(ref.layers))
            text = f"stripline between {upper} and {lower} planes, {height} to {near}"
        else:
            text = f"microstrip over {near} plane, {height}"
        evidence = "; ".join(f"{board.layers[i].name} is a plane: {plane_evidence(board, i, plane_layers)}"
                             for i in sorted(ref.layers))
        return ReferenceText(own + text, evidence)
    fill = board.layers[ref.layers[0]].fill_ratio or 0.0
    text = (f"microstrip over {near} pour, {height}" if ref.kind == "pour"
            else f"microstrip over the far side ({near}), {height}")
    poured = f"{near} pours cover {100 * fill:.0f} % of the board" if fill >= 0.005 else f"{near} carries no pour"
    others = " other than its own" if env.on_plane else ""
    return ReferenceText(own + text, f"no plane layer on the board{others}; {poured}; {FAR_SIDE_NOTE}")


def plane_evidence(board: Board, index: int, plane_layers) -> str:
    """Why copper layer ``index`` counts as a plane."""
    layer = board.layers[index]
    if layer.kind != "plane" and index in plane_layers:
        return "the rules' planes list names it"
    if layer.kind_evidence:
        return layer.kind_evidence
    if layer.kind_source == "fill-ratio":
        return f"pours cover {100 * (layer.fill_ratio or 0.0):.0f} % of the board"
    return PLANE_EVIDENCE.get(layer.kind_source, f"marked as a plane ({layer.kind_source})")
