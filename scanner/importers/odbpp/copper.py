"""ODB++ features of one layer mapped to the board model: trace segments and copper shapes in millimetres.

Lines and flattened arcs become segments; a line shorter than ``ZERO_LENGTH_MM`` is a pad
(the symbol's shape at that point). Pads become shapes (role ``via`` when a VIA subnet of
the EDA data links them, else ``pad``), surface islands become ``region`` shapes.
Negative (``N``) features cut the pads and surfaces drawn before them, as Gerber clear
objects do; traces stay whole.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from scanner.errors import InputError
from scanner.importers.apertures import QUAD_SEGS, swept_width_mm
from scanner.importers.arcs import flatten_arcs
from scanner.importers.gerber_copper import (BYTES_PER_PLACED_SHAPE, ZERO_LENGTH_MM, _cut_clear, _translated,
                                             placing_bytes)
from scanner.memory import check_memory
from scanner.spatial_query import check_index_memory, query_all
from scanner.importers.odbpp.features import FeatureTable
from scanner.importers.odbpp.symbols import placed


@dataclass
class LayerArtwork:
    """Copper of one layer; net names still strings (None where no EDA link)."""

    x0: np.ndarray
    y0: np.ndarray
    x1: np.ndarray
    y1: np.ndarray
    width: np.ndarray
    segment_net: np.ndarray
    geometry: np.ndarray
    shape_net: np.ndarray
    role: np.ndarray


def _objects(items) -> np.ndarray:
    items = list(items)
    out = np.empty(len(items), dtype=object)
    out[:] = items
    return out


def _draw_widths(table: FeatureTable, sym: np.ndarray, dx: np.ndarray, dy: np.ndarray) -> np.ndarray:
    """Width of each draw: a round symbol's diameter, else the symbol's extent across the draw (with a warning)."""
    width = np.zeros(len(sym))
    for k in np.unique(sym):
        idx = np.flatnonzero(sym == k)
        symbol = table.symbols[int(k)]
        if symbol.round_mm is not None:
            width[idx] = symbol.round_mm
        else:
            width[idx] = swept_width_mm(symbol.outline, dx[idx], dy[idx])
            table.log.add(f"line drawn with non-round symbol {symbol.name!r}: width taken as the symbol's extent "
                          "across the draw")
    return width


def draw_pieces(table: FeatureTable) -> dict[str, np.ndarray]:
    """Lines and flattened arc pieces as one set of straight draws, each keeping its feature and symbol."""
    ln, ar = table.lines, table.arcs
    parts = {"feature": [ln["feature"]], "x0": [ln["xs"]], "y0": [ln["ys"]], "x1": [ln["xe"]], "y1": [ln["ye"]],
             "sym": [ln["sym"]]}
    if len(ar["feature"]):
        counts, px, py = flatten_arcs(ar["xs"], ar["ys"], ar["xe"], ar["ye"], ar["xc"], ar["yc"], ar["cw"])
        last = np.cumsum(counts) - 1
        starts = np.setdiff1d(np.arange(len(px)), last)
        owner = np.repeat(np.arange(len(counts)), counts - 1)
        for key, value in (("feature", ar["feature"][owner]), ("x0", px[starts]), ("y0", py[starts]),
                           ("x1", px[starts + 1]), ("y1", py[starts + 1]), ("sym", ar["sym"][owner])):
            parts[key].append(value)
    return {k: np.concatenate(v) for k, v in parts.items()}


def _pad_shapes(table: FeatureTable, feature, x, y, sym, rotation, mirror, scale) -> np.ndarray:
    """Placed symbol outlines, built once per (symbol, orientation, scale) and copied to every position."""
    geoms = np.empty(len(feature), dtype=object)
    keys = np.rec.fromarrays([sym, rotation, mirror, scale]) if len(feature) else []
    points = {int(k): shapely.get_num_coordinates(symbol.outline) for k, symbol in table.symbols.items()}
    check_memory(sum(placing_bytes(int(np.count_nonzero(sym == k)), points[int(k)]) for k in np.unique(sym)),
                 f"placing {len(feature):,} pads", table.src.name)
    for key in np.unique(keys) if len(feature) else []:
        idx = np.flatnonzero(keys == key)
        template = placed(table.symbols[int(key[0])].outline, float(key[1]), bool(key[2]), float(key[3]))
        geoms[idx] = _translated(template, x[idx], y[idx])
    return geoms


def layer_artwork(table: FeatureTable, nets: np.ndarray, via: np.ndarray) -> LayerArtwork:
    """Segments and shapes of one features file; ``nets``/``via`` are per feature (from the EDA links)."""
    draws = draw_pieces(table)
    draws["width"] = _draw_widths(table, draws["sym"], draws["x1"] - draws["x0"], draws["y1"] - draws["y0"])
    positive = table.positive
    f = draws["feature"]
    zero = np.hypot(draws["x1"] - draws["x0"], draws["y1"] - draws["y0"]) < ZERO_LENGTH_MM
    trace = positive[f] & ~zero
    if (thin := np.flatnonzero(trace & (draws["width"] <= 0))).size:
        raise InputError(f"{len(thin):,} line(s) drawn with a symbol of zero size: a conductor needs a width",
                         path=table.src.name, line=int(table.record_line[f[thin[0]]]))

    pads = table.pads
    dot = np.flatnonzero(zero)
    shape_feature = np.concatenate([pads["feature"], f[dot]])
    geoms = np.concatenate([
        _pad_shapes(table, pads["feature"], pads["x"], pads["y"], pads["sym"], pads["rotation"], pads["mirror"],
                    pads["scale"]),
        _pad_shapes(table, f[dot], draws["x0"][dot], draws["y0"][dot], draws["sym"][dot], np.zeros(len(dot)),
                    np.zeros(len(dot), dtype=bool), np.ones(len(dot)))])
    roles = np.where(via[shape_feature], "via", "pad").astype(object)
    surface_feature = np.array([feat for feat, polys in table.surfaces for _ in polys], dtype=np.int64)
    geoms = np.concatenate([geoms, _objects(p for _, polys in table.surfaces for p in polys)])
    roles = np.concatenate([roles, _objects(["region"] * len(surface_feature))])
    shape_feature = np.concatenate([shape_feature, surface_feature])

    # negative draws cut like negative pads and surfaces
    cut_draw = np.flatnonzero(~positive[f] & ~zero)
    capsules = shapely.buffer(shapely.linestrings(np.stack(
        [np.column_stack([draws["x0"][cut_draw], draws["y0"][cut_draw]]),
         np.column_stack([draws["x1"][cut_draw], draws["y1"][cut_draw]])], axis=1).reshape(-1, 2, 2)),
        draws["width"][cut_draw] / 2, quad_segs=QUAD_SEGS) if len(cut_draw) else np.zeros(0, dtype=object)
    dark = positive[shape_feature]
    clear = np.concatenate([geoms[~dark], capsules])
    clear_order = np.concatenate([shape_feature[~dark], f[cut_draw]])
    geometry, order = geoms[dark], shape_feature[dark]
    if len(clear):
        geometry = _cut_clear(geometry, order, clear, clear_order)
        _note_cleared_traces(table, draws, trace, clear, clear_order)
    keep = ~shapely.is_empty(geometry) if len(geometry) else np.zeros(0, dtype=bool)
    return LayerArtwork(
        x0=draws["x0"][trace], y0=draws["y0"][trace], x1=draws["x1"][trace], y1=draws["y1"][trace],
        width=draws["width"][trace], segment_net=nets[f[trace]],
        geometry=geometry[keep], shape_net=nets[order[keep]], role=roles[dark][keep])


def _note_cleared_traces(table: FeatureTable, draws: dict, trace: np.ndarray, clear, clear_order) -> None:
    idx = np.flatnonzero(trace)
    if not len(idx):
        return
    check_index_memory(len(idx), BYTES_PER_PLACED_SHAPE, "traces under negative features")
    lines = shapely.linestrings(np.stack([np.column_stack([draws["x0"][idx], draws["y0"][idx]]),
                                          np.column_stack([draws["x1"][idx], draws["y1"][idx]])], axis=1))
    grown = shapely.buffer(lines, draws["width"][idx] / 2, quad_segs=2)
    hit_line, hit_clear = query_all(shapely.STRtree(clear), grown, f"{len(clear):,} negative features over traces",
                                    keep=lambda q, t: shapely.intersects(grown[q], clear[t]))
    earlier = draws["feature"][idx][hit_line] < clear_order[hit_clear]
    count = len(np.unique(hit_line[earlier]))
    if count:
        table.log.add(f"{count} trace segment(s) drawn positive and later partly cut by negative features; "
                      "kept whole as traces")


def feature_image(table: FeatureTable) -> shapely.Geometry:
    """Everything the features draw, as one area: positive features minus the negative ones after them."""
    art = layer_artwork(table, np.full(table.count, None, dtype=object), np.zeros(table.count, dtype=bool))
    lines = shapely.linestrings(np.stack([np.column_stack([art.x0, art.y0]), np.column_stack([art.x1, art.y1])],
                                         axis=1)) if len(art.x0) else np.zeros(0, dtype=object)
    capsules = shapely.buffer(lines, art.width / 2, quad_segs=QUAD_SEGS) if len(art.x0) else lines
    return shapely.union_all(np.concatenate([capsules, art.geometry]))
