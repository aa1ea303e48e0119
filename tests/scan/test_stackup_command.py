"""`nearfar stackup`, --stackup on scan/inspect/section, and the per-layer impedance table."""
import json
import shutil
import warnings
from pathlib import Path

import numpy as np
import pytest

from scanner.board.layerstack import board_environments
from scanner.board.roles import assign_roles
from scanner.cli import main
from scanner.coupling.layer_impedance import GAP_ASSUMED, pair_pieces, signal_layer_table
from scanner.physics import cohn_coupled_stripline, cohn_stripline
from scanner.rules import Rules
from tests.scan.synthetic import board_from, polyline, stackup_of

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures/demo-board/x2"

#: the demo board's build as in its job file (ml6-logger.gbrjob), as a fabricator's CSV table in mil
DEMO_CSV = """Layer,Type,Thickness (mil),Dielectric constant
Top solder mask,soldermask,{m},3.8
L1,copper,{c},
Prepreg L1-L2,prepreg,{p},4.2
L2,copper,{c},
Core L2-L3,core,{k},4.5
L3,copper,{c},
Prepreg L3-L4,prepreg,{q},4.2
L4,copper,{c},
Core L4-L5,core,{k},4.5
L5,copper,{c},
Prepreg L5-L6,prepreg,{p},4.2
L6,copper,{c},
Bottom solder mask,soldermask,{m},3.8
""".format(**{k: v / 0.0254 for k, v in dict(m=0.02, c=0.035, p=0.2, k=0.3, q=0.35).items()})


def run(args, capsys):
    with pytest.raises(SystemExit) as e:
        main([str(a) for a in args])
    out, err = capsys.readouterr()
    return e.value.code, out, err


def layers_by_name(out: str) -> dict:
    return {row["name"]: row for row in json.loads(out)["layers"]}


def test_demo_table_matches_section_for_the_same_geometry(capsys):
    code, out, _ = run(["stackup", DEMO, "--json"], capsys)
    assert code == 0
    rows = layers_by_name(out)
    assert set(rows) == {"L01", "L03", "L06"}
    for row in rows.values():
        assert {"name", "structure", "references", "height_mm", "width_mm", "gap_mm", "z0_ohm", "zdiff_ohm"} <= set(row)
    top, inner = rows["L01"], rows["L03"]
    assert (top["structure"], top["references"], top["height_mm"]) == ("microstrip", ["L02"], 0.2)
    assert (inner["structure"], inner["references"], inner["height_mm"]) == ("stripline", ["L02", "L04"], 0.3)
    # the USB pair on L03 is routed 0.15 mm wide at a 0.1 mm gap (fixtures/make_demo_board.py)
    assert (inner["width_mm"], inner["gap_mm"], inner["gap_source"]) == (0.15, 0.1, "pairs")
    assert top["gap_source"] == GAP_ASSUMED  # only fan-outs of pairs on L01

    # the same cross-sections described by hand to `section`, from the job file's values
    _, out, _ = run(["section", "--width", 0.15, "--height-below", 0.2, "--er-below", 4.2, "--mask", 0.02,
                     "--mask-er", 3.8, "--copper", 0.035, "--json"], capsys)
    assert json.loads(out)["z0_ohm"][0] == pytest.approx(top["z0_ohm"], rel=0.01)
    hand = ["--width", 0.15, "--height-below", 0.3, "--er-below", 4.5, "--height-above", 0.385, "--er-above", 4.2,
            "--copper", 0.035, "--planes", "both", "--json"]
    _, out, _ = run(["section"] + hand, capsys)
    assert json.loads(out)["z0_ohm"][0] == pytest.approx(inner["z0_ohm"], rel=0.01)
    _, out, _ = run(["section", "--spacing", 0.1] + hand, capsys)
    assert 2 * json.loads(out)["z_odd_ohm"] == pytest.approx(inner["zdiff_ohm"], rel=0.01)


def test_text_output_draws_the_stack(capsys):
    code, out, _ = run(["stackup", DEMO], capsys)
    assert code == 0
    for text in ("from the Gerber job file", "L02 plane", "L03 signal", "stripline, reference L02 and L04",
                 "Prepreg L3-L4", "Zdiff ohm", "caution:"):
        assert text in out


def test_a_stackup_file_on_every_command(tmp_path, capsys):
    csv = tmp_path / "demo-stack.csv"
    csv.write_text(DEMO_CSV)
    _, out, _ = run(["stackup", DEMO, "--stackup", csv, "--json"], capsys)
    data = json.loads(out)
    assert data["stackup"]["source"] == "stackup-file" and data["stackup"]["path"].endswith("demo-stack.csv")
    from_file = layers_by_name(out)
    _, out, _ = run(["stackup", DEMO, "--json"], capsys)
    from_job = layers_by_name(out)
    for name, row in from_job.items():  # the same build, given in mil instead of the job file's mm
        assert from_file[name]["z0_ohm"] == pytest.approx(row["z0_ohm"], rel=1e-3)
        assert from_file[name]["zdiff_ohm"] == pytest.approx(row["zdiff_ohm"], rel=1e-3)

    _, out, _ = run(["section", "--stackup", csv, "--layer", "L3", "--width", 0.15, "--spacing", 0.1, "--json"], capsys)
    section = json.loads(out)
    assert section["layer"].startswith("layer L3 of") and "stripline" in section["layer"]
    assert 2 * section["z_odd_ohm"] == pytest.approx(from_file["L03"]["zdiff_ohm"], rel=0.01)

    code, out, _ = run(["inspect", DEMO, "--stackup", csv, "--json"], capsys)
    assert code == 0 and json.loads(out)["stackup_source"] == "stackup-file"

    code, out, _ = run(["scan", DEMO, "--stackup", csv, "--json"], capsys)
    report = json.loads(out)
    assert report["stackup"]["source"] == "stackup-file"
    assert report["stackup"]["signal_layers"]["L03"]["z0_ohm"] == pytest.approx(from_file["L03"]["z0_ohm"], rel=1e-3)


