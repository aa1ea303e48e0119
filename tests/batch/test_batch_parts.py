"""The parts of `nearfar batch` without a cluster: board lists and folder names, input hashes, rows and
their order, exit status, one board's task (reuse, refusal, internal error), failed tasks, progress."""
import io
import json
from pathlib import Path
from types import SimpleNamespace

import pytest
from distributed import KilledWorker

from scanner.batch import engine, task
from scanner.batch.boards import expand_boards, folder_name
from scanner.batch.fingerprint import inputs_digest, rules_digest
from scanner.batch.progress import Progress
from scanner.batch.rows import BoardRow, exit_status, scanned_row, unscanned_row, worst_first
from scanner.errors import InputError
from scanner.rules import Rules


def _row(board="b", verdict="pass", used=None, report=None):
    return BoardRow(board=board, verdict=verdict, coverage=1.0, victims_fail=0, worst_victim=None,
                    worst_budget_used=used, seconds=1.0, reason="", report=report)


def test_list_files_relative_to_the_list_with_comments_and_duplicates(tmp_path, monkeypatch):
    (tmp_path / "lists").mkdir()
    (tmp_path / "lists/boards.txt").write_text("# revisions\nrev-a\n\n  rev-b  \n../lists/rev-a\n")
    monkeypatch.chdir(tmp_path)
    entries, notes = expand_boards(["@lists/boards.txt", "lists/rev-b", "other"])
    assert [e.shown for e in entries] == ["lists/rev-a", "lists/rev-b", "other"]
    assert all(e.path.is_absolute() for e in entries)
    assert len(notes) == 2 and "lists/rev-b" in notes[1] and "scanned once" in notes[1]


@pytest.mark.parametrize("text", ["", "# nothing here\n\n"])
def test_an_empty_list_is_bad_input(tmp_path, text):
    (tmp_path / "boards.txt").write_text(text)
    with pytest.raises(InputError, match="no boards"):
        expand_boards([f"@{tmp_path / 'boards.txt'}"])


def test_a_missing_list_names_the_file(tmp_path):
    with pytest.raises(InputError) as e:
        expand_boards([f"@{tmp_path / 'nope.txt'}"])
    assert "nope.txt" in e.value.one_line()


def test_folder_names_unique_stable_and_safe(tmp_path):
    a, b = tmp_path / "rev-a" / "main board", tmp_path / "rev-b" / "main board"
    assert folder_name(a) != folder_name(b)
    assert folder_name(a) == folder_name(Path(str(a)))  # the same path, the same name on every run
    assert folder_name(a).startswith("main_board-")
    assert folder_name(Path("/x/<&>")).startswith("board-")


def test_inputs_digest_follows_files_rules_and_images(tmp_path):
    board = tmp_path / "board"
    board.mkdir()
    (board / "top.gbr").write_text("G04 a*\nM02*\n")
    base = inputs_digest(board, "defaults", True)
    assert inputs_digest(board, "defaults", True) == base
    assert inputs_digest(board, "defaults", False) != base
    assert inputs_digest(board, "other-rules", True) != base
    (board / "top.gbr").write_text("G04 b*\nM02*\n")
    changed = inputs_digest(board, "defaults", True)
    assert changed != base
    (board / "top.gbr").rename(board / "bottom.gbr")
    assert inputs_digest(board, "defaults", True) != changed  # a renamed file is a different board
    rules = tmp_path / "r.toml"
    rules.write_text("[scan]\n")
    assert rules_digest(rules) != rules_digest(None)
    with pytest.raises(InputError, match="not found"):
        inputs_digest(tmp_path / "missing", "defaults", True)


def test_worst_first_and_exit_status():
    rows = [_row("p"), _row("i", "incomplete"), _row("r", "refused"), _row("e", "error"),
            _row("f1", "fail", 1.5), _row("f2", "fail", 4.0)]
    assert [r.board for r in worst_first(rows)] == ["f2", "f1", "e", "r", "i", "p"]
    assert exit_status(rows) == 1
    assert exit_status(rows[:4]) == 4
    assert exit_status(rows[:3]) == 3 and exit_status(rows[:2]) == 3
    assert exit_status(rows[:1]) == 0


def test_rows_of_an_incomplete_and_a_failing_scan():
    victims = [SimpleNamespace(net="A", status="pass", budget_used_pct=40.0),
               SimpleNamespace(net="B", status="warn", budget_used_pct=90.0)]
    result = SimpleNamespace(verdict="incomplete", victims=victims, geometric=[], coverage={"scanned_trace_fraction": 0.6},
                             unchecked=["layer L3 not scanned: no reference plane on either side"])
    row = scanned_row(result, "brd", "brd-1/report.json", 2.345)
    assert (row.worst_victim, row.worst_budget_used, row.victims_fail, row.coverage) == ("B", 0.9, 0, 0.6)
    assert row.reason == "not checked: layer L3 not scanned: no reference plane on either side"
    geometric_only = SimpleNamespace(verdict="fail", victims=[], geometric=[SimpleNamespace(status="fail")],
                                     coverage={"scanned_trace_fraction": 1.0}, unchecked=[])
    row = scanned_row(geometric_only, "brd", "brd-1/report.json", 1.0)
    assert row.reason == "1 geometric limit broken" and row.worst_victim is None
    assert unscanned_row("brd", "refused", "a\nb\x1b", 0.1).reason == "a\\nb\\x1b"  # one printable line


