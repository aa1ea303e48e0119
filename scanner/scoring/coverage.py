"""What a scan checked: signal trace searched per layer, each layer's reference, and why anything was not.

Signal trace is trace on nets that are not power or ground (those are references, never victims or
aggressors) plus trace that carries no net at all. It counts as checked when it lies on a scanned layer
and belongs to a net; every millimetre that does not is named in ``unchecked``, which makes the verdict
incomplete unless something fails.
"""
from __future__ import annotations

import math

import numpy as np

from scanner.board.layerstack import BoardEnvironments
from scanner.board.model import Board
from scanner.board.netmap import is_synthetic
from scanner.board.references import describe_reference
from scanner.board.roles import NetRoles
from scanner.coupling.stage import CoupledSet
from scanner.scoring.results import rounded


def coverage_and_gaps(board: Board, roles: NetRoles, env: BoardEnvironments,
                      coupled: CoupledSet) -> tuple[dict, list[str]]:
    """The ``coverage`` record of report.json and the reasons part of the board was not checked."""
    unnamed = np.array([is_synthetic(n) for n in board.nets] + [False], dtype=bool)
    active = np.r_[np.asarray(roles.active, dtype=bool), True]  # the extra entry: trace without a net
    layers, gaps = [], []
    signal_mm = scanned_mm = power_mm = no_net_mm = unnamed_mm = 0.0
    signal_nets: set[int] = set()
    for layer in board.layers:
        seg = layer.segments
        net = np.where(seg.net >= 0, seg.net, len(board.nets))
        length = seg.length_mm
        is_signal = active[net]
        on_net = is_signal & (seg.net >= 0)
        layer_signal = float(length[is_signal].sum())
        layer_no_net = float(length[seg.net < 0].sum())
        power_mm += float(length[~is_signal].sum())
        signal_mm += layer_signal
        unnamed_mm += float(length[on_net & unnamed[net]].sum())
        row = {"name": layer.name, "role": "plane" if layer.index in env.plane_layers else "signal",
               "scanned": layer.index in env.signal, "signal_trace_mm": rounded(layer_signal, 1)}
        if layer.index in env.signal:
            e = env.signal[layer.index]
            words = describe_reference(board, e, env.plane_layers)
            row |= {"reference": words.reference, "reference_kind": e.reference.kind,
                    "reference_layers": [board.layers[i].name for i in e.reference.layers],
                    "evidence": words.evidence, "height_mm": rounded(e.height_mm, 4),
                    "search_distance_mm": rounded(coupled.search_by_layer_mm[layer.index], 4), "reason": None}
            scanned_mm += layer_signal - layer_no_net
            no_net_mm += layer_no_net
            signal_nets.update(np.unique(seg.net[on_net]).tolist())
            if layer_no_net > 0:
                gaps.append(f"layer {layer.name}: {layer_no_net:,.1f} mm of trace carries no net and was not searched")
        else:
            why = env.skipped.get(layer.index, "reference plane, no traces on it")
            row |= {"reference": None, "reference_kind": None, "reference_layers": [], "evidence": None,
                    "height_mm": None, "search_distance_mm": None, "reason": why}
            if layer_signal > 0:
                gaps.append(f"layer {layer.name} not searched ({why}): {layer_signal:,.1f} mm of signal trace")
        layers.append(row)
    shapes = sum(len(layer.shapes) for layer in board.layers)
    if signal_mm == 0 and power_mm == 0 and shapes:
        gaps.append(f"no trace draws on any layer: the copper ({shapes} pads and regions) was not searched for "
                    f"coupling, which reads traces only")
    elif signal_mm == 0 and power_mm > 0:
        gaps.append(f"no signal trace: all {power_mm:,.1f} mm of trace are on power or ground nets (by name, or "
                    f"owning a plane's pour), so nothing was checked")
    elif len(signal_nets) == 1:
        gaps.append("only one signal net carries trace: no two nets to check against each other "
                    "(were nets merged by a short?)")
    left = board.left_out
    record = {
        "scanned_trace_fraction": _fraction(scanned_mm, signal_mm),
        "scanned_trace_mm": rounded(scanned_mm, 1), "signal_trace_mm": rounded(signal_mm, 1),
        "reference_net_trace_mm": rounded(power_mm, 1), "no_net_trace_mm": rounded(no_net_mm, 1),
        "scanned_layers": sum(1 for row in layers if row["scanned"] and row["signal_trace_mm"] > 0),
        "layers": layers,
        "parallel_pieces_found": len(coupled.runs.pieces),
        "left_out": {"objects": left.objects, "trace_length_mm": rounded(left.trace_length_mm, 1),
                     "layers": list(left.layers)},
        "unnamed_nets": int(unnamed[:-1].sum()),
        "connectivity_only_trace_fraction": rounded(unnamed_mm / signal_mm, 4) if signal_mm > 0 else 0.0,
    }
    return record, list(board.incomplete) + gaps


def _fraction(part: float, whole: float) -> float:
    """part / whole to 4 decimals, rounded down: 1.0 only when nothing is missing."""
    if whole <= 0:
        return 1.0
    return 1.0 if part >= whole else math.floor(part / whole * 1e4) / 1e4