@pytest.mark.parametrize("command", ["stackup", "scan", "inspect"])
def test_copper_count_mismatch_is_refused_in_one_line(tmp_path, capsys, command):
    csv = tmp_path / "four.csv"
    csv.write_text("Layer,Type,Thickness (um),Dk\nA,copper,35,\nd,core,400,4.4\nB,copper,35,\nd,prepreg,400,4.2\n"
                   "C,copper,35,\nd,core,400,4.4\nD,copper,35,\n")
    code, out, err = run([command, DEMO, "--stackup", csv], capsys)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "four.csv" in err
    assert "4 copper layers" in err and "board has 6 copper layers" in err


def test_section_stackup_option_conflicts(tmp_path, capsys):
    csv = tmp_path / "demo-stack.csv"
    csv.write_text(DEMO_CSV)
    for extra in (["--height-below", 0.2], ["--mask", 0.02], []):
        code, _, err = run(["section", "--stackup", csv, "--width", 0.1] + extra
                           + (["--layer", "L1"] if extra else []), capsys)
        assert code == 2 and ("cannot be combined" in err or "needs --layer" in err)
    code, _, err = run(["section", "--stackup", csv, "--layer", "L9", "--width", 0.1], capsys)
    assert code == 2 and "not a copper layer" in err


def test_without_a_stackup_the_assumed_build_is_loud(tmp_path, capsys):
    board = tmp_path / "board"
    shutil.copytree(DEMO, board, ignore=shutil.ignore_patterns("*.gbrjob"))
    code, out, _ = run(["stackup", board], capsys)
    assert code == 0 and "ASSUMED" in out and "NO STACKUP GIVEN" in out and "!" * 20 in out
    code, out, _ = run(["scan", board, "--json"], capsys)
    assert json.loads(out)["stackup"]["source"] == "default"
    assert any("NO STACKUP GIVEN" in w for w in json.loads(out)["warnings"])
    code, out, _ = run(["inspect", board, "--json"], capsys)
    assert json.loads(out)["stackup_assumed"].startswith("6 copper layers in 1.6 mm")


def skrf_microstrip_z0(w_mm, h_mm, t_mm, er):
    """scikit-rf MLine, Hammerstad & Jensen with its thickness correction, quasi-static (disp='none')."""
    skrf = pytest.importorskip("skrf")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        line = skrf.media.MLine(frequency=skrf.Frequency(1, 1, 1, "GHz"), w=w_mm * 1e-3, h=h_mm * 1e-3,
                                t=t_mm * 1e-3, ep_r=er, model="hammerstadjensen", disp="none",
                                diel="frequencyinvariant", tand=0.0, rho=1.7e-8, rough=0.0, compatibility_mode="qucs")
    return float(np.real(line.zl_eff))


def test_table_against_published_results():
    # L1: bare microstrip 0.3 mm wide, 35 µm thick, 0.2 mm over L2 in er 4.3; L3: a centred stripline of
    # 0.1 µm copper (Cohn's zero-thickness geometry) in 0.5 mm of er 4.0, with a pair at a 0.12 mm gap
    stack = stackup_of(0.035, (0.2, 4.3), 0.035, (0.25, 4.0), 1e-4, (0.25, 4.0), 0.035)
    w, gap = 0.2, 0.12
    traces = {0: polyline([(0, 0), (30, 0)], 0, 0.3),
              2: polyline([(0, 5), (30, 5)], 1, w) + polyline([(0, 5 + w + gap), (30, 5 + w + gap)], 2, w)
              + polyline([(0, -5), (40, -5)], 3, w)}
    board = board_from(traces, ["A", "DP_P", "DP_N", "B"], stack)
    env = board_environments(board, None)
    rows = signal_layer_table(board, env, pair_pieces(board, env.signal, assign_roles(board.nets, Rules()).partner))
    top, inner = rows
    # scikit-rf MLine (Hammerstad & Jensen, IEEE MTT-S Digest 1980), about 1 % in this range
    assert top.z0_ohm == pytest.approx(skrf_microstrip_z0(0.3, 0.2, 0.035, 4.3), rel=0.015)
    assert (inner.width_mm, inner.gap_mm, inner.gap_source) == (w, gap, "pairs")
    # S. B. Cohn, IRE Trans. MTT-2, 1954 and MTT-3, 1955 (exact), via scipy.special.ellipk
    assert inner.z0_ohm == pytest.approx(cohn_stripline(w, 0.5, 4.0), rel=0.01)
    assert inner.zdiff_ohm == pytest.approx(2 * cohn_coupled_stripline(w, gap, 0.5, 4.0)[1], rel=0.01)
