"""Drill layers (matrix ``TYPE=DRILL``) to holes: pads are holes of the symbol's diameter, drawn slots rows of holes.

Plating, strongest first: the feature's ``.drill`` attribute (``plated``, ``non_plated``,
``via``, or the option numbers 0, 1, 2 in that order, from memory of the attribute's
option list); the layer name (``npth``, ``non_plated`` … as for Excellon file names);
otherwise plated, with a warning.
"""
from __future__ import annotations

import numpy as np

from scanner.board.model import NO_NET, Holes
from scanner.importers.excellon import plating_from_name
from scanner.importers.odbpp.copper import draw_pieces
from scanner.importers.odbpp.features import FeatureTable
from scanner.input_limits import OBJECTS, check_count, check_range

_DRILL_PLATED = {"plated": True, "via": True, "non_plated": False, "0": True, "2": True, "1": False}


def _diameters(table: FeatureTable, sym: np.ndarray, feature: np.ndarray) -> np.ndarray:
    """Hole diameter of each feature from its symbol, each within the physical range of a drill."""
    out = np.zeros(len(sym))
    for k in np.unique(sym):
        symbol = table.symbols[int(k)]
        if symbol.round_mm is not None:
            diameter = symbol.round_mm
        else:
            x0, y0, x1, y1 = symbol.outline.bounds if not symbol.outline.is_empty else (0, 0, 0, 0)
            diameter = min(x1 - x0, y1 - y0)
            table.log.add(f"drill symbol {symbol.name!r} is not round; its smaller extent taken as the diameter")
        first = int(feature[np.argmax(sym == k)])
        out[sym == k] = check_range("drill diameter", diameter, f"drill symbol {symbol.name!r} diameter",
                                    table.src.name, int(table.record_line[first]))
    return out


def _slot_points(table: FeatureTable, x0, y0, x1, y1, dia) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Holes along each slot, spaced at most half a diameter; returns x, y, diameter and the slot index.
    The holes are counted against the object limit before any is made."""
    length = np.hypot(x1 - x0, y1 - y0)
    n = np.ceil(length / np.maximum(dia / 2, 1e-3)).astype(np.int64) + 1
    check_count(int(n.sum()) + len(table.pads["feature"]), OBJECTS, "holes (slots counted as rows of holes)",
                table.src.name)
    owner = np.repeat(np.arange(len(x0)), n)
    t = (np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n)) / np.maximum(n - 1, 1)[owner]
    return x0[owner] + (x1 - x0)[owner] * t, y0[owner] + (y1 - y0)[owner] * t, dia[owner], owner


def drill_holes(table: FeatureTable, layer_name: str) -> Holes:
    """Holes of one drill layer (mm); nets are left to the net map."""
    layer_default = plating_from_name(layer_name)
    plated_by_feature = np.full(table.count, layer_default if layer_default is not None else True)
    stated = np.zeros(table.count, dtype=bool)
    for i in range(table.count):
        value = table.attribute(i, ".drill")
        if value is not None and value.lower() in _DRILL_PLATED:
            plated_by_feature[i], stated[i] = _DRILL_PLATED[value.lower()], True
    if layer_default is None and not stated.all():
        table.log.add("plating not stated by .drill or the layer name; holes taken as plated")

    pads = table.pads
    xs, ys, ds, fs = [pads["x"]], [pads["y"]], [_diameters(table, pads["sym"], pads["feature"])], [pads["feature"]]
    slots = draw_pieces(table)
    if len(slots["feature"]):
        x, y, d, owner = _slot_points(table, slots["x0"], slots["y0"], slots["x1"], slots["y1"],
                                      _diameters(table, slots["sym"], slots["feature"]))
        xs.append(x)
        ys.append(y)
        ds.append(d)
        fs.append(slots["feature"][owner])
        table.log.add(f"{len(np.unique(slots['feature']))} drawn slot(s) kept as rows of holes")
    feature = np.concatenate(fs).astype(np.int64)
    keep = table.positive[feature]
    return Holes(np.concatenate(xs)[keep], np.concatenate(ys)[keep], np.concatenate(ds)[keep],
                 plated_by_feature[feature[keep]], np.full(int(keep.sum()), NO_NET, dtype=np.int32))
