"""The bundled demo board: every planted case is found, ignored or absent as planted (fixtures/README.md)."""
import json
from pathlib import Path

import numpy as np
import pytest

import scanner
from scanner.rules import load_rules

ROOT = Path(__file__).resolve().parents[2]
PLANTED = json.loads((ROOT / "fixtures/demo-board/planted.json").read_text())


@pytest.fixture(scope="module")
def result():
    board = scanner.load_board(ROOT / "fixtures/demo-board/x2")
    return scanner.scan(board, load_rules(ROOT / "fixtures/demo-rules.toml"))


def findings(result, a, b):
    return [h for h in result.hotspots if {h.victim, h.aggressor} == {a, b}]


@pytest.mark.parametrize("case", [p for p in PLANTED if p["expect"] == "fail"], ids=lambda p: p["case"])
def test_planted_failures_are_found(result, case):
    a, b = case["nets"]
    if case["basis"] == "geometric":
        assert any({g.victim, g.aggressor} == {a, b} for g in result.geometric)
    hits = findings(result, a, b)
    assert hits and max(h.budget_used_pct for h in hits) > 100
    worst = max(hits, key=lambda h: h.budget_used_pct)
    assert worst.status == "fail" and f"L0{case['layer'][1:]}" in worst.layers
    assert worst.min_spacing_mm == pytest.approx(case["gap_mm"], abs=0.005)
    assert worst.fix and worst.fix["spacing_needed_mm"] > case["gap_mm"]


@pytest.mark.parametrize("case", [p for p in PLANTED if p["expect"] == "pass" and p["layer"] != "L3"],
                         ids=lambda p: p["case"])
def test_planted_passes_stay_within_budget(result, case):
    assert all(d.budget_used_pct <= 100 for h in findings(result, *case["nets"]) for d in h.directions)


@pytest.mark.parametrize("case", [p for p in PLANTED if p["expect"] in ("ignored", "absent")],
                         ids=lambda p: p["case"] + "-" + "-".join(p["nets"]))
def test_ignored_and_absent_cases_are_not_reported(result, case):
    assert findings(result, *case["nets"]) == []


def test_stripline_part_of_the_bus_has_near_zero_far_end_coupling(result):
    # the bus continues on L3 (stripline): its pieces there have |Kf v| < 1e-3 (homogeneous
    # dielectric: Kf = 0, docs/physics.md §2) and weaker backward coupling than on L1
    runs, coef = result.runs, result.piece_coefficients
    h = next(h for h in result.hotspots if {h.victim, h.aggressor} == {"DBUS_D0", "DBUS_D1"})
    rows = runs.pieces_of(h.run)
    layer = runs.pieces.layer[rows]
    kf_v = coef.kf_s_per_m[rows] * coef.velocity_m_per_s[rows]
    on_l3 = layer == 2
    assert on_l3.any() and (layer == 0).any()
    assert np.all(np.abs(kf_v[on_l3]) < 1e-3)
    assert np.all(kf_v[layer == 0] < 0)
    assert coef.kb[rows][on_l3].max() < np.median(coef.kb[rows][layer == 0])


def test_ranking_puts_failures_first(result):
    used = [h.budget_used_pct for h in result.hotspots]
    assert used == sorted(used, reverse=True)
    statuses = [h.status for h in result.hotspots]
    assert statuses.index("pass") > max(i for i, s in enumerate(statuses) if s == "fail")
    assert result.hotspots[0].victim == "CTL_LED"  # the fast clock beside a slow line is the worst


def test_report_json_shape(result):
    d = result.to_dict()
    assert d["schema"] == "nearfar.report/2"
    for key in ("rank", "id", "status", "budget_used_pct", "layer", "coupled_length_mm", "min_spacing_mm",
                "mean_spacing_mm", "x_mm", "y_mm", "directions", "fix"):
        assert key in d["hotspots"][0]
    for key in ("victim", "aggressor", "next_pct", "fext_pct", "next_mv", "fext_mv", "status", "budget_used_pct"):
        assert key in d["hotspots"][0]["directions"][0]
    for key in ("net", "next_worst_pct", "fext_worst_pct", "aggressors", "status", "budget_used_pct", "fix"):
        assert key in d["victims"][0]
    assert {"p": "USB_P", "n": "USB_N", "source": "name"} in d["pairs"]
    assert d["stackup"]["source"] == "job-file" and d["rules"]["source"].endswith("demo-rules.toml")
    json.dumps(d, allow_nan=False)
