"""The scan end to end on synthetic boards with planted runs (known geometry, physics from scanner.physics)."""
import numpy as np
import pytest

from scanner import scan
from scanner.physics import CouplingTable
from scanner.rules import parse_rules
from tests.scan.synthetic import WIDTH, arc_points, board_from, polyline
from tests.scan.views import into, seen

NETS = ["FAST_A", "FAST_B", "SLOW_X", "SLOW_Y", "GND", "PAIR_P", "PAIR_N", "FAR_1", "FAR_2", "CROSS_V",
        "CROSS_H", "DIAG_A", "DIAG_B", "ARC_IN", "ARC_OUT", "VAR_A", "VAR_B"]
N = {name: i for i, name in enumerate(NETS)}

RULES = parse_rules({
    "scan": {"search_distance_mm": 0.8, "min_coupled_length_mm": 1.0, "list_floor": 0.0},
    "class": [{"name": "fast", "nets": ["FAST_*", "PAIR_*", "DIAG_*", "ARC_*", "VAR_*", "FAR_*", "CROSS_*"],
               "rise_time_ns": 0.5, "swing_v": 1.0, "termination": "matched"},
              {"name": "slow", "nets": ["SLOW_*"], "rise_time_ns": 10.0, "swing_v": 1.0, "termination": "matched"}],
}, "test rules")


def planted_board():
    pitch = WIDTH + 0.2  # 0.2 mm edge gap
    top = []
    top += polyline([(0, 0), (100, 0)], N["FAST_A"])                          # 100 mm straight run
    top += polyline([(0, pitch), (100, pitch)], N["FAST_B"])
    top += polyline([(0, 10), (30, 10)], N["SLOW_X"])                         # same geometry, slow edges
    top += polyline([(0, 10 + pitch), (30, 10 + pitch)], N["SLOW_Y"])
    top += polyline([(0, 10 + 2 * pitch), (30, 10 + 2 * pitch)], N["GND"])  # ground trace: never scored
    top += polyline([(0, 20), (40, 20)], N["PAIR_P"])                         # a differential pair
    top += polyline([(0, 20 + pitch), (40, 20 + pitch)], N["PAIR_N"])
    top += polyline([(0, 30), (20, 30)], N["FAR_1"])                          # 2 mm apart: beyond the search
    top += polyline([(0, 32.15), (20, 32.15)], N["FAR_2"])
    top += polyline([(50, 25), (50, 45)], N["CROSS_V"])                       # right angle, 0.2 mm apart at the end
    top += polyline([(50 + WIDTH + 0.2, 35), (70, 35)], N["CROSS_H"])
    d = pitch * np.sqrt(0.5)
    top += polyline([(0, 40), (20, 60)], N["DIAG_A"])                         # a 45° run, 28.28 mm
    top += polyline([(d, 40 - d), (20 + d, 60 - d)], N["DIAG_B"])
    top += polyline(arc_points(80, 80, 10.0, 0, 90), N["ARC_IN"])             # concentric arcs
    top += polyline(arc_points(80, 80, 10.0 + pitch, 0, 90), N["ARC_OUT"])
    # non-uniform: 20 mm at 0.2 mm gap, then 20 mm at 0.5 mm gap
    top += polyline([(0, 70), (40, 70)], N["VAR_A"])
    top += polyline([(0, 70 + pitch), (20, 70 + pitch), (20.3, 70 + WIDTH + 0.5), (40, 70 + WIDTH + 0.5)], N["VAR_B"])
    return board_from({0: top}, NETS)


@pytest.fixture(scope="module")
def result():
    return scan(planted_board(), RULES)


find = seen


def test_straight_run_length_and_spacing(result):
    h = find(result, "FAST_B", "FAST_A")
    assert h.coupled_length_mm == pytest.approx(100.0, rel=0.01)  # planted geometry
    assert h.min_spacing_mm == pytest.approx(0.2, abs=0.005)
    assert h.layers == ["L1"] and h.structure == "microstrip"


def test_45_degree_run(result):
    h = find(result, "DIAG_B", "DIAG_A")
    assert h.coupled_length_mm == pytest.approx(20 * np.sqrt(2), rel=0.01)  # planted geometry
    assert h.min_spacing_mm == pytest.approx(0.2, abs=0.005)


def test_concentric_arcs_give_their_arc_length(result):
    h = find(result, "ARC_OUT", "ARC_IN")
    mean_radius = 10.0 + (WIDTH + 0.2) / 2
    assert h.coupled_length_mm == pytest.approx(np.pi / 2 * mean_radius, rel=0.01)  # arc length = r * angle
    assert h.min_spacing_mm == pytest.approx(0.2, abs=0.005)


def test_nonuniform_run_profile(result):
    h = find(result, "VAR_B", "VAR_A")
    assert h.min_spacing_mm == pytest.approx(0.2, abs=0.005)
    assert h.coupled_length_mm == pytest.approx(40.0, rel=0.02)
    runs = result.runs
    _, length, spacing = runs.profile(h.run)
    assert spacing[0] == pytest.approx(0.2, abs=0.005) and spacing[-1] == pytest.approx(0.5, abs=0.005)


