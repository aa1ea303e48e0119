"""Waivers in the scan: a waived finding is still computed and listed, leaves its victim's total and the
verdict, and stops being waived when it expired or the run got longer, closer or uses more budget than
accepted beyond the margin. The board is synthetic (one run of known length and gap): the figures the
waiver is checked against are the planted geometry."""
import datetime as dt
from types import SimpleNamespace

import numpy as np
import pytest

from scanner import scan
from scanner.errors import InputError
from scanner.signoff.waiver_match import FindingKeys, match_waivers
from scanner.signoff.waivers import parse_waivers
from tests.signoff.boards import run_board, rules_with, waiver


def pair_findings(result):
    """Both directions of the run between the two nets (one report entry per run holds them)."""
    return [d for h in result.hotspots for d in h.directions if {d.victim, d.aggressor} == {"SIG_A", "SIG_B"}]


def test_without_waivers_the_run_fails():
    result = scan(run_board(), rules_with())
    assert result.verdict == "fail" and result.waivers == []
    assert all(h.status == "fail" and h.waiver is None for h in pair_findings(result))


def test_waiver_applied_and_shown():
    result = scan(run_board(), rules_with(waiver()))
    findings = pair_findings(result)
    assert len(findings) == 2  # both directions still computed and listed (in one entry for the run)
    (run,) = [h for h in result.hotspots if h.directions[0] in findings]
    assert run.waived
    for h in findings:
        assert h.status == "fail" and h.waived  # the physics status stays; the mark says waived
        assert h.waiver == {"id": "W1", "state": "waived", "reason": "both ends are debug headers",
                            "accepted_by": "T. Brandvik", "accepted_on": "2026-02-01", "note": None}
        assert h.to_dict()["waiver"]["state"] == "waived"
    victims = {v.net: v for v in result.victims}
    for net in ("SIG_A", "SIG_B"):
        v = victims[net]
        assert v.status == "pass" and v.budget_used_pct == 0.0  # the waived contribution left out of the total
        assert v.status_with_waived == "fail" and v.budget_used_with_waived_pct > 100
        assert v.waived_aggressors and v.waivers == ["W1"]
    assert result.verdict == "pass" and result.exit_code == 0
    assert result.summary["findings_waived"] == 2 and result.summary["findings_fail"] == 2
    [state] = result.to_dict()["waivers"]
    assert state["state"] == "in-force" and state["findings_covered"] == 2


def test_a_longer_run_breaks_the_waiver():
    # 23 mm against 20 mm accepted with a 10 % margin (22 mm): no longer covered
    result = scan(run_board(length_mm=23.0), rules_with(waiver()))
    for h in pair_findings(result):
        assert not h.waived and h.waiver["state"] == "lapsed"
        assert "run 23 mm long, accepted 20 mm + 10 %" in h.waiver["note"]
    assert result.verdict == "fail"
    [state] = result.waivers
    assert state["state"] == "exceeded" and state["findings_covered"] == 0 and state["findings_matched"] == 2


def test_a_slightly_longer_run_stays_within_the_margin():
    result = scan(run_board(length_mm=21.0), rules_with(waiver()))  # 5 % longer, about 5 % more budget
    assert all(h.waived for h in pair_findings(result)) and result.verdict == "pass"


def test_a_closer_run_breaks_the_waiver():
    result = scan(run_board(gap_mm=0.15), rules_with(waiver()))
    note = pair_findings(result)[0].waiver["note"]
    assert "closest spacing 0.15 mm, accepted 0.2 mm − 10 %" in note and "of budget" in note
    assert result.verdict == "fail"


def test_more_budget_breaks_the_waiver():
    result = scan(run_board(), rules_with(waiver(budget_used_pct=100.0)))  # the run uses about 124 %
    assert "uses 124 % of budget, accepted 100 % + 10 %" in pair_findings(result)[0].waiver["note"]
    assert result.verdict == "fail"


def test_an_expired_waiver():
    result = scan(run_board(), rules_with(waiver(accepted_on="2024-01-01", expires_on="2025-06-30")))
    h = pair_findings(result)[0]
    assert not h.waived and h.waiver["note"] == "waiver W1 no longer applies: expired on 2025-06-30"
    [state] = result.waivers
    assert state["state"] == "expired" and "expired on 2025-06-30" in state["note"]
    assert result.verdict == "fail"


