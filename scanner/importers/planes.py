"""Which copper layers are reference planes, and on what evidence.

Stated kinds win (the board file's ``planes``, X2 ``.FileFunction``, the job file, the ODB++
matrix). Otherwise each layer's pour fill is measured inside the board — the share of the
board's area its pours cover, pours drawn as regions, as strokes or as a negative image
alike — and compared with the board's other layers: a layer is a plane when its fill is high
for this board and it carries few traces. Outer layers carry the components and their
pours usually surround signal traces, so there "few" means almost none.
"""
from __future__ import annotations

import numpy as np

from scanner.board.coverage import Grid, draw
from scanner.board.model import CopperLayer
from scanner.importers.board_extent import OUTLINE_FROM, BoardExtent, board_extent

#: a plane's fill is at least this share of the board's area ...
PLANE_MIN_FILL = 0.15
#: ... and at least this fraction of the best-filled layer's
PLANE_FILL_OF_BEST = 0.5
#: an inner plane carries less than this share of the busiest layer's trace length ...
PLANE_TRACE_SHARE = 0.25
#: ... an outer one less than this
OUTER_PLANE_TRACE_SHARE = 0.05


def pour_fill(layers: list[CopperLayer], extent: BoardExtent | None) -> list[float]:
    """Per layer, the share of the board's area covered by its pours (region shapes), measured on a grid."""
    if extent is None or extent.area_mm2 <= 0:
        return [0.0] * len(layers)
    grid = Grid.over(tuple(float(v) for v in extent.shape.bounds))
    inside = draw(grid, polygons=[extent.shape])
    weight = float(inside.sum())
    if weight <= 0:
        return [0.0] * len(layers)
    fills = []
    for layer in layers:
        shapes = layer.shapes
        pours = shapes.geometry[shapes.role == "region"] if len(shapes) else []
        fills.append(float((draw(grid, polygons=pours) * inside).sum() / weight) if len(pours) else 0.0)
    return fills


def classify_planes(layers: list[CopperLayer], hints: list[tuple[str | None, str | None]],
                    board_planes: set[int] | None, extent=None, notes: list[str] | None = None) -> None:
    """Set ``kind``, ``kind_source``, ``fill_ratio`` and ``kind_evidence`` on each layer.

    ``board_planes`` (layer indices from the board file) is taken as the complete list when given;
    otherwise X2, job-file or matrix hints decide, and the pour fill decides the rest. ``extent`` is
    a :class:`BoardExtent`, an outline geometry (the ODB++ profile) or None (then the copper's own
    extent). ``notes`` adds per-layer words to the evidence (strokes read as pour, a negative image).
    """
    if extent is not None and not isinstance(extent, BoardExtent):
        extent = BoardExtent(extent, f"{OUTLINE_FROM} the step profile")
    if extent is None:
        extent = board_extent(layers, np.zeros((0, 2)))
    fills = pour_fill(layers, extent)
    traces = [layer.trace_length_mm for layer in layers]
    busiest = max(traces, default=0.0)
    best = max(fills, default=0.0)
    where = "inside the outline" if extent is not None and extent.is_outline else "inside the board extent"
    for k, (layer, (hint, source)) in enumerate(zip(layers, hints)):
        layer.fill_ratio = fills[k]
        others = fills[:k] + fills[k + 1:]
        median = float(np.median(others)) if others else 0.0
        share = traces[k] / busiest if busiest > 0 else 0.0
        measured = (f"pour fill {fills[k]:.2f} {where} vs {median:.2f} median of the other layers; traces "
                    f"{traces[k] / 1000:.2f} m, {share:.0%} of the busiest layer's")
        if notes and notes[k]:
            measured += f"; {notes[k]}"
        if board_planes is not None:
            layer.kind, layer.kind_source = ("plane" if layer.index in board_planes else "signal"), "board-file"
            listed = "as a plane" if layer.kind == "plane" else "not as a plane"
            layer.kind_evidence = f"listed {listed} in the board file"
        elif hint is not None:
            layer.kind, layer.kind_source = hint, source
            layer.kind_evidence = f"{hint} by {source}; {measured}"
        else:
            filled = fills[k] >= PLANE_MIN_FILL and fills[k] >= PLANE_FILL_OF_BEST * best
            limit = PLANE_TRACE_SHARE if layer.side == "inner" else OUTER_PLANE_TRACE_SHARE
            is_plane = filled and share < limit
            layer.kind, layer.kind_source = ("plane" if is_plane else "signal"), "fill-ratio"
            why = ("fill high and few traces" if is_plane else "fill low for this board" if not filled
                   else f"{'many traces' if layer.side == 'inner' else 'traces on an outer layer'} "
                        f"(a plane has under {limit:.0%})")
            layer.kind_evidence = f"{layer.kind}: {why}; {measured}"
