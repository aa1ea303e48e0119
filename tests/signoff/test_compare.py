"""Comparing two revisions: the demo board against a copy with one planted run moved apart and one moved
closer, matching by net pair and location on hand-made reports, and the compare command."""
import copy
import json

import pytest

import scanner
from scanner.report.folder import write_report_folder
from scanner.report.page import render_page
from scanner.rules import load_rules
from scanner.signoff.compare import compare_reports
from tests.hostile.cli import run_main
from tests.signoff.boards import DEMO, RULES, shift_net, side_of



@pytest.fixture(scope="module")
def revisions():
    """(board, result) before and after: CTL_LED moved 0.3 mm away from CLK_ADC (planted at a 0.2 mm gap),
    CTL_PGOOD moved 0.5 mm towards CLK_ETH (planted at 0.9 mm)."""
    rules = load_rules(RULES)
    before = scanner.load_board(DEMO)
    after = shift_net(before, "CTL_LED", "L01", dy_mm=0.3 * side_of(before, "CTL_LED", "CLK_ADC", "L01"))
    after = shift_net(after, "CTL_PGOOD", "L01", dy_mm=-0.5 * side_of(after, "CTL_PGOOD", "CLK_ETH", "L01"))
    return (before, scanner.scan(before, rules)), (after, scanner.scan(after, rules))


def change_of(comparison, victim, aggressor):
    hits = [f for f in comparison["findings"] if (f["victim"], f["aggressor"]) == (victim, aggressor)]
    return hits[0] if hits else None


def test_run_moved_apart_is_better_and_run_moved_closer_is_worse(revisions):
    (_, old), (_, new) = revisions
    c = compare_reports(old.to_dict(), new.to_dict(), "rev A", "rev B")
    apart, closer = change_of(c, "CTL_LED", "CLK_ADC"), change_of(c, "CTL_PGOOD", "CLK_ETH")
    # common practice: coupling falls as the edge spacing grows and rises as it shrinks
    assert apart["change"] == "better" and closer["change"] == "worse"
    assert apart["old"]["min_spacing_mm"] == pytest.approx(0.2, abs=0.01)  # planted gap
    assert apart["new"]["min_spacing_mm"] == pytest.approx(0.5, abs=0.01)
    assert closer["new"]["min_spacing_mm"] == pytest.approx(0.4, abs=0.01)
    assert apart["new"]["budget_used_pct"] < apart["old"]["budget_used_pct"]
    assert closer["new"]["budget_used_pct"] > closer["old"]["budget_used_pct"]
    assert apart["moved_mm"] < 0.2 and closer["moved_mm"] < 0.3  # the runs' centre lines moved half the shift
    assert c["counts"]["worse"] == 1 and c["counts"]["better"] == 1 and c["counts"]["new"] == 0
    assert c["counts"]["fixed"] == 0 and c["counts"]["unchanged"] > 20  # one entry per coupled run
    assert {v["net"]: (v["old_status"], v["new_status"]) for v in c["victims"]} == {"CTL_PGOOD": ("pass", "fail")}
    assert c["regressed"] and c["schema"] == "nearfar.compare/1" and "estimates" in c["caution"]


def test_the_other_way_round(revisions):
    (_, old), (_, new) = revisions
    c = compare_reports(new.to_dict(), old.to_dict(), "rev B", "rev A")
    assert change_of(c, "CTL_LED", "CLK_ADC")["change"] == "worse"
    assert change_of(c, "CTL_PGOOD", "CLK_ETH")["change"] == "better"
    assert c["regressed"]


def test_a_report_against_itself_has_no_changes(revisions):
    (_, old), _ = revisions
    c = compare_reports(old.to_dict(), old.to_dict(), "a", "a")
    assert c["findings"] == [] and c["victims"] == [] and not c["regressed"] and c["warnings"] == []


def test_baseline_section_on_the_page(revisions, tmp_path):
    (_, old), (_, new) = revisions
    result = copy.copy(new)
    result.comparison = compare_reports(old.to_dict(), new.to_dict(), "rev A", "this scan")
    page = render_page(result, tmp_path)
    assert 'id="changes"' in page and 'href="#changes"' in page and "CTL_PGOOD" in page
    assert json.loads(json.dumps(result.to_dict()))["comparison"]["regressed"] is True


def _hotspot(victim, aggressor, x, status="fail", used=1.5, rank=1, length=20.0, gap=0.2):
    return {"rank": rank, "status": status, "victim": victim, "aggressor": aggressor, "layer": "L01",
            "layers": ["L01"], "x_mm": x, "y_mm": 0.0, "bbox_mm": [x - 10, -0.1, x + 10, 0.1],
            "budget_used": used, "coupled_length_mm": length, "min_spacing_mm": gap, "waiver": None}


def _report(hotspots, victims=(), verdict="fail", geometric=()):
    return {"schema": "nearfar.report/2", "run_id": "0" * 16, "created": "2026-01-01T00:00:00Z",
            "verdict": verdict, "board": {"name": "b"}, "rules": {}, "settings": {}, "hotspots": list(hotspots),
            "victims": list(victims), "geometric": list(geometric)}


