"""nearfar: post-route crosstalk audit of printed-circuit boards.

Python API::

    import scanner
    board = scanner.load_board("path/to/board-folder-or.zip")
    result = scanner.scan(board)            # default rules
    result.to_dict()                        # the same data as report.json
"""
from __future__ import annotations

import os

# The cross-section matrices are small (hundreds of unknowns): one BLAS thread solves them in a
# steady 10-25 ms, while two threads swing from 5 to 500 ms when the other core is busy. Set
# before numpy loads; a caller's own setting wins.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

__all__ = ["load_board", "scan", "InputError"]

from scanner.errors import InputError


def load_board(path, board_file=None, step=None):
    """Read a board folder or archive into a :class:`scanner.board.model.Board` (``step``: the ODB++ step)."""
    from scanner.importers import load_board as _load

    return _load(path, board_file=board_file, step=step)


def scan(board, rules=None, progress=None):
    """Find coupled runs, score them against the rules and return a :class:`scanner.scoring.results.ScanResult`."""
    from scanner.pipeline import run_scan

    return run_scan(board, rules, progress=progress)
