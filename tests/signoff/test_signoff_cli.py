"""Sign-off from the command line on the demo board: `waive` writes an entry from a report row, `scan
--waivers` applies it and shows it, `scan --junit` writes a JUnit XML file that CI systems read."""
import contextlib
import csv
import io
import json
import tomllib
import xml.etree.ElementTree as ET

import pytest

from scanner.cli import main
from tests.hostile.cli import run_main
from tests.signoff.boards import DEMO, RULES




def quiet(args) -> tuple[int, str]:
    """Run the command line outside a test's capture: (exit status, standard output)."""
    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()), pytest.raises(SystemExit) as e:
        main(args)
    return e.value.code, out.getvalue()


@pytest.fixture(scope="module")
def signed_off(tmp_path_factory):
    """A first scan; waivers written from its rank-1 row (CTL_LED beside CLK_ADC, planted at a 0.2 mm gap) and
    from the VBAT_SENSE <- BUCK_SW row; a second scan with the waivers, a JUnit file and the first as baseline."""
    base = tmp_path_factory.mktemp("signoff")
    p = {"first": base / "first", "second": base / "second", "waivers": base / "waivers.toml",
         "junit": base / "crosstalk.xml"}
    assert quiet(["scan", str(DEMO), "--rules", str(RULES), "--out", str(p["first"]), "--no-images"])[0] == 1
    for args in (["--rank", "1", "--reason", "LED blink line, glitches unseen"],
                 ["--victim", "vbat_sense", "--aggressor", "BUCK_SW", "--reason", "sense filtered at 10 Hz"]):
        assert quiet(["waive", str(p["first"]), *args, "--by", "M. Oyelaran", "--to", str(p["waivers"])])[0] == 0
    p["code"], p["out"] = quiet(["scan", str(DEMO), "--rules", str(RULES), "--waivers", str(p["waivers"]), "--out",
                                 str(p["second"]), "--no-images", "--junit", str(p["junit"]), "--baseline",
                                 str(p["first"])])
    return p


def test_waive_prints_an_entry_from_a_report_row(signed_off, capsys):
    first = json.loads((signed_off["first"] / "report.json").read_text())
    worse = first["hotspots"][0]["directions"][0]  # the run's worse direction
    assert worse["victim"] == "CTL_LED" and worse["aggressor"] == "CLK_ADC"
    code, out, _ = run_main(["waive", str(signed_off["first"]), "--rank", "1", "--reason", "LED line", "--by",
                        "M. Oyelaran", "--on", "2026-03-02", "--expires", "2099-12-31"], capsys)
    assert code == 0
    entry = tomllib.loads(out)["waiver"][0]
    assert entry["victim"] == "CTL_LED" and entry["aggressor"] == "CLK_ADC" and entry["layer"] == "L01"
    assert entry["coupled_length_mm"] == pytest.approx(25.0, abs=0.01)  # planted run
    assert entry["min_spacing_mm"] == pytest.approx(0.2, abs=0.005)
    assert entry["budget_used_pct"] == pytest.approx(worse["budget_used_pct"], abs=0.01)
    assert entry["margin_pct"] == 10 and entry["id"] == "W1" and str(entry["expires_on"]) == "2099-12-31"
    x0, y0, x1, y1 = entry["area_mm"]
    assert x0 < first["hotspots"][0]["x_mm"] < x1 and y0 < first["hotspots"][0]["y_mm"] < y1


