"""The impedance check: planted wrong-width and wrong-gap stretches on a synthetic board."""
import pytest

from scanner import scan
from scanner.board.layerstack import board_environments
from scanner.coupling.coefficients import section_arguments
from scanner.errors import InputError
from scanner.physics import differential_impedance, trace_impedance
from scanner.rules import parse_rules
from tests.scan.synthetic import WIDTH, board_from, polyline

Y_SIG, Y_PAIR, GAP = 0.0, 10.0, 0.15
NETS = ["SIG1", "SIG2", "DP_P", "DP_N", "SLOW"]


def planted_board():
    """On L3 (stripline): SIG1 at the class width except a 10 mm stretch twice as wide (x 20-30) and a 0.5 mm
    neck-down (x 40-40.5); SIG2 at the class width; a pair at GAP whose N leg comes closer for 8 mm (x 50-58);
    SLOW (no target) much wider. Jogs between stretches are at 45 degrees."""
    sig1 = (polyline([(0, Y_SIG), (20, Y_SIG)], 0) + polyline([(20, Y_SIG), (30, Y_SIG)], 0, 2 * WIDTH)
            + polyline([(30, Y_SIG), (40, Y_SIG)], 0) + polyline([(40, Y_SIG), (40.5, Y_SIG)], 0, 0.08)
            + polyline([(40.5, Y_SIG), (70, Y_SIG)], 0))
    sig2 = polyline([(0, 4), (70, 4)], 1)
    pitch = WIDTH + GAP
    close = 0.08 + WIDTH
    p_leg = polyline([(0, Y_PAIR), (70, Y_PAIR)], 2)
    n_leg = polyline([(0, Y_PAIR + pitch), (49.93, Y_PAIR + pitch), (50, Y_PAIR + close), (58, Y_PAIR + close),
                      (58.07, Y_PAIR + pitch), (70, Y_PAIR + pitch)], 3)
    slow = polyline([(0, -6), (70, -6)], 4, 0.6)
    return board_from({2: sig1 + sig2 + p_leg + n_leg + slow}, NETS)


def rules_with_targets(board, tolerance=None):
    env = board_environments(board, None).signal[2]
    z0 = trace_impedance(WIDTH, **section_arguments(env))
    zdiff = differential_impedance(WIDTH, GAP, **section_arguments(env))
    cls = {"name": "fast", "nets": ["SIG*"], "z0_target_ohm": round(z0, 1)}
    pairs = {"name": "pairs", "nets": ["DP_*"], "zdiff_target_ohm": round(zdiff, 1)}
    if tolerance is not None:
        cls["impedance_tolerance_pct"] = pairs["impedance_tolerance_pct"] = tolerance
    return parse_rules({"class": [cls, pairs, {"name": "slow", "nets": ["SLOW"]}]}, "test"), z0, zdiff


def test_planted_wrong_width_and_gap_are_found():
    board = planted_board()
    rules, z0, zdiff = rules_with_targets(board)
    result = scan(board, rules)
    check = result.impedance
    by_kind = {s.kind: s for s in check.stretches}
    assert len(check.stretches) == 2 and set(by_kind) == {"single-ended", "differential"}

    wide = by_kind["single-ended"]
    assert (wide.net, wide.net_class, wide.layer) == ("SIG1", "fast", "L3")
    assert wide.length_mm == pytest.approx(10.0, abs=0.01) and wide.width_mm == pytest.approx(2 * WIDTH)
    assert (wide.x_mm, wide.y_mm) == pytest.approx((25.0, Y_SIG))
    assert wide.bbox_mm == pytest.approx([20, Y_SIG, 30, Y_SIG])
    assert wide.z_ohm < z0 * 0.9 and wide.deviation_pct < -10  # a wider trace has a lower impedance

    close = by_kind["differential"]
    assert (close.net, close.net_class) == ("DP_P / DP_N", "pairs")
    assert close.length_mm == pytest.approx(8.0, abs=0.1) and close.gap_mm == pytest.approx(0.08, abs=1e-3)
    assert close.x_mm == pytest.approx(54.0, abs=0.1) and close.z_ohm < zdiff * 0.9

    fast = next(c for c in check.classes if c.net_class == "fast")
    assert fast.short_stretches == 1 and fast.short_mm == pytest.approx(0.5)  # the neck-down: counted, not listed
    assert fast.checked_mm == pytest.approx(140.0) and fast.stretches == 1 and fast.not_checked_mm == 0
    assert [c.net_class for c in check.classes] == ["fast", "pairs"]  # classes without targets are not checked
    assert check.notes == []

    assert result.verdict == "fail" and result.exit_code == 1
    report = result.to_dict()
    assert report["impedance"]["stretches"][0]["status"] == "fail"
    assert report["impedance"]["min_length_mm"] == 1.0


def test_a_wide_tolerance_passes_the_same_board():
    board = planted_board()
    rules, _, _ = rules_with_targets(board, tolerance=60)
    result = scan(board, rules)
    assert result.impedance.stretches == [] and result.exit_code == 0


def test_a_target_with_nothing_to_check_is_said():
    rules = parse_rules({"class": [{"name": "ghost", "nets": ["NOPE*"], "z0_target_ohm": 50.0,
                                    "zdiff_target_ohm": 100.0}]}, "test")
    result = scan(planted_board(), rules)
    assert sum("class ghost" in w for w in result.warnings) == 2


def test_no_targets_no_check():
    result = scan(planted_board(), parse_rules({}, "test"))
    assert result.impedance.classes == [] and result.to_dict()["impedance"]["stretches"] == []


@pytest.mark.parametrize("key,value", [("z0_target_ohm", -50.0), ("zdiff_target_ohm", 0.0),
                                       ("zdiff_target_ohm", 5000.0), ("impedance_tolerance_pct", 0.0),
                                       ("impedance_tolerance_pct", 150.0), ("z0_target_ohm", "50")])
def test_bad_targets_are_refused(key, value):
    with pytest.raises(InputError):
        parse_rules({"class": [{"name": "c", "nets": ["*"], key: value}]}, "rules.toml")
