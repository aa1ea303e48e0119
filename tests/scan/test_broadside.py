"""Broadside coupling between two signal layers that share both planes (dual stripline)."""
import numpy as np
import pytest

from scanner import scan
from scanner.board.model import Board, CopperLayer, CopperShapes, Holes, Stackup, TraceSegments
from scanner.coupling.finder import find_broadside_pieces
from scanner.board.layerstack import broadside_environments, layer_environments
from scanner.physics import CouplingTable
from scanner.physics.broadside import BroadsideTable
from scanner.rules import parse_rules
from scanner.scoring.fix_plans import FIX_MARGIN
from tests.scan.synthetic import stackup_of

KINDS = ["signal", "plane", "signal", "signal", "plane", "signal"]
W = 0.12


def dual_stripline_stackup() -> Stackup:
    return stackup_of(("mask", 0.02, 3.8), 0.035, (0.2, 4.2), 0.035, (0.2, 4.2), 0.018, (0.15, 4.2), 0.018,
                      (0.2, 4.2), 0.035, (0.2, 4.2), 0.035, ("mask", 0.02, 3.8))


def board(traces_by_layer, nets):
    layers = []
    for i, kind in enumerate(KINDS):
        rows = traces_by_layer.get(i, [])
        seg = TraceSegments(*np.array(rows, dtype=float).T) if rows else TraceSegments.empty()
        layers.append(CopperLayer(f"L{i + 1}", i, "inner", kind, "test", None, seg, CopperShapes.empty()))
    return Board("dual", "memory", "test", layers, nets, Holes.empty(), dual_stripline_stackup())


def stacked(offset_mm=0.0, length_mm=30.0, lower_net=1):
    return board({2: [(0, 0, length_mm, 0, W, 0)], 3: [(0, offset_mm, length_mm, offset_mm, W, lower_net)]},
                 ["UPPER", "LOWER"])


def test_the_two_inner_layers_form_a_broadside_pair():
    b = stacked()
    envs = layer_environments(b, dual_stripline_stackup(), {1, 4})
    (pair, env), = broadside_environments(b, dual_stripline_stackup(), envs, {1, 4}).items()
    assert pair == (2, 3)
    # lower plane L5 up to upper plane L2: 0.2 core, L4 copper, 0.15 prepreg, L3 copper, 0.2 core
    assert [t for t, _ in env.dielectrics] == pytest.approx([0.2, 0.018, 0.15, 0.018, 0.2])
    assert env.base_mm == pytest.approx((0.2 + 0.018 + 0.15, 0.2))


def test_finder_pairs_traces_across_the_two_layers_only():
    top = TraceSegments(*np.array([(0, 0, 30, 0, W, 0), (0, 0.5, 30, 0.5, W, 2)], dtype=float).T)
    bottom = TraceSegments(*np.array([(5, 0.1, 25, 0.1, W, 1), (0, 3, 30, 3, W, 0)], dtype=float).T)
    p = find_broadside_pieces({(2, 3): (top, bottom)}, 0.5)
    # UPPER over LOWER (0.1 mm offset, 20 mm) and net 2 beside LOWER (0.4 mm offset); same-layer pairs
    # (0 and 2 on L3) and a net with itself across layers are not broadside pieces
    got = sorted(zip(p.net_a.tolist(), p.net_b.tolist(), np.round(p.length_mm, 6).tolist(),
                     np.round(p.centre_mean_mm, 6).tolist()))
    assert got == [(0, 1, 20.0, 0.1), (1, 2, 20.0, 0.4)]
    assert set(zip(p.layer.tolist(), p.layer_b.tolist())) <= {(2, 3), (3, 2)}


def test_broadside_table_physics():
    env = broadside_environments(stacked(), dual_stripline_stackup(),
                                 layer_environments(stacked(), dual_stripline_stackup(), {1, 4}), {1, 4})[(2, 3)]
    table = BroadsideTable.for_pair(env.dielectrics, env.base_mm, env.thickness_mm, W, np.linspace(0, 1.0, 9))
    kb = table.kb(np.linspace(0, 1.0, 41))
    assert np.all(np.diff(kb) < 0)  # coupling falls as the traces move apart (common practice)
    # one material between the planes: no forward coupling (homogeneous medium, docs/physics.md §2)
    assert np.all(np.abs(table.kf(np.linspace(0, 1, 5)) * table.velocity_m_per_s) < 1e-3)


def test_broadside_solver_path_agrees_with_the_same_layer_path():
    # two traces at the same height through the broadside builder are a same-layer pair: both code
    # paths must give the same backward coefficient at gap = offset - width
    stack = [(0.2, 4.2), (0.018, 4.2), (0.2, 4.2)]
    gap = 0.15
    side = BroadsideTable.for_pair(stack, (0.2, 0.2), (0.018, 0.018), W, [W + gap - 0.05, W + gap, W + gap + 0.05])
    same = CouplingTable.for_layer(dielectrics_above=[(0.018, 4.2), (0.2, 4.2)], dielectrics_below=[(0.2, 4.2)],
                                   planes="both", width_mm=W, thickness_mm=0.018, spacings_mm=[0.1, gap, 0.2])
    assert float(side.kb(np.array([W + gap]))[0]) == pytest.approx(float(same.kb(np.array([gap]))[0]), rel=0.01)


RULES = parse_rules({"scan": {"search_distance_mm": 0.5, "min_coupled_length_mm": 1.0},
                     "class": [{"name": "all", "nets": ["*"], "rise_time_ns": 0.5, "swing_v": 1.0,
                                "termination": "matched"}]}, "broadside rules")


def test_scan_reports_broadside_coupling():
    r = scan(stacked(0.0), RULES)
    h = next(h.toward("LOWER") for h in r.hotspots if any(d.victim == "LOWER" for d in h.directions))
    assert h.layers == ["L3", "L4"] and "broadside" in h.structure
    assert h.coupled_length_mm == pytest.approx(30.0, rel=0.01)
    assert r.settings["broadside_layer_pairs"] == ["L3/L4"]
    # stacked right over each other with 0.15 mm of laminate between: strong near-end coupling
    assert h.next_mv > 100 and h.status == "fail"
    assert h.fix["spacing_needed_mm"] is None and "broadside" in h.fix["note"]
    shorter = next(x.toward("LOWER") for x in scan(stacked(0.0, length_mm=h.fix["max_length_mm"]), RULES).hotspots
                   if any(d.victim == "LOWER" for d in x.directions))
    assert shorter.status == "pass"  # the suggested overlap passes, just inside the pass limit
    assert shorter.budget_used_pct == pytest.approx(80 * FIX_MARGIN, abs=2)
    far = scan(stacked(0.45), RULES)
    near_offset = next(x.toward("LOWER") for x in far.hotspots if any(d.victim == "LOWER" for d in x.directions))
    assert near_offset.next_mv < h.next_mv / 3  # moving the traces apart in plan view cuts the coupling
    assert not any(d.victim == "LOWER" for x in scan(stacked(2.0), RULES).hotspots for d in x.directions)
