"""The bundled demo board: its X2 and X1+netlist sets must give the same nets on the same segments."""
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

import scanner
from scanner.cli import cli

from artwork import assert_same_segments

DEMO = Path(__file__).resolve().parents[2] / "fixtures" / "demo-board"

pytestmark = pytest.mark.skipif(not (DEMO / "x2").is_dir() or not (DEMO / "x1").is_dir(),
                                reason="demo board not generated (fixtures/make_demo_board.py)")


@pytest.fixture(scope="module")
def boards():
    return scanner.load_board(DEMO / "x2"), scanner.load_board(DEMO / "x1")


def test_same_nets_on_same_segments(boards):
    x2, x1 = boards
    assert len(x2.layers) == len(x1.layers) == 6
    assert_same_segments(x2, x1)
    assert sorted(x2.nets) == sorted(x1.nets)


def test_netting_is_complete(boards):
    x2, x1 = boards
    assert x1.netting.netlist_points_matched == x1.netting.netlist_points_total > 0
    assert not x1.netting.faults and not x2.netting.faults
    assert x2.netting.netted_trace_fraction == x1.netting.netted_trace_fraction == 1.0
    assert [l.kind for l in x2.layers] == [l.kind for l in x1.layers]
    assert x2.stackup is not None and x2.stackup.source == "job-file"


@pytest.mark.parametrize("variant", ["x1", "x2"])
def test_inspect(variant):
    result = CliRunner().invoke(cli, ["inspect", str(DEMO / variant), "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert len(data["layers"]) == 6 and data["netting"]["shorts"] == [] and data["netting"]["opens"] == []
    assert [l["kind"] for l in data["layers"]] == ["signal", "plane", "signal", "plane", "plane", "signal"]
    if variant == "x2":  # the job file's MaterialStackup: 6 copper layers
        assert sum(s["kind"] == "copper" for s in data["stackup"]) == 6
