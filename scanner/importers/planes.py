"""Which copper layers are reference planes, and on what evidence."""
from __future__ import annotations

import numpy as np
import shapely

from scanner.board.model import CopperLayer
from scanner.board.netmap import exact_touch
from scanner.memory import check_memory
from scanner.spatial_query import query_all

#: a layer whose pours cover more than this share of the board may be a plane ...
PLANE_FILL_RATIO = 0.4
#: ... when it also carries less than this share of the busiest layer's trace length
PLANE_TRACE_SHARE = 0.25
#: bytes per outline point while pours are merged (peak resident growth measured at about 40 for 20,000
#: overlapping circles; rounded up for outlines that cross more)
BYTES_PER_UNION_POINT = 200


def copper_box(layers: list[CopperLayer], outline=None) -> tuple[float, float, float, float] | None:
    """(x0, y0, x1, y1) in mm of the outline when known, else of all copper; None when there is neither."""
    if outline is not None and not outline.is_empty:
        return tuple(float(v) for v in outline.bounds)
    boxes = []
    for layer in layers:
        s = layer.segments
        if len(s):
            boxes.append((min(s.x0.min(), s.x1.min()), min(s.y0.min(), s.y1.min()),
                          max(s.x0.max(), s.x1.max()), max(s.y0.max(), s.y1.max())))
        if len(layer.shapes):
            b = shapely.total_bounds(layer.shapes.geometry)
            if np.isfinite(b).all():
                boxes.append(tuple(b))
    if not boxes:
        return None
    b = np.array(boxes)
    return float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max())


def board_area_mm2(layers: list[CopperLayer], outline=None) -> float:
    """Area of the outline when known, else of the box around all copper."""
    if outline is not None and not outline.is_empty:
        return float(outline.area)
    box = copper_box(layers)
    return 0.0 if box is None else (box[2] - box[0]) * (box[3] - box[1])


def fill_ratio(layer: CopperLayer, area_mm2: float) -> float:
    """Share of the board covered by the layer's pours (regions)."""
    regions = layer.shapes.geometry[layer.shapes.role == "region"] if len(layer.shapes) else []
    if area_mm2 <= 0 or not len(regions):
        return 0.0
    # pours rarely overlap; a union (costly on board-sized outlines) is needed only when they do
    q, _ = query_all(shapely.STRtree(regions), regions, f"{len(regions):,} pours of {layer.name}",
                     keep=lambda q, t: (q < t) & exact_touch(regions[q], regions[t]))
    if len(q):
        check_memory(shapely.get_num_coordinates(regions).sum() * BYTES_PER_UNION_POINT,
                     f"merging {len(regions):,} overlapping pours of {layer.name}")
    covered = shapely.union_all(regions).area if len(q) else shapely.area(regions).sum()
    return float(covered / area_mm2)


def classify_planes(layers: list[CopperLayer], hints: list[tuple[str | None, str | None]],
                    board_planes: set[int] | None, outline=None) -> None:
    """Set ``kind``, ``kind_source`` and ``fill_ratio`` on each layer.

    ``board_planes`` (layer indices from the board file) is taken as the complete list when given;
    otherwise X2 or job-file hints decide, and the fill ratio decides the rest.
    """
    area = board_area_mm2(layers, outline)
    busiest = max((layer.trace_length_mm for layer in layers), default=0.0)
    for layer, (hint, source) in zip(layers, hints):
        layer.fill_ratio = fill_ratio(layer, area)
        if board_planes is not None:
            layer.kind, layer.kind_source = ("plane" if layer.index in board_planes else "signal"), "board-file"
        elif hint is not None:
            layer.kind, layer.kind_source = hint, source
        else:
            few_traces = busiest <= 0 or layer.trace_length_mm < PLANE_TRACE_SHARE * busiest
            is_plane = layer.fill_ratio > PLANE_FILL_RATIO and few_traces
            layer.kind, layer.kind_source = ("plane" if is_plane else "signal"), "fill-ratio"
