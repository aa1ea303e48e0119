"""What a worker does for one board: skip it when its inputs are unchanged, else scan it into its folder.

Runs inside a Dask worker process (or in the caller's process in tests): everything it needs travels
in the :class:`BoardJob`, and everything it finds comes back as one :class:`BoardRow`.
"""
from __future__ import annotations

import json
import os
import shutil
import threading
import time
import traceback
from dataclasses import dataclass
from pathlib import Path

from scanner.batch.fingerprint import inputs_digest
from scanner.batch.rows import BoardRow, scanned_row, unscanned_row
from scanner.errors import InputError, printable
from scanner.outputs import check_replaceable, replace_file
from scanner.scan_job import check_output, scan_board, write_outputs

#: written into a board's report folder after everything else: the inputs the report was made from
ENTRY_FILE = "batch-entry.json"
ENTRY_SCHEMA = "nearfar.batch-entry/1"
#: the only file in the folder of a board that hit an internal error
ERROR_FILE = "internal-error.txt"

# One board at a time per worker process, whatever its thread count: the report images, the solver
# caches and the GIL are per process, so a second thread would only contend with the first.
_ONE_AT_A_TIME = threading.Lock()


@dataclass(frozen=True)
class BoardJob:
    """One board of a batch, with all a worker needs to scan it."""

    shown: str  # the board as the user named it
    board: Path  # absolute
    out_dir: Path  # the batch folder, absolute
    folder: str  # the board's report folder, under out_dir
    rules: object  # scanner.rules.Rules
    rules_digest: str
    images: bool = True
    force: bool = False
    topic: str | None = None  # Dask event topic told when the board starts

    @property
    def report_dir(self) -> Path:
        return self.out_dir / self.folder


def run_job(job: BoardJob) -> BoardRow:
    """The board's row; bad input and internal errors become rows too, never exceptions."""
    # parsing in child processes would fork a threaded worker process; the cluster gives the parallelism
    os.environ["NEARFAR_IMPORT_WORKERS"] = "1"
    with _ONE_AT_A_TIME:
        _announce(job)
        started = time.perf_counter()
        try:
            return _scan_or_reuse(job, started)
        except InputError as exc:
            return _refused(job, exc.one_line(), started)
        except OSError as exc:
            if _concerns_board(exc, job.board):
                return _refused(job, f"{exc.filename}: {exc.strerror or exc}", started)
            return error_row(job, exc, traceback.format_exc(), time.perf_counter() - started)
        except Exception as exc:  # an internal error in one board must not stop the others
            return error_row(job, exc, traceback.format_exc(), time.perf_counter() - started)


def _scan_or_reuse(job: BoardJob, started: float) -> BoardRow:
    if job.board.is_dir() and job.out_dir.is_relative_to(job.board):
        raise InputError("the batch output folder is inside this board folder: its reports would become "
                         "part of the board's files", path=job.shown)
    digest = inputs_digest(job.board, job.rules_digest, job.images)
    entry = job.report_dir / ENTRY_FILE
    if not job.force:
        row = reusable_row(job, digest)
        if row is not None:
            return row
    entry.unlink(missing_ok=True)  # the folder no longer stands for these inputs until the new report is whole
    if (job.report_dir / ERROR_FILE).exists():
        _clear(job.report_dir)  # the folder of an earlier internal error holds no report to replace
    check_output(job.board, job.report_dir)
    board, result = scan_board(job.board, job.rules)
    write_outputs(result, board, job.report_dir, images=job.images)
    main = "report.html" if job.images else "report.json"
    row = scanned_row(result, job.shown, f"{job.folder}/{main}", time.perf_counter() - started)
    replace_file(entry, json.dumps({"schema": ENTRY_SCHEMA, "inputs": digest, "row": row.to_dict()}, indent=1) + "\n")
    return row


def reusable_row(job: BoardJob, digest: str) -> BoardRow | None:
    """The row of the last report when it was made from the same inputs and its main file is still there."""
    try:
        entry = json.loads((job.report_dir / ENTRY_FILE).read_text(encoding="utf-8"))
        if entry.get("schema") != ENTRY_SCHEMA or entry.get("inputs") != digest:
            return None
        row = BoardRow.from_dict(entry["row"])
    except (OSError, ValueError, KeyError, TypeError):
        return None
    if row.report is None or not (job.out_dir / row.report).is_file():
        return None
    return BoardRow(**(row.to_dict() | {"board": job.shown, "reused": True}))


def _refused(job: BoardJob, reason: str, started: float) -> BoardRow:
    _clear(job.report_dir)
    return unscanned_row(job.shown, "refused", reason, time.perf_counter() - started)


def error_row(job: BoardJob, exc: BaseException, details: str, seconds: float) -> BoardRow:
    """An internal error: the one-line reason in the row, the traceback alone in the board's folder."""
    _clear(job.report_dir)
    report = None
    try:
        job.report_dir.mkdir(parents=True, exist_ok=True)
        replace_file(job.report_dir / ERROR_FILE, f"{job.shown}\n\n{details}")
        report = f"{job.folder}/{ERROR_FILE}"
    except OSError:
        pass  # the row still says what happened
    reason = f"internal error: {type(exc).__name__}: {printable(' '.join(str(exc).split()))}"
    return unscanned_row(job.shown, "error", reason, seconds, report=report)


def _clear(report_dir: Path) -> None:
    """No report from earlier inputs stays behind a board that now has none. Only a folder nearfar wrote
    goes: a report (with its entry) or an error file; one holding anything else is left alone."""
    try:
        names = set(os.listdir(report_dir))
    except OSError:
        return
    if not names <= {ERROR_FILE}:
        try:
            check_replaceable(report_dir, report_dir)
        except InputError:
            return
    shutil.rmtree(report_dir, ignore_errors=True)


def _concerns_board(exc: OSError, board: Path) -> bool:
    return exc.filename is not None and Path(os.fsdecode(exc.filename)).resolve().is_relative_to(board)


def _announce(job: BoardJob) -> None:
    if job.topic is None:
        return
    from distributed import get_worker

    try:
        worker = get_worker()
    except ValueError:  # not inside a worker
        return
    worker.log_event(job.topic, {"started": job.folder})
