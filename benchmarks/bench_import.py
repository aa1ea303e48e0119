"""Import speed: gerbonara's own parse of a board's copper and drill files versus nearfar's full
``load_board`` (parse, mapping to the board model, planes, net map).

Usage: ``python benchmarks/bench_import.py [BOARD_FOLDER] [--repeat N]``
(default board: ../shared/real-boards/open-sbc-12layer beside the repository).
Runs are interleaved (one of each per round) so that load from other jobs on a shared machine
falls on all of them alike; the best of N rounds is printed with the ratios. nearfar is timed
twice: with its default parse workers and with ``NEARFAR_IMPORT_WORKERS=1`` (one process,
like gerbonara). Results go to docs/performance.md by hand.
"""
from __future__ import annotations

import argparse
import os
import time
import warnings
from pathlib import Path

from gerbonara.excellon import ExcellonFile
from gerbonara.rs274x import GerberFile

import scanner
from scanner.importers.sources import list_sources

DEFAULT_BOARD = Path(__file__).resolve().parents[1] / ".." / "shared" / "real-boards" / "open-sbc-12layer"


def gerbonara_parse(folder: Path, warning_action: str) -> int:
    """Parse every copper Gerber and drill file the way gerbonara users do; returns the warning count."""
    sources = list_sources(folder)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter(warning_action)
        for src in sources:
            if src.kind == "gerber":
                GerberFile.open(src.path)
            elif src.kind == "excellon":
                ExcellonFile.open(src.path)
    return len(caught)


def load_serial(folder: Path):
    os.environ["NEARFAR_IMPORT_WORKERS"] = "1"
    try:
        return scanner.load_board(folder)
    finally:
        del os.environ["NEARFAR_IMPORT_WORKERS"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("board", nargs="?", type=Path, default=DEFAULT_BOARD)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    folder = args.board.resolve()
    contenders = {
        "gerbonara parse, warnings recorded": lambda: gerbonara_parse(folder, "always"),
        "gerbonara parse, warnings ignored": lambda: gerbonara_parse(folder, "ignore"),
        "nearfar load_board, default workers": lambda: scanner.load_board(folder),
        "nearfar load_board, one process": lambda: load_serial(folder),
    }
    best = {name: float("inf") for name in contenders}
    values = {}
    for _ in range(args.repeat):
        for name, fn in contenders.items():
            started = time.perf_counter()
            values[name] = fn()
            best[name] = min(best[name], time.perf_counter() - started)

    board = values["nearfar load_board, default workers"]
    print(f"board: {folder.name}: {len(board.layers)} copper layers, {board.segment_count} segments, "
          f"{sum(len(l.shapes) for l in board.layers)} shapes, {len(board.holes)} holes, {len(board.nets)} nets; "
          f"{values['gerbonara parse, warnings recorded']} gerbonara warnings; best of {args.repeat}")
    base = best["gerbonara parse, warnings recorded"]
    for name, seconds in best.items():
        print(f"{name:<40} {seconds:7.2f} s   {seconds / base:5.2f} x")


if __name__ == "__main__":
    main()