def test_scan_with_the_waivers(signed_off):
    p = signed_off
    entries = tomllib.loads(p["waivers"].read_text())["waiver"]
    assert [e["id"] for e in entries] == ["W1", "W2"] and entries[1]["victim"] == "VBAT_SENSE"
    report = json.loads((p["second"] / "report.json").read_text())
    # the rest of the board still fails (the data bus), so the exit status stays 1
    assert p["code"] == 1 and report["verdict"] == "fail"
    led = next(d for h in report["hotspots"] for d in h["directions"] if d["victim"] == "CTL_LED")
    assert led["status"] == "fail" and led["waiver"]["state"] == "waived" and led["waiver"]["id"] == "W1"
    assert "waived" in p["out"] and "waivers (2: 2 in force)" in p["out"]
    assert {g["victim"]: g["waiver"]["state"] for g in report["geometric"]} == {"VBAT_SENSE": "waived"}
    victims = {v["net"]: v for v in report["victims"]}
    assert victims["CTL_LED"]["status"] == "pass" and victims["CTL_LED"]["status_with_waived"] == "fail"
    with (p["second"] / "hotspots.csv").open() as fh:
        fh.readline()
        rows = {frozenset((r["victim"], r["aggressor"])): r for r in csv.DictReader(fh)}  # one row per run
    assert rows[frozenset(("CTL_LED", "CLK_ADC"))]["waived_by"] == "W1"
    assert rows[frozenset(("DBUS_D0", "DBUS_D1"))]["waived_by"] == ""
    comparison = report["comparison"]
    assert comparison["counts"]["worse"] == 0 and not comparison["regressed"]
    assert {v["net"] for v in comparison["victims"]} == {"CTL_LED", "VBAT_SENSE"}


def test_junit_file_structure(signed_off):
    """The usual JUnit XML layout (from memory, as CI systems read it): <testsuites> holding <testsuite>
    elements with tests / failures / errors / skipped counts, each <testcase> with name and classname and
    at most one <failure message type> or <skipped message> child."""
    report = json.loads((signed_off["second"] / "report.json").read_text())
    root = ET.parse(signed_off["junit"]).getroot()
    assert root.tag == "testsuites"
    [suite] = root.findall("testsuite")
    cases = suite.findall("testcase")
    victims = {v["net"]: v for v in report["victims"]}
    assert len(cases) == len(victims) + len(report["geometric"]) + 1  # + the coverage case
    failed = [c for c in cases if c.find("failure") is not None]
    skipped = [c for c in cases if c.find("skipped") is not None]
    for element in (root, suite):
        assert int(element.get("tests")) == len(cases)
        assert int(element.get("failures")) == len(failed)
        assert int(element.get("skipped")) == len(skipped)
        assert int(element.get("errors")) == 0 and float(element.get("time")) >= 0
    for case in cases:
        assert case.get("name") and case.get("classname") and len(case.findall("failure") + case.findall("skipped")) <= 1
    by_name = {c.get("name"): c for c in cases if c.get("classname").startswith("nearfar.victims.")}
    assert set(by_name) == set(victims)
    assert {n for n, c in by_name.items() if c.find("failure") is not None} == \
        {n for n, v in victims.items() if v["status"] == "fail"}
    led = by_name["CTL_LED"].find("skipped")
    assert led is not None and "LED blink line, glitches unseen" in led.get("message")
    assert by_name["DBUS_D0"].find("failure").get("type") == "over-budget"
    assert suite.find("properties/property[@name='nearfar.verdict']").get("value") == "fail"


def test_junit_read_by_a_reference_parser(signed_off):
    """junitparser (PyPI), a general reader of JUnit XML, sees the same counts and outcomes."""
    junitparser = pytest.importorskip("junitparser")
    xml = junitparser.JUnitXml.fromfile(str(signed_off["junit"]))
    [suite] = list(xml)
    cases = list(suite)
    assert suite.tests == len(cases)
    assert suite.failures == sum(any(isinstance(r, junitparser.Failure) for r in c.result) for c in cases)
    assert suite.skipped == sum(any(isinstance(r, junitparser.Skipped) for r in c.result) for c in cases) >= 1


def test_waive_needs_a_row(signed_off, capsys):
    code, _, err = run_main(["waive", str(signed_off["first"]), "--reason", "r", "--by", "b"], capsys)
    assert code == 2 and "--rank" in err and len(err.strip().splitlines()) == 1
    code, _, err = run_main(["waive", str(signed_off["first"]), "--rank", "999", "--reason", "r", "--by", "b"], capsys)
    assert code == 2 and "no finding of rank 999" in err


def test_bad_waivers_file_is_one_line(tmp_path, capsys):
    bad = tmp_path / "w.toml"
    bad.write_text('[[waiver]]\nvictim = "A"\n')
    code, _, err = run_main(["scan", str(DEMO), "--waivers", str(bad)], capsys)
    assert code == 2 and str(bad) in err and "needs aggressor" in err and len(err.strip().splitlines()) == 1
