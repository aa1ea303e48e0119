"""One run, one folder: the output folder is replaced whole or not at all, every file names the run, values are
checked before anything is written, and inputs are never changed. In-process cases; runs in their own process
(killed, stopped, two at once, a file-size limit) are in test_output_runs.py."""
import csv
import errno
import fcntl
import io
import os
from pathlib import Path

import pytest

import scanner.commands.inspect
import scanner.commands.scan
from scanner import load_board, scan
from scanner.report.files import hotspots_csv
from scanner.workspace import Stopped
from tests.hostile import corpus
from tests.hostile.cli import run_main
from tests.hostile.folders import debris, one_run, strict_json, tree_digest

REAL_FSYNC = os.fsync
#: images are left out where the test is not about them (they take most of a run's time)
QUICK = ("--no-images",)


def fail_when_flushing(monkeypatch, file_name: str, exc: BaseException) -> None:
    """Make the flush to disk of any file named ``file_name`` raise ``exc`` (as a full disk does, naming no file)."""
    def fsync(fd):
        if os.readlink(f"/proc/self/fd/{fd}").endswith("/" + file_name):
            raise exc
        return REAL_FSYNC(fd)
    monkeypatch.setattr(os, "fsync", fsync)


@pytest.fixture
def board(tmp_path) -> Path:
    return corpus.write_board(tmp_path / "board")


@pytest.fixture
def previous(board, tmp_path, capsys) -> tuple[Path, dict]:
    """An output folder holding a complete earlier report, and its digest."""
    out_dir = tmp_path / "out"
    code, _, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 1, err
    one_run(out_dir)
    return out_dir, tree_digest(out_dir)


@pytest.mark.parametrize("damage", [None, "truncated"])
@pytest.mark.parametrize("as_zip", [False, True])
def test_input_files_never_changed(board, tmp_path, capsys, damage, as_zip):
    if damage:
        corpus.write_lines(board / corpus.TOP_FILE, corpus.top_lines()[:-1])
    target = corpus.zip_of(board, tmp_path / "board.zip") if as_zip else board
    before = tree_digest(tmp_path)
    code, _, _ = run_main(["scan", target, "--out", tmp_path / "out", *QUICK], capsys)
    assert code == (2 if damage else 1)
    after = tree_digest(tmp_path)
    assert {k: v for k, v in after.items() if not k.startswith("out/")} == before


def test_refused_input_leaves_previous_report(previous, board, capsys):
    out_dir, digest = previous
    corpus.write_lines(board / corpus.TOP_FILE, corpus.top_lines()[:-1])
    code, _, _ = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 2 and tree_digest(out_dir) == digest
    assert debris(out_dir.parent) == []


def test_files_of_an_earlier_run_do_not_stay(board, tmp_path, capsys):
    """A run with images, then one without: the folder holds the second run's two files and nothing else."""
    out_dir = tmp_path / "out"
    assert run_main(["scan", board, "--out", out_dir], capsys)[0] == 1
    first = one_run(out_dir)
    assert (out_dir / "report.html").is_file() and list(out_dir.glob("*.png"))
    assert run_main(["scan", board, "--out", out_dir, *QUICK], capsys)[0] == 1
    assert sorted(p.name for p in out_dir.iterdir()) == ["hotspots.csv", "report.json"]
    assert one_run(out_dir) != first
    assert debris(tmp_path) == []


@pytest.mark.parametrize("file_name", ["hotspots.csv", "report.json"])
def test_write_error_keeps_previous_report_and_names_the_file(previous, board, capsys, monkeypatch, file_name):
    out_dir, digest = previous
    fail_when_flushing(monkeypatch, file_name, OSError(errno.ENOSPC, os.strerror(errno.ENOSPC)))
    code, out, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 2 and out == ""
    assert err == f"nearfar: error: {out_dir / file_name}: No space left on device\n"
    assert tree_digest(out_dir) == digest and debris(out_dir.parent) == []


def test_image_write_error_leaves_no_folder(board, tmp_path, capsys, monkeypatch):
    out_dir = tmp_path / "out"
    fail_when_flushing(monkeypatch, "overlay-all.svg", OSError(errno.EFBIG, os.strerror(errno.EFBIG)))
    code, _, err = run_main(["scan", board, "--out", out_dir], capsys)
    assert code == 2 and err == f"nearfar: error: {out_dir / 'overlay-all.svg'}: File too large\n"
    assert not out_dir.exists() and debris(tmp_path) == []


@pytest.mark.parametrize("stop, code, says", [(KeyboardInterrupt(), 130, "nearfar: aborted"),
                                              (Stopped(15), 143, "nearfar: stopped by SIGTERM")])
