"""Small boards built in code for scan tests: a 4-layer build with planted runs, and 2-layer boards."""
import numpy as np
import shapely

from scanner.board.model import (Board, CopperLayer, CopperShapes, Holes, Stackup, StackupLayer, TraceSegments)

WIDTH = 0.15


def stackup_of(*items) -> Stackup:
    """A stackup from (thickness_mm, epsilon_r) for laminate, ("mask", t, er) for soldermask and a bare
    thickness for copper, top to bottom; copper layers are numbered in order."""
    layers, copper = [], 0
    for item in items:
        if isinstance(item, (int, float)):
            layers.append(StackupLayer("copper", f"L{copper + 1}", float(item), None, copper))
            copper += 1
        elif item[0] == "mask":
            layers.append(StackupLayer("soldermask", "mask", item[1], item[2]))
        else:
            layers.append(StackupLayer("dielectric", f"d{len(layers)}", item[0], item[1]))
    return Stackup(tuple(layers), "test")


def four_layer_stackup() -> Stackup:
    return stackup_of(("mask", 0.02, 3.8), 0.035, (0.2, 4.2), 0.035, (0.5, 4.5), 0.035, (0.2, 4.2), 0.035)


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


def two_layer_stackup(mask: bool = True, copper_mm: float = 0.035) -> Stackup:
    """A plain 1.6 mm two-layer build: 1.53 mm of er 4.5 laminate between the copper sides."""
    masks = [("mask", 0.02, 3.8)] if mask else []
    return stackup_of(*masks, copper_mm, (1.53, 4.5), copper_mm, *masks)


def two_layer_board(traces_by_layer: dict[int, list[tuple]], nets: list[str], pour: tuple | None = None,
                    kinds=("signal", "signal"), stackup=None) -> Board:
    """Top (0) and bottom (1) copper, no plane unless ``kinds`` says so. ``pour``: (layer, net, (x0, y0, x1, y1),
    fill ratio) a rectangular pour drawn as a region, and the share of the board it covers."""
    layers = []
    for i, kind in enumerate(kinds):
        rows = traces_by_layer.get(i, [])
        seg = TraceSegments(*np.array(rows, dtype=float).T) if rows else TraceSegments.empty()
        shapes, fill = CopperShapes.empty(), 0.0
        if pour is not None and pour[0] == i:
            shapes = CopperShapes(np.array([shapely.box(*pour[2])], dtype=object), np.array([pour[1]]),
                                  np.array(["region"], dtype=object))
            fill = pour[3]
        layers.append(CopperLayer(f"L{i + 1}", i, ("top", "bottom")[i], kind, "test", None, seg, shapes, fill))
    return Board("two-layer", "memory", "test", layers, nets, Holes.empty(), stackup or two_layer_stackup())
