"""Import speed: gerbonara's own parse of a board's copper and drill files versus nearfar's full
``load_board`` (parse, mapping to the board model, planes, net map).

Usage: ``python benchmarks/bench_import.py [BOARD_FOLDER] [--repeat N]``
(default board: ../shared/real-boards/open-sbc-12layer beside the repository).
Prints the best of N runs for each and the ratio; results go to docs/performance.md by hand.
"""
from __future__ import annotations

import argparse
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


def best_of(repeat: int, fn) -> tuple[float, object]:
    best, value = float("inf"), None
    for _ in range(repeat):
        started = time.perf_counter()
        value = fn()
        best = min(best, time.perf_counter() - started)
    return best, value


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("board", nargs="?", type=Path, default=DEFAULT_BOARD)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    folder = args.board.resolve()

    t_record, n_warnings = best_of(args.repeat, lambda: gerbonara_parse(folder, "always"))
    t_ignore, _ = best_of(args.repeat, lambda: gerbonara_parse(folder, "ignore"))
    t_ours, board = best_of(args.repeat, lambda: scanner.load_board(folder))

    print(f"board: {folder.name}: {len(board.layers)} copper layers, {board.segment_count} segments, "
          f"{sum(len(l.shapes) for l in board.layers)} shapes, {len(board.holes)} holes, {len(board.nets)} nets")
    print(f"gerbonara parse, warnings recorded ({n_warnings}): {t_record:7.2f} s")
    print(f"gerbonara parse, warnings ignored:                {t_ignore:7.2f} s")
    print(f"nearfar load_board (parse + model + net map):     {t_ours:7.2f} s")
    print(f"ratio to gerbonara (recorded / ignored):          {t_ours / t_record:7.2f} / {t_ours / t_ignore:.2f}")


if __name__ == "__main__":
    main()