def _victim(net, status, used, aggressors):
    return {"net": net, "status": status, "budget_used": used, "aggressors": aggressors}


def test_small_moves_match_and_large_moves_do_not():
    old = _report([_hotspot("A", "B", 10.0), _hotspot("B", "A", 10.0, rank=2)])
    nudged = _report([_hotspot("B", "A", 10.6, rank=1), _hotspot("A", "B", 10.6, rank=2)])
    c = compare_reports(old, nudged, "o", "n")
    assert c["counts"]["unchanged"] == 2 and c["findings"] == []  # same direction paired despite the order
    far = _report([_hotspot("A", "B", 40.0)])
    c = compare_reports(old, far, "o", "n")
    assert sorted(f["change"] for f in c["findings"]) == ["fixed", "fixed", "new"] and c["regressed"]


def test_a_new_passing_finding_is_listed_but_no_regression():
    old = _report([], verdict="pass")
    new = _report([_hotspot("A", "B", 10.0, status="pass", used=0.3)], verdict="pass")
    c = compare_reports(old, new, "o", "n")
    assert [f["change"] for f in c["findings"]] == ["new"] and not c["regressed"]


def test_below_the_listing_floor_is_better_not_fixed():
    old = _report([_hotspot("A", "B", 10.0, status="warn", used=0.9)])
    new = _report([], victims=[_victim("A", "pass", 0.1, ["B"])], verdict="pass")
    c = compare_reports(old, new, "o", "n")
    [f] = c["findings"]
    assert f["change"] == "better" and "listing floor" in f["note"] and not c["regressed"]


def test_threshold_and_status_steps():
    old = _report([_hotspot("A", "B", 10.0, status="pass", used=0.50)], verdict="pass")
    within = _report([_hotspot("A", "B", 10.0, status="pass", used=0.505)], verdict="pass")
    assert compare_reports(old, within, "o", "n")["counts"]["unchanged"] == 1
    more = _report([_hotspot("A", "B", 10.0, status="pass", used=0.52)], verdict="pass")
    assert compare_reports(old, more, "o", "n")["findings"][0]["change"] == "worse"
    assert compare_reports(old, more, "o", "n", threshold_pct=5.0)["counts"]["unchanged"] == 1


def test_geometric_findings_are_compared():
    g = {"status": "fail", "victim": "S", "aggressor": "W", "layers": ["L06"], "parallel_mm": 15.0,
         "max_parallel_mm": 5.0, "within_spacing_mm": 1.0, "min_spacing_mm": 0.4, "x_mm": 80.0, "y_mm": 40.0}
    c = compare_reports(_report([], geometric=[g]), _report([], verdict="pass"), "o", "n")
    [f] = c["findings"]
    assert f["change"] == "fixed" and f["kind"] == "geometric" and f["old"]["budget_used_pct"] == 300.0


def test_different_rules_are_warned_about():
    old, new = _report([]), _report([])
    new["rules"] = {"scan": {"warn_fraction": 0.5}}
    assert "different rules" in compare_reports(old, new, "o", "n")["warnings"][0]



def test_compare_command(revisions, tmp_path, capsys):
    (board_a, old), (board_b, new) = revisions
    write_report_folder(old, board_a, tmp_path / "a", images=False)
    write_report_folder(new, board_b, tmp_path / "b", images=False)
    code, out, _ = run_main(["compare", str(tmp_path / "a"), str(tmp_path / "b")], capsys)
    assert code == 1 and "REGRESSED" in out and "CTL_PGOOD" in out and "caution:" in out
    code, out, _ = run_main(["compare", str(tmp_path / "b"), str(tmp_path / "b" / "report.json"), "--json"], capsys)
    assert code == 0 and json.loads(out)["regressed"] is False
    # a board on one side is scanned with the rules given
    code, out, _ = run_main(["compare", str(DEMO), str(tmp_path / "a"), "--rules", str(RULES), "--json"], capsys)
    assert code == 0 and json.loads(out)["counts"]["unchanged"] == old.summary["hotspots_listed"] + 1


def test_compare_bad_report_is_one_line(tmp_path, capsys):
    (tmp_path / "r").mkdir()
    (tmp_path / "r" / "report.json").write_text('{"schema": "something else"}')
    code, _, err = run_main(["compare", str(tmp_path / "r"), str(tmp_path / "r")], capsys)
    assert code == 2 and len(err.strip().splitlines()) == 1 and "not a nearfar report" in err
    (tmp_path / "r" / "report.json").write_text('{"schema": "nearfar.report/2", "hotspots": [{"rank": 1}]}')
    code, _, err = run_main(["compare", str(tmp_path / "r"), str(tmp_path / "r")], capsys)
    assert code == 2 and "lacks or mangles a field" in err and "Traceback" not in err