def test_unused_waivers_are_listed():
    result = scan(run_board(), rules_with(waiver(), waiver(id="stale", victim="OLD_NET"),
                                          waiver(id="elsewhere", area_mm=[50, 50, 60, 60]),
                                          waiver(id="other-layer", layer="L3")))
    states = {w["id"]: w["state"] for w in result.waivers}
    assert states == {"W1": "in-force", "stale": "unused", "elsewhere": "unused", "other-layer": "unused"}
    assert result.summary["waivers_unused"] == 3
    assert "no finding matches it" in next(w for w in result.waivers if w["id"] == "stale")["note"]


def test_layer_and_area_narrow_a_waiver():
    # the run's worst point is at (10, 0.175); the area must hold it and the run must use the layer
    result = scan(run_board(), rules_with(waiver(layer="l1", area_mm=[5, -1, 15, 1])))
    assert all(h.waived for h in pair_findings(result))


def test_one_direction_waived_leaves_the_other_failing():
    result = scan(run_board(), rules_with(waiver(victim="SIG_A", aggressor="SIG_B")))
    by_victim = {h.victim: h for h in pair_findings(result)}
    assert by_victim["SIG_A"].waived and by_victim["SIG_B"].waiver is None
    assert result.verdict == "fail"


def test_first_covering_waiver_wins_over_a_lapsed_one():
    result = scan(run_board(), rules_with(waiver(id="tight", coupled_length_mm=10.0), waiver(id="fits")))
    assert all(h.waiver["id"] == "fits" and h.waived for h in pair_findings(result))
    assert {w["id"]: w["state"] for w in result.waivers} == {"tight": "exceeded", "fits": "in-force"}


#: two coupled runs as the matcher reads them
RUNS = SimpleNamespace(coupled_length_mm=np.array([20.0, 20.0]), spacing_min_mm=np.array([0.2, 0.2]),
                       layer_mask=np.array([1, 1]), worst_x_mm=np.array([10.0, 10.0]), worst_y_mm=np.zeros(2))


def test_expiry_is_inclusive_of_its_day():
    [w] = parse_waivers([waiver(expires_on="2026-03-01")], "t")
    keys = FindingKeys(np.array([0, 1]), np.array([1, 0]), np.array([-1, -1]), np.array([0, 1]),
                       np.array([1.2, 1.2]), np.array([True, True]))
    on_the_day = match_waivers((w,), ["SIG_A", "SIG_B"], ["L1"], RUNS, keys, dt.date(2026, 3, 1))
    day_after = match_waivers((w,), ["SIG_A", "SIG_B"], ["L1"], RUNS, keys, dt.date(2026, 3, 2))
    assert on_the_day.covered.all() and not day_after.covered.any()


def test_odd_mode_aggressor_matches_either_member():
    [w] = parse_waivers([waiver(victim="AUX_C", aggressor="PAIR_N")], "t")
    # victim AUX_C (2), aggressor entry on PAIR_P (0) folded with its partner PAIR_N (1)
    keys = FindingKeys(np.array([2]), np.array([0]), np.array([1]), np.array([0]), np.array([1.0]),
                       np.array([True]))
    hit = match_waivers((w,), ["PAIR_P", "PAIR_N", "AUX_C"], ["L1"], RUNS, keys, dt.date(2026, 3, 1))
    assert hit.covered.tolist() == [True]


@pytest.mark.parametrize("bad, message", [
    ({"reason": None}, "needs reason"),
    ({"accepted_on": "first of May"}, "must be a date"),
    ({"area_mm": [10, 0, 5, 1]}, "x0 < x1"),
    ({"area_mm": [1, 2, 3]}, "four numbers"),
    ({"expires_on": "2026-01-01"}, "before accepted_on"),
    ({"margin_pct": 100}, "below 100"),
    ({"coupled_length_mm": 0}, "must be positive"),
    ({"min_spacing_mm": -0.1}, "0 or more"),
    ({"victim": ""}, "non-empty string"),
    ({"colour": "red"}, "unknown key"),
])
def test_bad_waiver_is_an_input_error(bad, message):
    entry = {k: v for k, v in (waiver() | bad).items() if v is not None}
    with pytest.raises(InputError, match=message):
        rules_with(entry)


def test_waiver_ids_must_be_unique():
    with pytest.raises(InputError, match="used twice"):
        rules_with(waiver(id="A"), waiver(id="A"))
