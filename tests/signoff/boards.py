"""Boards for the sign-off tests: a small synthetic board with one run whose length and gap are set, and
the demo board with planted runs moved apart or closer."""
import copy
from dataclasses import replace
from pathlib import Path

import numpy as np

from scanner.rules import parse_rules
from tests.scan.synthetic import WIDTH, board_from, polyline

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures/demo-board/x2"
RULES = ROOT / "fixtures/demo-rules.toml"

NETS = ["SIG_A", "SIG_B", "AUX_C", "AUX_D"]

#: 0.5 ns edges into matched victims with a 3 % budget: the 20 mm run at a 0.2 mm gap uses about 120 %
RULES_DOC = {"scan": {"search_distance_mm": 0.8, "min_coupled_length_mm": 1.0},
             "class": [{"name": "fast", "nets": ["SIG_*", "AUX_*"], "rise_time_ns": 0.5, "swing_v": 1.0,
                        "next_budget_pct": 3, "fext_budget_pct": 3, "termination": "matched"}]}


def rules_with(*waivers):
    return parse_rules(RULES_DOC | {"waiver": list(waivers)}, "test rules")


def run_board(length_mm: float = 20.0, gap_mm: float = 0.2):
    """SIG_A and SIG_B side by side on the top layer; AUX_C and AUX_D 0.6 mm apart, well within budget."""
    top = polyline([(0, 0), (length_mm, 0)], 0) + polyline([(0, WIDTH + gap_mm), (length_mm, WIDTH + gap_mm)], 1)
    top += polyline([(0, 10), (20, 10)], 2) + polyline([(0, 10 + WIDTH + 0.6), (20, 10 + WIDTH + 0.6)], 3)
    return board_from({0: top}, NETS)


def waiver(**kw):
    """A waiver table accepting the 20 mm run at 0.2 mm in both directions (unless overridden)."""
    return {"victim": "SIG_*", "aggressor": "SIG_*", "reason": "both ends are debug headers",
            "accepted_by": "T. Brandvik", "accepted_on": "2026-02-01", "coupled_length_mm": 20.0,
            "min_spacing_mm": 0.2, "budget_used_pct": 125.0} | kw


def shift_net(board, net_name: str, layer_name: str, dx_mm: float = 0.0, dy_mm: float = 0.0):
    """A copy of ``board`` with one net's traces on one layer moved by (dx, dy)."""
    moved = copy.deepcopy(board)
    net = moved.nets.index(net_name)
    layer = next(layer for layer in moved.layers if layer.name == layer_name)
    seg = layer.segments
    on = seg.net == net
    layer.segments = replace(seg, x0=np.where(on, seg.x0 + dx_mm, seg.x0), x1=np.where(on, seg.x1 + dx_mm, seg.x1),
                             y0=np.where(on, seg.y0 + dy_mm, seg.y0), y1=np.where(on, seg.y1 + dy_mm, seg.y1))
    return moved


def side_of(board, net_name: str, other_name: str, layer_name: str) -> float:
    """+1 when ``net_name``'s traces lie above ``other_name``'s on that layer (mean y), else -1."""
    layer = next(layer for layer in board.layers if layer.name == layer_name)
    seg = layer.segments
    mean_y = lambda name: float(np.mean((seg.y0 + seg.y1)[seg.net == board.nets.index(name)]))  # noqa: E731
    return 1.0 if mean_y(net_name) > mean_y(other_name) else -1.0
