"""One board from its files to its report folder: the work of ``nearfar scan`` and of each board of a batch."""
from __future__ import annotations

from pathlib import Path

from scanner import load_board, scan
from scanner.errors import InputError
from scanner.memory import stage
from scanner.outputs import check_output_folder
from scanner.report.files import report_json
from scanner.report.folder import write_report_folder


def check_output(board_path: Path, out_dir: Path) -> None:
    """Refuse, before the long part, an output folder that is the board's or cannot be written or replaced."""
    if Path(board_path).is_dir() and Path(out_dir).resolve() == Path(board_path).resolve():
        raise InputError("the output folder is the board folder: reports could overwrite input files "
                         "(give a separate folder, or a subfolder)", path=out_dir)
    check_output_folder(out_dir)


def scan_board(board_path: Path, rules, board_file: Path | None = None, step: str | None = None, progress=None):
    """Read the board (``step``: the ODB++ step to read) and scan it with ``rules``: ``(board, result)``.
    Bad input raises :class:`InputError`."""
    progress = progress or (lambda msg: None)
    progress(f"reading {board_path}")
    board = load_board(board_path, board_file=board_file, step=step)
    return board, scan(board, rules, progress=progress)


def write_outputs(result, board, out_dir: Path | None, images: bool = True, progress=None) -> str:
    """report.json's text, every value checked before anything is written; with ``out_dir`` (checked with
    :func:`check_output` first) the whole report folder."""
    report = report_json(result)
    if out_dir is not None:
        (progress or (lambda msg: None))(f"writing reports to {out_dir}")
        with stage(f"writing reports to {out_dir}", f"{board.segment_count:,} trace segments"):
            write_report_folder(result, board, out_dir, images=images)
    return report
