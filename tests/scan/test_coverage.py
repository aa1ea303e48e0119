"""Every verdict says what was checked: boards without planes are scanned against the far side, a layer the
rules skip makes the verdict incomplete, and no board with signal copper passes without being searched."""
import numpy as np
import pytest

from scanner import scan
from scanner.board.model import Board, CopperLayer, CopperShapes, Holes, TraceSegments
from scanner.errors import InputError
from scanner.report.text import render
from scanner.rules import parse_rules
from tests.scan.synthetic import WIDTH, polyline, stackup_of, two_layer_board

NETS = ["DATA_A", "DATA_B", "DATA_C", "DATA_D", "GND"]
N = {name: i for i, name in enumerate(NETS)}
RULES = parse_rules({"scan": {"min_coupled_length_mm": 1.0}}, "test rules")
LENIENT = {"class": [{"name": "all", "nets": ["*"], "next_budget_pct": 95, "fext_budget_pct": 95}]}


def pair(y, a, b, gap=0.2, length=40.0):
    pitch = WIDTH + gap
    return polyline([(0, y), (length, y)], N[a]) + polyline([(0, y + pitch), (length, y + pitch)], N[b])


def bare_board(**kw):
    return two_layer_board({0: pair(0, "DATA_A", "DATA_B"), 1: pair(10, "DATA_C", "DATA_D")}, NETS, **kw)


def layer_row(result, name):
    return next(row for row in result.coverage["layers"] if row["name"] == name)


def on_layer(result, name):
    return [h for h in result.hotspots if h.layer == name]


def test_two_layer_board_without_pour_is_scanned_against_the_far_side():
    result = scan(bare_board(), RULES)
    for name, far in (("L1", "L2"), ("L2", "L1")):
        row = layer_row(result, name)
        assert row["scanned"] and row["reference_kind"] == "far side" and row["reference_layers"] == [far]
        assert row["reference"] == f"microstrip over the far side ({far}), 1.53 mm"
        assert "coupling is stronger than over a plane" in row["evidence"]
        assert on_layer(result, name)  # findings on both sides
        assert result.stackup["signal_layers"][name]["reference"] == row["reference"]
    assert result.coverage["scanned_trace_fraction"] == 1.0 and result.unchecked == []
    assert result.verdict == "fail"  # 40 mm at 0.2 mm over a 1.53 mm reference: far over a 5 % budget
    assert any("far side" in w for w in result.warnings)
    text = render(result)
    assert text.splitlines()[0].startswith("FAIL:") and "checked 100 % of 160 mm of signal trace on 2 layers" in text
    assert "L1: microstrip over the far side (L2), 1.53 mm" in text
    assert "referenced to the far side: coupling is stronger than over a plane" in text


def test_two_layer_board_with_a_bottom_pour_is_referenced_to_it():
    gnd_beside = polyline([(0, 10 + 2 * (WIDTH + 0.2)), (40, 10 + 2 * (WIDTH + 0.2))], N["GND"])
    board = two_layer_board({0: pair(0, "DATA_A", "DATA_B"), 1: pair(10, "DATA_C", "DATA_D") + gnd_beside}, NETS,
                            pour=(1, N["GND"], (-5, 15, 45, 40), 0.45))
    result = scan(board, RULES)
    top, bottom = layer_row(result, "L1"), layer_row(result, "L2")
    assert top["reference"] == "microstrip over L2 pour, 1.53 mm" and top["reference_kind"] == "pour"
    assert "L2 pours cover 45 % of the board" in top["evidence"]
    assert bottom["reference_kind"] == "far side" and "L1 carries no pour" in bottom["evidence"]
    assert on_layer(result, "L1") and on_layer(result, "L2")
    # the pour's net is a reference net: its trace beside DATA_D is neither victim nor aggressor
    assert not [h for h in result.hotspots if "GND" in (h.victim, h.aggressor)]
    assert result.coverage["reference_net_trace_mm"] == pytest.approx(40.0)


def test_traces_on_a_plane_layer_are_scanned_too():
    board = bare_board(kinds=("signal", "plane"), pour=(1, N["GND"], (-5, 15, 45, 40), 0.6))
    result = scan(board, RULES)
    assert layer_row(result, "L1")["reference"] == "microstrip over L2 plane, 1.53 mm"
    bottom = layer_row(result, "L2")
    assert bottom["role"] == "plane" and bottom["scanned"]
    assert bottom["reference"] == "plane layer; its traces: microstrip over the far side (L1), 1.53 mm"
    assert on_layer(result, "L2") and result.unchecked == []


def test_the_far_side_is_the_bottom_for_an_inner_layer_nearer_the_top():
    stack = stackup_of(("mask", 0.02, 3.8), 0.035, (0.2, 4.2), 0.035, (1.0, 4.5), 0.035, (0.2, 4.2), 0.035)
    rows = {1: pair(0, "DATA_A", "DATA_B")}
    layers = [CopperLayer(f"L{i + 1}", i, "inner", "signal", "test", None,
                          TraceSegments(*np.array(rows[i], dtype=float).T) if i in rows else TraceSegments.empty(),
                          CopperShapes.empty()) for i in range(4)]
    result = scan(Board("four", "memory", "test", layers, NETS, Holes.empty(), stack), RULES)
    row = layer_row(result, "L2")
    # 1.0 + 0.035 + 0.2 mm down to L4 beats 0.2 mm up to L1; L3's copper counts as laminate
    assert row["reference_layers"] == ["L4"] and row["height_mm"] == pytest.approx(1.235)
    assert row["search_distance_mm"] == pytest.approx(4 * 1.235)


