"""Fix guidance: applying the suggested spacing or length and scanning again meets the budget."""
import pytest

from scanner import scan
from scanner.rules import parse_rules
from tests.scan.synthetic import WIDTH, board_from, polyline

NETS = ["BUS_A", "BUS_B", "LANE_A", "LANE_B"]
RULES = parse_rules({
    "scan": {"search_distance_mm": 1.5, "min_coupled_length_mm": 1.0},
    "class": [{"name": "bus", "nets": ["*"], "rise_time_ns": 0.5, "swing_v": 1.0, "next_budget_pct": 3,
               "fext_budget_pct": 3, "termination": "matched"}],
}, "fix test rules")


def pair_board(gap_mm=0.15, length_mm=60.0, layer=0):
    pitch = WIDTH + gap_mm
    rows = polyline([(0, 0), (length_mm, 0)], 0) + polyline([(0, pitch), (length_mm, pitch)], 1)
    return board_from({layer: rows}, NETS)


def finding(result):
    return next(h for h in result.hotspots if h.victim == "BUS_B")


@pytest.fixture(scope="module")
def failing():
    h = finding(scan(pair_board(), RULES))
    assert h.status == "fail"
    return h


def test_suggested_spacing_meets_the_budget_when_applied(failing):
    s = failing.fix["spacing_needed_mm"]
    assert s > 0.15
    again = finding(scan(pair_board(gap_mm=s), RULES))
    # the re-scanned board lands on the budget: within 2 % (issue acceptance)
    assert again.budget_used == pytest.approx(1.0, abs=0.02)
    assert again.budget_used <= 1.02


def test_suggested_length_meets_the_budget_when_applied(failing):
    max_len = failing.fix["max_length_mm"]
    assert 0 < max_len < 60
    again = finding(scan(pair_board(length_mm=max_len), RULES))
    assert again.budget_used == pytest.approx(1.0, abs=0.02)


def test_stripline_alternative_is_offered_for_microstrip(failing):
    alt = failing.fix["alternative_layer"]
    assert alt["layer"] == "L3" and alt["structure"] == "stripline"
    moved = finding(scan(pair_board(layer=2), RULES))
    assert alt["budget_used"] == pytest.approx(moved.budget_used, rel=0.02)
    # stripline far-end noise is near zero (common practice), so the same run uses less budget there
    assert moved.budget_used < failing.budget_used


def test_passing_findings_get_no_fix():
    h = finding(scan(pair_board(gap_mm=1.2), RULES))
    assert h.status == "pass" and h.fix is None


def test_unreachable_spacing_says_so():
    strict = parse_rules({"scan": {"search_distance_mm": 1.5, "min_coupled_length_mm": 1.0},
                          "class": [{"name": "bus", "nets": ["*"], "rise_time_ns": 0.1, "swing_v": 1.0,
                                     "next_budget_mv": 0.5, "fext_budget_mv": 0.5}]}, "strict")
    h = finding(scan(pair_board(), strict))
    assert h.fix["spacing_needed_mm"] is None and "no uniform spacing" in h.fix["note"]
    assert h.fix["max_length_mm"] is not None and h.fix["max_length_mm"] < 1.0


def test_geometric_limit_between_classes():
    rules = parse_rules({
        "scan": {"min_coupled_length_mm": 1.0},
        "class": [{"name": "switch", "nets": ["BUS_A"], "rise_time_ns": 20, "swing_v": 12},
                  {"name": "sense", "nets": ["BUS_B"], "next_budget_pct": 50, "fext_budget_pct": 50}],
        "class_pair": [{"aggressor_class": "switch", "victim_class": "sense", "max_parallel_mm": 10,
                        "within_spacing_mm": 1.0}]}, "geometry rules")
    r = scan(pair_board(gap_mm=0.6, length_mm=25), rules)
    (g,) = r.geometric
    assert g.aggressor == "BUS_A" and g.victim == "BUS_B"
    assert g.parallel_mm == pytest.approx(25, rel=0.01) and g.max_parallel_mm == 10
    assert r.exit_code == 1
    assert r.to_dict()["geometric"][0]["kind"] == "geometric"
    # wider than the limit's spacing: no geometric finding (search reaches 1.0 mm regardless)
    assert scan(pair_board(gap_mm=1.1, length_mm=25), rules).geometric == []
