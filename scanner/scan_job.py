"""One board from its files to its report folder: the work of ``nearfar scan`` and of each board of a batch."""
from __future__ import annotations

from pathlib import Path
from typing import NamedTuple

from scanner import load_board, scan
from scanner.errors import InputError
from scanner.outputs import check_output_folder
from scanner.report.files import report_json
from scanner.report.folder import write_report_folder


class Scanned(NamedTuple):
    result: object  # scanner.scoring.results.ScanResult
    board: object  # scanner.board.model.Board
    report_json: str


def check_output(board_path: Path, out_dir: Path) -> None:
    """Refuse, before the long part, an output folder that is the board's or cannot be written or replaced."""
    if Path(board_path).is_dir() and Path(out_dir).resolve() == Path(board_path).resolve():
        raise InputError("the output folder is the board folder: reports could overwrite input files "
                         "(give a separate folder, or a subfolder)", path=out_dir)
    check_output_folder(out_dir)


def scan_board(board_path: Path, rules, out_dir: Path | None = None, board_file: Path | None = None,
               images: bool = True, progress=None) -> Scanned:
    """Read the board, scan it with ``rules`` and, with ``out_dir``, write its report folder (check it
    with :func:`check_output` first). Bad input raises :class:`InputError`."""
    progress = progress or (lambda msg: None)
    progress(f"reading {board_path}")
    board = load_board(board_path, board_file=board_file)
    result = scan(board, rules, progress=progress)
    report = report_json(result)  # every value checked before anything is written or printed
    if out_dir is not None:
        progress(f"writing reports to {out_dir}")
        write_report_folder(result, board, out_dir, images=images)
    return Scanned(result, board, report)