def test_pairs_ground_crossings_and_far_nets_are_not_reported(result):
    names = {(d.victim, d.aggressor) for h in result.hotspots for d in h.directions}
    involved = {n for pair in names for n in pair}
    assert not {"PAIR_P", "PAIR_N"} <= involved or ("PAIR_P", "PAIR_N") not in names
    assert ("PAIR_N", "PAIR_P") not in names and ("PAIR_P", "PAIR_N") not in names
    assert "GND" not in involved
    assert "FAR_1" not in involved and "FAR_2" not in involved
    assert "CROSS_V" not in involved and "CROSS_H" not in involved


def test_slow_edges_rank_below_fast_edges(result):
    fast = find(result, "FAST_B", "FAST_A")
    slow = find(result, "SLOW_Y", "SLOW_X")
    assert slow.next_mv < fast.next_mv
    ranks = [h.rank for h in result.hotspots]
    assert ranks == sorted(ranks)
    used = [h.budget_used_pct for h in result.hotspots]
    assert used == sorted(used, reverse=True)


def test_long_uniform_run_matches_the_closed_forms(result):
    """NEXT saturated = Kb x swing; FEXT = Kf x length x swing / ramp (docs/physics.md §3),
    with Kb and Kf taken from the physics module's own table for this layer."""
    h = find(result, "FAST_B", "FAST_A")
    table = CouplingTable.for_layer(dielectrics_above=[], dielectrics_below=[(0.2, 4.2)], planes="below",
                                    width_mm=WIDTH, thickness_mm=0.035, soldermask=(0.02, 3.8),
                                    spacings_mm=np.geomspace(0.02, 0.84, 9))
    kb = float(table.kb(np.array([0.2]))[0])
    kf = float(table.kf(np.array([0.2]))[0])
    ramp = 0.5e-9 / 0.8
    assert 2 * 0.1 / table.velocity_m_per_s > ramp  # 100 mm is past the saturation length
    assert h.next_mv == pytest.approx(kb * 1.0 * 1e3, rel=0.01)
    assert h.fext_mv == pytest.approx(kf * 0.1 * 1.0 / ramp * 1e3, rel=0.01)
    assert h.fext_mv < 0  # microstrip: negative far-end pulse for a rising edge (common practice)


def test_victim_totals_sum_all_aggressors():
    b = planted_board()
    # a third line beside FAST_B on the other side: FAST_B now has two aggressors
    seg = b.layers[0].segments
    extra = np.array([[0, 2 * (WIDTH + 0.2), 100, 2 * (WIDTH + 0.2), WIDTH, N["SLOW_X"]]])
    from scanner.board.model import TraceSegments
    b.layers[0].segments = TraceSegments.concat([seg, TraceSegments(*extra.T)])
    r = scan(b, RULES)
    v = next(v for v in r.victims if v.net == "FAST_B")
    parts = into(r, "FAST_B")
    assert len(parts) >= 2
    assert v.next_worst_mv == pytest.approx(sum(abs(d.next_mv) for d in parts), rel=1e-3)
    assert v.next_rss_pct <= v.next_worst_pct
    assert {a["aggressor"] for a in v.aggressors} == {d.aggressor for d in parts}


def test_exit_code_follows_victim_status(result):
    assert result.exit_code == (1 if any(v.status == "fail" for v in result.victims) else 0)
    lenient = parse_rules({"class": [{"name": "all", "nets": ["*"], "next_budget_pct": 90, "fext_budget_pct": 90}]},
                          "lenient")
    assert scan(planted_board(), lenient).exit_code == 0


def test_differential_aggressor_models():
    """A pair beside a victim: as two lines the legs' noise adds; in odd mode the legs drive opposite
    edges and their contributions subtract (the nearer leg dominates)."""
    w = WIDTH
    rows = (polyline([(0, 0), (40, 0)], 0) + polyline([(0, w + 0.2), (40, w + 0.2)], 1)
            + polyline([(0, 2 * w + 0.3), (40, 2 * w + 0.3)], 2))
    board = board_from({0: rows}, ["VICTIM", "LINK_P", "LINK_N"])
    base = {"scan": {"search_distance_mm": 0.8, "min_coupled_length_mm": 1.0, "list_floor": 0.0},
            "class": [{"name": "all", "nets": ["*"], "rise_time_ns": 0.5, "swing_v": 1.0, "termination": "matched"}]}
    two = scan(board, parse_rules(base, "two"))
    legs = {d.aggressor: d for d in into(two, "VICTIM")}
    assert set(legs) == {"LINK_P", "LINK_N"}
    assert all(h.aggressor_model == "differential (two lines)" for h in legs.values())
    odd_rules = parse_rules(base | {"scan": base["scan"] | {"differential_aggressor": "odd-mode"}}, "odd")
    (odd,) = into(scan(board, odd_rules), "VICTIM")
    assert odd.aggressor_model == "differential (odd mode)" and odd.aggressor == "LINK_P / LINK_N"
    assert odd.next_mv == pytest.approx(abs(legs["LINK_P"].next_mv - legs["LINK_N"].next_mv), abs=2e-3)
    assert odd.next_mv < legs["LINK_P"].next_mv  # the far leg cancels part of the near leg's noise
    # the pair's own members are never scored against each other
    assert not any({d.victim, d.aggressor} == {"LINK_P", "LINK_N"} for h in two.hotspots for d in h.directions)