def test_stopped_while_writing_keeps_previous_report(previous, board, capsys, monkeypatch, stop, code, says):
    out_dir, digest = previous
    fail_when_flushing(monkeypatch, "report.json", stop)
    status, _, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert status == code and says in err and "Traceback" not in err
    assert tree_digest(out_dir) == digest and debris(out_dir.parent) == []


def test_value_not_finite_is_refused_before_anything_is_written(previous, board, capsys, monkeypatch):
    """An overflowing figure: exit status 4 and one line naming it; the old report stays, nothing is printed."""
    out_dir, digest = previous

    def overflowing(*args, **kwargs):
        result = scan(*args, **kwargs)
        result.hotspots[0].directions[0].next_mv = float("inf")
        return result
    monkeypatch.setattr(scanner.commands.scan, "scan", overflowing)
    for args in (["--out", out_dir, *QUICK], ["--json"]):
        code, out, err = run_main(["scan", board, *args], capsys)
        assert code == 4 and out == ""
        assert err == "nearfar: internal error: report.json: hotspots[0].directions[0].next_mv (inf) is not a finite number; " \
                      "nothing was written\n"
    assert tree_digest(out_dir) == digest and debris(out_dir.parent) == []


def test_inspect_json_never_holds_nan(board, capsys, monkeypatch):
    def with_nan(the_board, rules=None):
        return {"layers": [{"fill_ratio": float("nan")}]}
    monkeypatch.setattr(scanner.commands.inspect, "inspect_data", with_nan)
    code, out, err = run_main(["inspect", board, "--json"], capsys)
    assert code == 4 and out == "" and "layers[0].fill_ratio (nan) is not a finite number" in err
    monkeypatch.undo()
    code, out, _ = run_main(["inspect", board, "--json"], capsys)
    assert code == 0 and strict_json(out)["layers"]


def test_output_folder_that_cannot_be_made(board, tmp_path, capsys):
    """--out below a file (here one with a newline in its name): one escaped line, exit status 2."""
    blocker = tmp_path / "not\na folder"
    blocker.write_text("")
    code, out, err = run_main(["scan", board, "--out", blocker / "out", *QUICK], capsys)
    assert code == 2 and err.count("\n") == 1 and "not\\na folder/out" in err and "Traceback" not in err


def test_output_folder_is_checked_before_the_board_is_read(board, tmp_path, capsys):
    corpus.write_lines(board / corpus.TOP_FILE, corpus.top_lines()[:-1])  # would be refused, if it were read
    (tmp_path / "file").write_text("")
    code, _, err = run_main(["scan", board, "--out", tmp_path / "file" / "out", *QUICK], capsys)
    assert code == 2 and "file/out" in err and corpus.TOP_FILE not in err


def test_folder_with_other_files_is_not_replaced(board, tmp_path, capsys):
    """nearfar replaces its output folder whole: a folder of someone else's files is refused, not emptied."""
    out_dir = tmp_path / "documents"
    out_dir.mkdir()
    (out_dir / "notes.txt").write_text("mine")
    code, _, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 2 and "notes.txt" in err and "nearfar did not write" in err
    assert (out_dir / "notes.txt").read_text() == "mine" and debris(tmp_path) == []


def test_stale_staging_folders_are_swept_and_live_ones_kept(previous, board, capsys):
    """A staging folder left by a killed run is removed by the next run into the same place; one a live run
    holds (locked) stays."""
    out_dir, _ = previous
    dead = out_dir.parent / ".out.nearfar-killed01"
    live = out_dir.parent / ".out.nearfar-running"
    for folder in (dead, live):
        folder.mkdir()
        (folder / "report.json").write_text("{}")
    fd = os.open(live, os.O_RDONLY)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
        assert run_main(["scan", board, "--out", out_dir, *QUICK], capsys)[0] == 1
        assert not dead.exists() and live.is_dir()
    finally:
        os.close(fd)
    one_run(out_dir)


def test_csv_cells_a_spreadsheet_would_run_are_neutralised(board):
    """Text cells starting with = + - @, a tab or a carriage return get a leading apostrophe, as spreadsheet
    exports usually do (common practice, the OWASP advice on CSV injection, from memory); numbers stay numbers."""
    result = scan(load_board(board))
    names = ["=HYPERLINK(\"http://x\")", "+1+1", "-5V", "@SUM(A1)", "\tTAB", "\rCR"]
    first = result.hotspots[0].directions[0]
    rows = []
    for name in names:
        first.victim = first.aggressor = name
        text = hotspots_csv(result)
        assert text.startswith(f"# nearfar run {result.run_id}, {result.created}\r\n")
        rows.append(list(csv.DictReader(io.StringIO(text.partition("\r\n")[2], newline="")))[0])
    for name, row in zip(names, rows):
        assert row["victim"] == "'" + name and row["aggressor"] == "'" + name
        assert float(row["fext_mv"]) == first.fext_mv < 0  # a negative number is not text: left as it is
