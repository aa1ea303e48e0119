"""Files whose objects land off the board, and nets far below what the files promise: counted, warned about in
every output and, past a small share, turning the verdict incomplete (exit status 3) — never silently scored.
The refusals (most or all of a file off the board) are corpus cases (corpus.py)."""
import json

import pytest

from scanner import load_board
from scanner.errors import InputError
from scanner.importers import _named_in_archive
from tests.hostile import corpus
from tests.hostile.cli import run_main
from tests.importers_odbpp import jobs


def scanned(capsys, target, tmp_path) -> tuple[int, dict]:
    code, _, err = run_main(["scan", target, "--out", tmp_path / "out", "--no-images"], capsys)
    return code, json.loads((tmp_path / "out" / "report.json").read_text())


def drill_with_holes_off_board(tmp_path, on: int, off: int):
    """The board's drill file with ``on`` more holes on the board and ``off`` holes 850 mm to its right."""
    lines = corpus.drill_lines()
    lines[-1:-1] = [f"X{2 + i:.3f}Y15.000" for i in range(on)] + [f"X{900 + i:.3f}Y10.000" for i in range(off)]
    return corpus.board_with(tmp_path, corpus.DRILL_FILE, lines)


def test_a_few_holes_off_board_are_a_warning(tmp_path, capsys):
    code, report = scanned(capsys, drill_with_holes_off_board(tmp_path, on=20, off=1), tmp_path)
    assert code == 1 and report["unchecked"] == []
    assert any("1 of 23 holes lie off the board" in w and "(900.000, 10.000)" in w for w in report["warnings"])


def test_more_than_a_small_share_of_holes_off_board_is_a_problem(tmp_path, capsys):
    """3 of 10 holes off the board: past the 10 % share, a reason in `unchecked`: the verdict cannot be a pass."""
    board = drill_with_holes_off_board(tmp_path, on=5, off=3)
    assert load_board(board).incomplete == [f"{board / corpus.DRILL_FILE}: 30 % of its holes lie off the board "
                                            "(wrong units, or another board's file?)"]
    code, report = scanned(capsys, board, tmp_path)
    assert report["verdict"] in ("fail", "incomplete") and any("30 % of its holes" in r for r in report["unchecked"])


def test_netlist_matching_under_half_its_points_makes_the_verdict_incomplete(tmp_path, capsys):
    """Six more top-side points where the top has no copper: at most 4 of 10 points can match."""
    lines = corpus.netlist_lines()
    lines[-1:-1] = [corpus.netlist_point(327, "DATA", 20 + i, 5, 1) for i in range(6)]
    board = corpus.board_with(tmp_path, corpus.NETLIST_FILE, lines, x2=False)
    code, out, _ = run_main(["scan", board, "--out", tmp_path / "out", "--no-images"], capsys)
    report = json.loads((tmp_path / "out" / "report.json").read_text())
    matched = load_board(board).netting.netlist_points_matched
    assert matched <= 4
    loud = f"NETS INCOMPLETE: the netlist matched only {matched} of its 10 points"
    assert any(w.startswith(loud) for w in report["warnings"]) and loud in out
    assert any(f"matched only {matched} of its 10 points" in r for r in report["unchecked"])
    assert code == (1 if report["verdict"] == "fail" else 3)


@pytest.mark.parametrize("eda", ["HDR junk\nUNITS=MM\nLYR top gnd bot drill\nNET A\nSNT TRC\n", jobs.EDA])
def test_eda_data_that_names_no_copper(tmp_path, eda):
    """EDA data that links no feature (garbage, or another job's) leaves every trace without a net: loud."""
    board = load_board(jobs.write_job(tmp_path, jobs.job_files(steps__pcb__eda__data=eda)))
    if eda is jobs.EDA:
        assert board.incomplete == [] and board.netting.netted_trace_fraction > 0.9
    else:
        assert board.incomplete == [f"the EDA data ({tmp_path / 'testjob/steps/pcb/eda/data'}) names nets, but no "
                                    "trace carries one: the nets cannot be trusted"]
        assert any(w.startswith("NETS INCOMPLETE") for w in board.warnings)


def test_errors_inside_an_archive_name_the_entry(tmp_path):
    """Whatever an importer raises about a file in the unpacking folder is shown as archive!entry."""
    root = tmp_path / "nearfar-unpack-x"
    named = _named_in_archive(InputError("bad", path=root / "gerbers" / "top.gbr", line=7), root, "board.zip!")
    assert named.one_line() == "board.zip!gerbers/top.gbr:7: bad"
    named = _named_in_archive(PermissionError(13, "Permission denied", str(root / "top.gbr")), root, "board.zip!")
    assert (named.filename, named.strerror) == ("board.zip!top.gbr", "Permission denied")
    elsewhere = InputError("bad", path=tmp_path / "rules.toml")
    assert _named_in_archive(elsewhere, root, "board.zip!") is elsewhere