def _job(tmp_path, board, **kw):
    return task.BoardJob(shown=str(board), board=board, out_dir=tmp_path / "out", folder="brd-0123456789",
                         rules=Rules(), rules_digest="defaults", images=False, **kw)


def test_an_internal_error_is_a_row_with_its_traceback_beside(tmp_path, monkeypatch):
    board = tmp_path / "board"
    board.mkdir()
    (board / "top.gbr").write_text("G04 x*\nM02*\n")
    job = _job(tmp_path, board)
    job.report_dir.mkdir(parents=True)
    (job.report_dir / "report.json").write_text("{}")  # a report of earlier inputs

    def broken(*args, **kwargs):
        raise ZeroDivisionError("division by zero")

    monkeypatch.setattr(task, "scan_board", broken)
    row = task.run_job(job)
    assert row.verdict == "error" and row.reason == "internal error: ZeroDivisionError: division by zero"
    assert row.report == f"{job.folder}/{task.ERROR_FILE}"
    assert [p.name for p in job.report_dir.iterdir()] == [task.ERROR_FILE]
    assert "Traceback" in (job.report_dir / task.ERROR_FILE).read_text()


def test_a_report_folder_holding_files_of_others_is_refused_and_kept(tmp_path):
    board = tmp_path / "board"
    board.mkdir()
    job = _job(tmp_path, board)
    job.report_dir.mkdir(parents=True)
    (job.report_dir / "notes.txt").write_text("mine")
    row = task.run_job(job)
    assert row.verdict == "refused" and "did not write" in row.reason
    assert (job.report_dir / "notes.txt").read_text() == "mine"


def test_an_output_folder_inside_the_board_is_refused(tmp_path):
    job = task.BoardJob(shown="here", board=tmp_path, out_dir=tmp_path / "reports", folder="x-1",
                        rules=Rules(), rules_digest="defaults")
    row = task.run_job(job)
    assert row.verdict == "refused" and "inside this board folder" in row.reason


def test_a_report_is_reused_only_while_its_main_file_is_there(tmp_path):
    board = tmp_path / "board"
    board.mkdir()
    job = _job(tmp_path, board)
    job.report_dir.mkdir(parents=True)
    report = job.report_dir / "report.json"
    report.write_text("{}")
    stored = _row("old name", "fail", 2.0, report=f"{job.folder}/report.json")
    (job.report_dir / task.ENTRY_FILE).write_text(json.dumps(
        {"schema": task.ENTRY_SCHEMA, "inputs": "abc", "row": stored.to_dict()}))
    row = task.reusable_row(job, "abc")
    assert row.reused and row.board == str(board) and row.worst_budget_used == 2.0
    assert task.reusable_row(job, "other inputs") is None
    report.unlink()
    assert task.reusable_row(job, "abc") is None


class _Failed:
    def __init__(self, exc, status="error"):
        self.exc, self.status = exc, status

    def exception(self):
        return self.exc


@pytest.mark.parametrize("exc, status, needle", [
    (KilledWorker("k", None, 3), "error", "worker process died"),
    (ModuleNotFoundError("No module named 'scanner'", name="scanner"), "error", "install nearfar on every worker"),
    (None, "cancelled", "dropped the task (cancelled)"),
])
def test_a_task_that_failed_on_the_cluster_is_an_error_row(tmp_path, exc, status, needle):
    job = _job(tmp_path, tmp_path / "board")
    row = engine._row(_Failed(exc, status), job)
    assert row.verdict == "error" and needle in row.reason


def test_progress_is_quiet_off_a_terminal_and_counts_on_one():
    quiet = io.StringIO()
    p = Progress(3, quiet, live=False)
    p.show("starting the local cluster")
    p.started("a")
    p.finished("a", _row("a", "fail"))
    p.close()
    assert quiet.getvalue() == ""
    shown = io.StringIO()
    p = Progress(3, shown, live=True)
    p.show("starting the local cluster")
    assert shown.getvalue().endswith(" s] starting the local cluster")
    p.started("a")
    p.started("b")
    p.finished("a", unscanned_row("board a", "refused", "a.gbr:3: cut short", 0.1))
    assert p.line().endswith("1/3 boards done (1 refused); 1 running, 1 waiting")
    assert "refused: board a: a.gbr:3: cut short\n" in shown.getvalue()
    p.finished("b", _row("b", "fail"))
    p.started("b")  # a late start message after the board finished does not count it as running again
    assert "2/3 boards done (1 fail, 1 refused); 0 running, 1 waiting" in p.line()
