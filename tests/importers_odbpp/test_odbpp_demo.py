"""The demo board's ODB++ job against its Gerber X2 and Gerber X1 + IPC-D-356 sets.

The Gerber sets are parsed by gerbonara, independently of the ODB++ reader, and the X1
set gets its nets from the netlist and copper connectivity rather than from attributes.
All three describe one layout, so they must give the same layers, nets, trace segments,
holes and, through the whole scan, the same hotspots.
"""
import copy
import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

import scanner
from scanner.cli import cli
from scanner.importers import load_board
from scanner.importers.odbpp import load_odbpp
from scanner.rules import load_rules

from tests.importers_odbpp.jobs import tar_job

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures" / "demo-board"
#: coordinates and widths agree within this (mm)
TOLERANCE_MM = 1e-3
#: hotspot lengths and voltages agree within this share
HOTSPOT_REL = 0.01

pytestmark = pytest.mark.skipif(not (DEMO / "odbpp").is_dir(), reason="demo board not generated")


@pytest.fixture(scope="module")
def boards():
    return {"odbpp": load_board(DEMO / "odbpp"), "x2": load_board(DEMO / "x2"), "x1": load_board(DEMO / "x1")}


def segment_rows(board, layer) -> list[tuple]:
    """(x0, y0, x1, y1, width, net) with each segment's lower end first, sorted."""
    s = layer.segments
    flip = (s.x0 > s.x1) | ((s.x0 == s.x1) & (s.y0 > s.y1))
    x0, x1 = np.where(flip, s.x1, s.x0), np.where(flip, s.x0, s.x1)
    y0, y1 = np.where(flip, s.y1, s.y0), np.where(flip, s.y0, s.y1)
    names = [board.nets[i] if i >= 0 else None for i in s.net]
    return sorted(zip(*(np.round(v, 6).tolist() for v in (x0, y0, x1, y1, s.width)), names))


@pytest.mark.parametrize("other", ["x2", "x1"])
def test_same_layers_nets_and_segments(boards, other):
    odb, ref = boards["odbpp"], boards[other]
    assert [(l.name, l.side, l.kind) for l in odb.layers] == [(l.name, l.side, l.kind) for l in ref.layers]
    assert len(odb.layers) == 6
    assert sorted(odb.nets) == sorted(ref.nets)
    for la, lb in zip(odb.layers, ref.layers):
        ra, rb = segment_rows(odb, la), segment_rows(ref, lb)
        assert len(ra) == len(rb) > 0 or la.kind == "plane", la.name
        for p, q in zip(ra, rb):
            assert np.allclose(p[:5], q[:5], atol=TOLERANCE_MM, rtol=0) and p[5] == q[5], (la.name, p, q)


@pytest.mark.parametrize("other", ["x2", "x1"])
def test_same_copper_shapes_and_holes(boards, other):
    odb, ref = boards["odbpp"], boards[other]
    # without X2 aperture functions every flash is a pad, so X1 is compared on pads and vias together
    groups = [("pad",), ("via",), ("region",)] if other == "x2" else [("pad", "via"), ("region",)]
    for la, lb in zip(odb.layers, ref.layers):
        for role in groups:
            a = la.shapes.geometry[np.isin(la.shapes.role, role)]
            b = lb.shapes.geometry[np.isin(lb.shapes.role, role)]
            assert len(a) == len(b), (la.name, role)
            assert sum(g.area for g in a) == pytest.approx(sum(g.area for g in b), rel=1e-9), (la.name, role)

    def holes(board):
        h = board.holes
        return sorted(zip(np.round(h.x, 4).tolist(), np.round(h.y, 4).tolist(), np.round(h.diameter, 4).tolist(),
                          h.plated.tolist(), [board.nets[i] if i >= 0 else None for i in h.net]))

    assert holes(odb) == holes(ref)


def test_netting_is_complete(boards):
    odb = boards["odbpp"]
    assert odb.netting.method == "odbpp-eda" and not odb.netting.faults
    assert odb.netting.netted_trace_fraction == 1.0 and odb.netting.synthetic_nets == 0


def test_stackup_matches_the_gerber_job_file(boards):
    odb, x2 = boards["odbpp"].stackup, boards["x2"].stackup
    assert odb is not None and odb.source == "odbpp-job" and x2.source == "job-file"
    assert [(s.kind, s.thickness_mm, s.epsilon_r, s.copper_index) for s in odb.layers] == \
        [(s.kind, s.thickness_mm, s.epsilon_r, s.copper_index) for s in x2.layers]
    assert odb.total_thickness_mm == pytest.approx(1.6)  # the board's stated 1.6 mm build (fixtures/README.md)


def _key(h):
    return (h.victim, h.aggressor, h.layer, h.status)


def test_same_hotspots_on_all_three(boards):
    rules = load_rules(ROOT / "fixtures" / "demo-rules.toml")
    x1 = copy.copy(boards["x1"])
    x1.stackup = boards["odbpp"].stackup  # the X1 set carries no stackup; give it the one the other two carry
    results = {name: scanner.scan(board, rules) for name, board in (("odbpp", boards["odbpp"]), ("x2", boards["x2"]),
                                                                 ("x1", x1))}
    odb = sorted(results["odbpp"].hotspots, key=_key)
    assert any(h.status == "fail" for h in odb)
    for name in ("x2", "x1"):
        other = sorted(results[name].hotspots, key=_key)
        assert [_key(h) for h in odb] == [_key(h) for h in other], name
        for a, b in zip(odb, other):
            for field in ("coupled_length_mm", "next_mv", "fext_mv"):
                assert getattr(a, field) == pytest.approx(getattr(b, field), rel=HOTSPOT_REL, abs=1e-6), \
                    (name, _key(a), field)


def test_demo_job_as_archive(boards, tmp_path):
    board = load_odbpp(tar_job(DEMO / "odbpp" / "ml6-logger", tmp_path / "ml6-logger.tgz"))
    assert [len(l.segments) for l in board.layers] == [len(l.segments) for l in boards["odbpp"].layers]
    assert sorted(board.nets) == sorted(boards["odbpp"].nets)


def test_inspect_reads_the_job():
    result = CliRunner().invoke(cli, ["inspect", str(DEMO / "odbpp"), "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["format"] == "odbpp" and len(data["layers"]) == 6 and data["stackup_source"] == "odbpp-job"
    assert data["netting"]["shorts"] == [] and data["netting"]["opens"] == []
