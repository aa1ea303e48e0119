"""A real 2-layer board without planes: both layers get a reference, and nothing passes unchecked."""
from pathlib import Path

import pytest

from scanner import load_board, scan
from scanner.board.layerstack import board_environments
from scanner.rules import parse_rules

BOARD = Path(__file__).resolve().parents[2] / "../shared/real-boards/solar-sensor-2layer"


@pytest.fixture(scope="module")
def board(tmp_path_factory):
    if not BOARD.is_dir():
        pytest.skip("real boards not present")
    # the board file names the copper files, so this test does not depend on guessing them from extensions
    spec = tmp_path_factory.mktemp("spec") / "board.toml"
    spec.write_text('layers = ["IRNASIoTbank1.2.Top", "IRNASIoTbank1.2.Bot"]\ndrills = ["IRNASIoTbank1.2.Drill"]\n')
    return load_board(BOARD, board_file=spec)


def test_each_side_is_referenced_to_the_other(board):
    env = board_environments(board, None)
    assert env.plane_layers == frozenset() and env.skipped == {}
    thickness = env.stackup.total_thickness_mm
    for index, other in ((0, 1), (1, 0)):
        e = env.signal[index]
        assert e.reference.layers == (other,) and e.reference.kind in ("pour", "far side")
        # the laminate between the two copper sides of the stated (default) build
        assert 0.8 * thickness < e.height_mm < thickness


def test_skipping_both_layers_is_incomplete_not_a_pass(board):
    result = scan(board, parse_rules({"scan": {"skip_layers": ["L01", "L02"]}}, "test rules"))
    assert result.exit_code == 3 and result.coverage["scanned_trace_fraction"] == 0.0
    assert [row["reason"] for row in result.coverage["layers"]] == ["skipped by the rules ([scan] skip_layers)"] * 2
