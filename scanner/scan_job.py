"""One board from its files to its report folder: the work of ``nearfar scan`` and of each board of a batch."""
from __future__ import annotations

from pathlib import Path

from scanner import load_board, scan
from scanner.errors import InputError
from scanner.report.folder import write_report_folder


def scan_board(board_path: Path, rules, out_dir: Path | None = None, board_file: Path | None = None,
               images: bool = True, progress=None):
    """Read the board, scan it with ``rules`` and, with ``out_dir``, write its report folder.

    Returns ``(result, board)``; bad input raises :class:`InputError`."""
    board_path = Path(board_path)
    progress = progress or (lambda msg: None)
    if out_dir is not None and board_path.is_dir() and Path(out_dir).resolve() == board_path.resolve():
        raise InputError("the output folder is the board folder: reports could overwrite input files "
                         "(give a separate folder, or a subfolder)", path=out_dir)
    progress(f"reading {board_path}")
    board = load_board(board_path, board_file=board_file)
    result = scan(board, rules, progress=progress)
    if out_dir is not None:
        progress(f"writing reports to {out_dir}")
        write_report_folder(result, board, Path(out_dir), images=images)
    return result, board
