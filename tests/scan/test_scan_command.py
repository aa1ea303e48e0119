"""`nearfar scan` end to end: exit codes, JSON on stdout, files in --out, bad input."""
import csv
import json
from pathlib import Path

import pytest

from scanner.cli import main

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures/demo-board/x2"
RULES = ROOT / "fixtures/demo-rules.toml"


def run(args, capsys):
    with pytest.raises(SystemExit) as e:
        main(args)
    out, err = capsys.readouterr()
    return e.value.code, out, err


def test_demo_scan_fails_and_writes_reports(tmp_path, capsys):
    code, out, err = run(["scan", str(DEMO), "--rules", str(RULES), "--out", str(tmp_path), "--no-images"], capsys)
    assert code == 1  # the demo board has planted violations
    assert "Overall: FAIL" in out and "caution:" in out and "CTL_LED" in out
    report = json.loads((tmp_path / "report.json").read_text())
    assert report["schema"] == "nearfar.report/2" and report["hotspots"][0]["rank"] == 1
    with (tmp_path / "hotspots.csv").open() as fh:
        assert fh.readline() == f"# nearfar run {report['run_id']}, {report['created']}\n"
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(report["hotspots"])
    assert rows[0]["victim"] == report["hotspots"][0]["directions"][0]["victim"]
    assert rows[0]["id"] == report["hotspots"][0]["id"]
    assert rows[0]["fix_spacing_needed_mm"] != ""
    # one vocabulary: budget used in percent in the CSV as in report.json, statuses pass/warn/fail only
    assert float(rows[0]["budget_used_pct"]) == report["hotspots"][0]["budget_used_pct"] > 100
    assert {r["status"] for r in rows} <= {"pass", "warn", "fail"}
    assert " ok " not in out
    assert not list(tmp_path.glob("*.part")) and not list(tmp_path.glob(".*.part"))


def test_json_flag_prints_the_report_only(capsys):
    code, out, err = run(["scan", str(DEMO), "--rules", str(RULES), "--json"], capsys)
    assert code == 1
    assert json.loads(out)["board"]["nets"] > 0
    assert err == ""  # quiet under --json


def test_lenient_rules_pass_with_exit_zero(tmp_path, capsys):
    rules = tmp_path / "lenient.toml"
    rules.write_text('[[class]]\nname = "all"\nnets = ["*"]\nnext_budget_pct = 95\nfext_budget_pct = 95\n')
    code, out, _ = run(["scan", str(DEMO), "--rules", str(rules), "--top", "3"], capsys)
    assert code == 0 and "Overall: PASS" in out


@pytest.mark.parametrize("args, needle", [
    (["scan", "does/not/exist"], "does/not/exist"),
    (["scan", str(DEMO), "--rules", "missing-rules.toml"], "missing-rules.toml"),
])
def test_bad_input_is_one_line_and_exit_2(args, needle, capsys):
    code, out, err = run(args, capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0] and "Traceback" not in err


def test_bad_rules_value_names_the_file(tmp_path, capsys):
    rules = tmp_path / "r.toml"
    rules.write_text("[scan]\nangle_tolerance_deg = 80\n")
    code, _, err = run(["scan", str(DEMO), "--rules", str(rules)], capsys)
    assert code == 2 and str(rules) in err and "angle_tolerance_deg" in err


def test_a_skipped_layer_exits_3_and_says_so_first(tmp_path, capsys):
    rules = tmp_path / "skip.toml"
    rules.write_text('[scan]\nskip_layers = ["L03"]\n\n'
                     '[[class]]\nname = "all"\nnets = ["*"]\nnext_budget_pct = 95\nfext_budget_pct = 95\n')
    code, out, _ = run(["scan", str(DEMO), "--rules", str(rules), "--out", str(tmp_path / "out"), "--no-images"], capsys)
    assert code == 3
    first, second = out.splitlines()[:2]
    assert first.startswith("INCOMPLETE: nothing over budget") and "of signal trace on 2 layers" in first
    assert second.startswith("not checked: layer L03 not searched (skipped by the rules")
    report = json.loads((tmp_path / "out/report.json").read_text())
    row = next(r for r in report["coverage"]["layers"] if r["name"] == "L03")
    assert report["verdict"] == "incomplete" and not row["scanned"] and "skip_layers" in row["reason"]
    assert 0 < report["coverage"]["scanned_trace_fraction"] < 1


def test_an_internal_error_exits_4_in_one_line(monkeypatch, capsys):
    def broken(*_args, **_kw):
        raise RuntimeError("planted fault")

    monkeypatch.setattr("scanner.commands.scan.scan", broken)
    code, out, err = run(["scan", str(DEMO)], capsys)
    assert code == 4 and out == ""
    assert err.count("\n") == 1 and "internal error: RuntimeError: planted fault" in err and "Traceback" not in err


def test_help_states_every_exit_status(capsys):
    code, out, _ = run(["scan", "--help"], capsys)
    assert code == 0
    for status in ("0  pass", "1  fail", "2  bad input", "3  incomplete", "4  internal error"):
        assert status in out
