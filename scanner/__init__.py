"""nearfar: post-route crosstalk audit of printed-circuit boards.

Python API::

    import scanner
    board = scanner.load_board("path/to/board-folder-or.zip")
    result = scanner.scan(board)            # default rules
    result.to_dict()                        # the same data as report.json
"""
from __future__ import annotations

__all__ = ["load_board", "scan", "InputError"]

from scanner.errors import InputError


def load_board(path, board_file=None):
    """Read a board folder or archive into a :class:`scanner.board.Board`."""
    from scanner.importers import load_board as _load

    return _load(path, board_file=board_file)


def scan(board, rules=None, progress=None):
    """Find coupled runs, score them against the rules and return a :class:`scanner.score.ScanResult`."""
    from scanner.scan import run_scan

    return run_scan(board, rules, progress=progress)
