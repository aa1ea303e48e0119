"""Small boards built in code for scan tests: a 4-layer build with planted runs."""
import numpy as np

from scanner.board import (Board, CopperLayer, CopperShapes, Holes, Stackup, StackupLayer, TraceSegments)

WIDTH = 0.15


def four_layer_stackup() -> Stackup:
    S = StackupLayer
    return Stackup((S("soldermask", "top mask", 0.02, 3.8), S("copper", "L1", 0.035, None, 0),
                    S("dielectric", "prepreg", 0.2, 4.2), S("copper", "L2", 0.035, None, 1),
                    S("dielectric", "core", 0.5, 4.5), S("copper", "L3", 0.035, None, 2),
                    S("dielectric", "prepreg", 0.2, 4.2), S("copper", "L4", 0.035, None, 3)), "test")


def polyline(points, net, width=WIDTH):
    pts = np.asarray(points, dtype=float)
    return [(x0, y0, x1, y1, width, net) for (x0, y0), (x1, y1) in zip(pts[:-1], pts[1:])]


def arc_points(cx, cy, r, a0_deg, a1_deg, n=90):
    a = np.radians(np.linspace(a0_deg, a1_deg, n + 1))
    return np.c_[cx + r * np.cos(a), cy + r * np.sin(a)]


def board_from(traces_by_layer: dict[int, list[tuple]], nets: list[str], stackup=None) -> Board:
    """Layer 0 top signal, 1 plane, 2 stripline-ish signal (between planes 1 and 3), 3 plane."""
    kinds = ["signal", "plane", "signal", "plane"]
    layers = []
    for i, kind in enumerate(kinds):
        rows = traces_by_layer.get(i, [])
        seg = TraceSegments(*np.array(rows, dtype=float).T) if rows else TraceSegments.empty()
        layers.append(CopperLayer(f"L{i + 1}", i, "top" if i == 0 else "inner" if i < 3 else "bottom", kind,
                                  "test", None, seg, CopperShapes.empty()))
    return Board("synthetic", "memory", "test", layers, nets, Holes.empty(), stackup or four_layer_stackup())
