"""Resource limits: file size, objects per file, segments per board; each refused with one clear line.

The limits are lowered through their environment variables so the files stay small.
"""
from pathlib import Path

import pytest

from tests.hostile import corpus
from tests.hostile.cli import assert_one_line_error, run_main
from tests.hostile.corpus import Case, mm


def refused(capsys, target: Path, case: Case, *args) -> None:
    code, _, err = run_main(["inspect", target, *args], capsys)
    assert code == 2
    assert_one_line_error(err, case)


def test_file_size_limit(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("NEARFAR_MAX_FILE_MB", "1")
    lines = corpus.top_lines()
    lines.insert(1, "G04 " + "x" * (1 << 20) + "*")
    board = corpus.board_with(tmp_path, corpus.TOP_FILE, lines)
    refused(capsys, board, Case(board, corpus.TOP_FILE, "larger than the limit of 1 MB"))


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero")
def test_endless_device_read_only_to_the_limit(tmp_path, capsys, monkeypatch):
    """A rules 'file' that never ends is read only up to the limit, then refused."""
    monkeypatch.setenv("NEARFAR_MAX_FILE_MB", "1")
    board = corpus.write_board(tmp_path / "board")
    code, _, err = run_main(["scan", board, "--rules", "/dev/zero"], capsys)
    assert code == 2
    assert_one_line_error(err, Case(board, "/dev/zero", "larger than the limit"))


def test_graphic_object_limit_names_the_line(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("NEARFAR_MAX_OBJECTS", "3")
    lines = corpus.top_lines()
    board = corpus.board_with(tmp_path, corpus.TOP_FILE, lines)
    fourth = [i for i, line in enumerate(lines) if line.endswith(("D01*", "D03*"))][3]
    refused(capsys, board, Case(board, corpus.TOP_FILE, "more than 3 graphic objects", line=fourth + 1))


def test_repeated_hole_limit(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("NEARFAR_MAX_OBJECTS", "1000")
    lines = corpus.drill_lines()
    lines.insert(-1, "R100000X0.010")
    board = corpus.board_with(tmp_path, corpus.DRILL_FILE, lines)
    refused(capsys, board, Case(board, corpus.DRILL_FILE, "more than 1,000 holes and routes", line=len(lines) - 1))


def test_netlist_point_limit(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("NEARFAR_MAX_OBJECTS", "6")  # as many as the top layer's objects
    lines = corpus.netlist_lines()
    lines[-1:-1] = [corpus.netlist_point(327, "CLK", 2 + i, 10, 1) for i in range(3)]
    board = corpus.board_with(tmp_path, corpus.NETLIST_FILE, lines, x2=False)
    refused(capsys, board, Case(board, corpus.NETLIST_FILE, "more than 6 netlist points"))


def test_arc_pieces_limit(tmp_path, capsys, monkeypatch):
    """A full circle of 1 m radius flattens to about 1 600 pieces at the 2 µm chord tolerance."""
    monkeypatch.setenv("NEARFAR_MAX_SEGMENTS", "1000")
    board, _ = corpus.top_with(tmp_path, "M02*", ["D10*", "G75*", f"X{mm(10)}Y{mm(10)}D02*", "G02*",
                                                  f"X{mm(10)}Y{mm(10)}I{mm(1000)}J0D01*", "G01*"])
    refused(capsys, board, Case(board, corpus.TOP_FILE, "more than 1,000 straight pieces from arcs"))


def test_board_segment_limit(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("NEARFAR_MAX_SEGMENTS", "1")
    bottom = [line for line in corpus.bottom_lines() if not line.startswith(("G36", "G37", "X0Y"))]
    bottom = [line for line in bottom if "D01" not in line]  # via lands only: no pour, no traces
    board = corpus.board_with(tmp_path, corpus.BOTTOM_FILE, bottom)
    refused(capsys, board, Case(board, "board", "more than 1 trace segments on the board"))


@pytest.mark.parametrize("value", ["lots", "0", "-5", "1e6"])
def test_bad_limit_setting(tmp_path, capsys, monkeypatch, value):
    monkeypatch.setenv("NEARFAR_MAX_OBJECTS", value)
    board = corpus.write_board(tmp_path / "board")
    code, _, err = run_main(["inspect", board], capsys)
    assert code == 2 and err.count("\n") == 1
    assert "NEARFAR_MAX_OBJECTS must be a whole number" in err and repr(value) in err