def test_a_layer_skipped_by_the_rules_makes_the_verdict_incomplete():
    rules = parse_rules({"scan": {"min_coupled_length_mm": 1.0, "skip_layers": ["L2"]}} | LENIENT, "test rules")
    result = scan(bare_board(), rules)
    assert result.verdict == "incomplete" and result.exit_code == 3
    row = layer_row(result, "L2")
    assert not row["scanned"] and "skip_layers" in row["reason"] and row["signal_trace_mm"] == pytest.approx(80.0)
    assert any("L2" in r and "skip_layers" in r for r in result.unchecked)
    assert result.coverage["scanned_trace_fraction"] == 0.5 and not on_layer(result, "L2")
    lines = render(result).splitlines()
    assert lines[0].startswith("INCOMPLETE: nothing over budget") and "checked 50.0 % of 160 mm" in lines[0]
    assert lines[1].startswith("not checked: layer L2 not searched")


def test_skip_layers_must_be_a_list_of_names():
    with pytest.raises(InputError, match="skip_layers"):
        parse_rules({"scan": {"skip_layers": "L2"}}, "r.toml")
    with pytest.raises(InputError, match="skip_layers"):
        parse_rules({"scan": {"skip_layers": [""]}}, "r.toml")


def test_an_unknown_layer_name_in_the_rules_is_a_warning():
    rules = parse_rules({"scan": {"skip_layers": ["L7"]}}, "r.toml")
    result = scan(bare_board(), rules)
    assert any("L7" in w and "does not have" in w for w in result.warnings)
    assert result.unchecked == []


def _one_layer(rows, nets):
    layer = CopperLayer("L1", 0, "top", "signal", "test", None, TraceSegments(*np.array(rows, dtype=float).T),
                        CopperShapes.empty())
    return Board("one", "memory", "test", [layer], nets, Holes.empty(), stackup_of(0.035, (1.5, 4.5)))


def _far_apart():
    return two_layer_board({0: polyline([(0, 0), (40, 0)], N["DATA_A"]) + polyline([(0, 20), (40, 20)], N["DATA_B"])},
                           NETS)


def _power_only():
    return two_layer_board({0: pair(0, "GND", "GND")}, NETS)


def _no_net():
    rows = pair(0, "DATA_A", "DATA_B")
    rows = [r[:5] + (-1,) for r in rows]
    return two_layer_board({0: rows}, NETS)


def _one_net():
    return two_layer_board({0: pair(0, "DATA_A", "DATA_A")}, NETS)


def _short_run():
    return two_layer_board({0: pair(0, "DATA_A", "DATA_B", length=0.5)}, NETS)


def _regions_only():
    return two_layer_board({}, NETS, pour=(0, N["DATA_A"], (0, 0, 40, 0.2), 0.01))


@pytest.mark.parametrize("make, passes", [
    (_far_apart, True),    # truly no parallel runs
    (_short_run, True),    # parallel, but shorter than the minimum coupled length (a stated setting)
    (lambda: _one_layer(pair(0, "DATA_A", "DATA_B"), NETS), False),  # nothing to reference to
    (_power_only, False),  # copper, but no signal net on it
    (_no_net, False),      # trace that carries no net cannot be searched
    (_one_net, False),     # one net: nothing to check it against
    (_regions_only, False),  # copper drawn as regions only: the search reads traces
], ids=["far-apart", "short-run", "one-layer", "power-only", "no-net", "one-net", "regions-only"])
def test_no_board_with_copper_and_zero_scored_runs_passes_unless_fully_searched(make, passes):
    result = scan(make(), parse_rules(LENIENT, "lenient"))
    assert result.summary["coupled_runs"] == 0
    assert (result.exit_code == 0) == passes
    if passes:
        assert result.coverage["scanned_trace_fraction"] == 1.0 and result.verdict == "pass"
        assert "checked 100 % of" in render(result).splitlines()[0]
    else:
        assert result.verdict == "incomplete" and result.unchecked


def test_zero_runs_says_why_it_passes():
    first = render(scan(_far_apart(), parse_rules(LENIENT, "lenient"))).splitlines()[0]
    assert first == ("PASS: no parallel runs of different nets within the search distance; "
                     "checked 100 % of 80 mm of signal trace on 1 layer")
    first = render(scan(_short_run(), parse_rules(LENIENT, "lenient"))).splitlines()[0]
    assert "no parallel run of different nets reaches 2.0 mm" in first


def test_import_gaps_and_left_out_copper_reach_the_coverage():
    board = bare_board()
    board.incomplete.append("drill file unreadable: nets through its holes may be split")
    board.left_out = type(board.left_out)(objects=3, trace_length_mm=120.0, layers=("L1",))
    result = scan(board, parse_rules(LENIENT, "lenient"))
    assert result.verdict == "incomplete" and result.unchecked[0].startswith("drill file unreadable")
    assert result.coverage["left_out"] == {"objects": 3, "trace_length_mm": 120.0, "layers": ["L1"]}
    assert "left out: 3 copper objects outside the board" in render(result)


def test_nets_named_by_connectivity_only_are_counted():
    nets = ["DATA_A", "~L01@0.000,0.350", "DATA_C", "DATA_D", "GND"]
    result = scan(two_layer_board({0: pair(0, "DATA_A", "DATA_B"), 1: pair(10, "DATA_C", "DATA_D")}, nets), RULES)
    assert result.coverage["unnamed_nets"] == 1
    assert result.coverage["connectivity_only_trace_fraction"] == pytest.approx(0.25, abs=1e-3)
