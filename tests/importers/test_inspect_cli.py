"""``nearfar inspect``: tables, JSON, and exit status 2 without traceback on bad input."""
import json
import subprocess
import sys
import zipfile

import pytest
from click.testing import CliRunner

from scanner.cli import cli, main

from artwork import write_board


def _main(args, capsys):
    with pytest.raises(SystemExit) as info:
        main(args)
    out = capsys.readouterr()
    return info.value.code, out.out, out.err


def test_json_fields(tmp_path, capsys):
    folder = write_board(tmp_path, x2=False)
    code, out, err = _main(["inspect", str(folder), "--json"], capsys)
    assert code == 0
    data = json.loads(out)
    assert [(l["name"], l["index"], l["kind"]) for l in data["layers"]] == [("L01", 0, "signal"), ("L02", 1, "signal")]
    assert data["layers"][0]["segments"] == 4
    # top traces: 20 + 20 + 15 + 5 mm
    assert data["layers"][0]["trace_length_mm"] == pytest.approx(60.0)
    assert data["nets"] == 4
    assert data["stackup"] == [] and data["stackup_source"] is None
    n = data["netting"]
    assert (n["netlist_points_matched"], n["netlist_points_total"]) == (4, 4)
    assert n["shorts"] == [] and n["opens"] == [] and 0 < n["netted_trace_fraction"] < 1


def test_table_output(tmp_path):
    folder = write_board(tmp_path, x2=True)
    result = CliRunner().invoke(cli, ["inspect", str(folder)])
    assert result.exit_code == 0, result.output
    assert "L01" in result.output and "gerber-x2" in result.output and "shorts: 0" in result.output


def _no_copper(folder):
    (folder / "silk-top.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nM02*\n")
    return folder


def _truncated(folder):
    write_board(folder, x2=True)
    top = folder / "board-top.gbr"
    top.write_text(top.read_text()[:-20])
    return folder


def _escaping_zip(folder):
    path = folder / "evil.zip"
    with zipfile.ZipFile(path, "w") as zf:
        zf.writestr("../../escape.gbr", "x")
    return path


@pytest.mark.parametrize("make, message", [
    (lambda p: p / "missing", "not found"),
    (lambda p: (p / "x.txt").write_text("hi") and p, "no importer"),
    (_no_copper, "no copper layers"),
    (_truncated, "board-top.gbr"),
    (_escaping_zip, "evil.zip: archive entry"),
])
def test_bad_input_exit_status_2(tmp_path, capsys, make, message):
    target = make(tmp_path)
    code, out, err = _main(["inspect", str(target)], capsys)
    assert code == 2
    assert message in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1


def test_bad_gerber_names_file_and_line(tmp_path, capsys):
    folder = write_board(tmp_path, x2=True)
    bad = folder / "board-top.gbr"
    lines = bad.read_text().splitlines()
    lines.insert(8, "D99*")
    bad.write_text("\n".join(lines))
    code, _, err = _main(["inspect", str(folder)], capsys)
    assert code == 2
    assert f"{bad}:9:" in err and "undefined aperture" in err


def test_subprocess_exit_status_and_no_traceback(tmp_path):
    folder = write_board(tmp_path, x2=False)
    (folder / "board.ipc").write_text("P  UNITS PARSECS\n999\n")
    proc = subprocess.run([sys.executable, "-c", "from scanner.cli import main; main()", "inspect", str(folder)],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert "board.ipc:1:" in proc.stderr and "PARSECS" in proc.stderr and "Traceback" not in proc.stderr


def test_errors_survive_parallel_parsing(tmp_path, capsys, monkeypatch):
    import scanner.importers.gerber as gerber

    folder = _truncated(tmp_path)
    monkeypatch.setattr(gerber, "PARALLEL_MIN_BYTES", 0)
    monkeypatch.setenv("NEARFAR_IMPORT_WORKERS", "2")
    code, _, err = _main(["inspect", str(folder)], capsys)
    assert code == 2 and "board-top.gbr:" in err and "truncated" in err


def test_demo_nets_with_class_role_and_pair(tmp_path, capsys):
    from pathlib import Path
    root = Path(__file__).resolve().parents[2]
    rules = tmp_path / "typo.toml"
    # the demo rules with one class pattern mistyped: CTL_* written CTRL_*
    rules.write_text((root / "fixtures/demo-rules.toml").read_text().replace('"CTL_*"', '"CTRL_*"'))
    code, out, _ = _main(["inspect", str(root / "fixtures/demo-board/x2"), "--rules", str(rules), "--json"], capsys)
    assert code == 0
    data = json.loads(out)
    nets = {n["name"]: n for n in data["net_list"]}
    assert len(nets) == data["nets"]
    assert nets["USB_P"] == {"name": "USB_P", "class": "diff-links", "role": "signal", "pair": "USB_N",
                             "pair_source": "name"}
    assert nets["GND"]["role"] in ("power", "plane") and nets["GND"]["pair"] is None
    assert nets["CTL_LED"]["class"] == "default"  # the typo leaves it unclassed ...
    warning = next(w for w in data["warnings"] if "CTRL_*" in w)
    assert "matches no net" in warning and "CTL_LED" in warning  # ... and the warning names the nearest nets
    assert {"p": "LVDS_P", "n": "LVDS_N", "source": "name"} in data["pairs"]
    code, text, _ = _main(["inspect", str(root / "fixtures/demo-board/x2"), "--rules", str(rules)], capsys)
    assert "differential pairs (2" in text and "USB_N (name)" in text and "CTRL_*" in text


def test_each_layer_shows_its_reference(tmp_path, capsys):
    # two signal layers, no plane: each is referenced to the other side of the board (L02 carries a pour)
    folder = write_board(tmp_path, x2=False)
    code, out, _ = _main(["inspect", str(folder), "--json"], capsys)
    layers = json.loads(out)["layers"]
    assert code == 0
    assert layers[0]["reference"].startswith("microstrip over L02 pour, ")
    assert "coupling is stronger than over a plane" in layers[0]["reference_evidence"]
    code, out, _ = _main(["inspect", str(folder)], capsys)
    assert "  L02: microstrip over the far side (L01), " in out
