"""A real 12-layer board (Gerber X1, inch, G74 arcs, no netlist), read from ../shared when present."""
from pathlib import Path

import numpy as np
import pytest

import scanner
from scanner.commands.inspect import inspect_data

REAL_BOARD = Path(__file__).resolve().parents[2] / ".." / "shared" / "real-boards" / "open-sbc-12layer"

pytestmark = pytest.mark.skipif(not REAL_BOARD.is_dir(), reason="shared real-board folder not present")


@pytest.fixture(scope="module")
def board():
    return scanner.load_board(REAL_BOARD)


def test_twelve_layers_in_order(board):
    assert [l.name for l in board.layers] == [f"L{i:02d}" for i in range(1, 13)]
    for layer in board.layers:
        assert f"_L{layer.index + 1:02d}" in Path(layer.path).name
    assert [l.side for l in board.layers] == ["top"] + ["inner"] * 10 + ["bottom"]


def test_planes_recognised_by_fill(board):
    planes = {l.name for l in board.layers if l.kind == "plane"}
    # inner layers drawn as pours with few traces (read from the files' content)
    assert planes == {"L02", "L04", "L06", "L07", "L09", "L11"}
    assert all(l.kind_source == "fill-ratio" for l in board.layers)


def test_nets_from_connectivity(board):
    n = board.netting
    assert n.method == "connectivity" and n.netlist_points_total == 0
    assert len(board.nets) == n.synthetic_nets > 500
    assert all((l.segments.net >= 0).all() for l in board.layers)
    # plated holes join layers: many nets have copper on more than one layer
    per_layer = [set(np.unique(l.segments.net)) | set(np.unique(l.shapes.net)) for l in board.layers]
    multi = sum(1 for net in range(len(board.nets)) if sum(net in s for s in per_layer) > 1)
    assert multi > 300
    # each plane layer's largest pour carries a net that also reaches the outer layers through vias
    outer = per_layer[0] | per_layer[-1]
    for layer in board.layers:
        if layer.kind == "plane":
            regions = np.flatnonzero(layer.shapes.role == "region")
            biggest = regions[np.argmax([layer.shapes.geometry[i].area for i in regions])]
            assert layer.shapes.net[biggest] in outer
    assert board.holes.plated.sum() > 1900


def test_inspect_summary(board):
    data = inspect_data(board)
    assert len(data["layers"]) == 12 and data["nets"] == len(board.nets)
    assert sum(l["segments"] for l in data["layers"]) == board.segment_count
    assert any("parser warnings" in w for w in data["warnings"])
