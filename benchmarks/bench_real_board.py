"""Import versus scan on the real 12-layer board in ../shared/real-boards (skipped when absent).

Target (issue): finder plus scoring take less time than importing the board.
Scan stages: finder+runs, cross-section solves, scoring (with fix guidance).

    python benchmarks/bench_real_board.py [repeats]
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the nearfar command does, before numpy loads

import sys
import time
from pathlib import Path

import scanner  # noqa: E402

BOARD = Path(__file__).resolve().parents[1].parent / "shared" / "real-boards" / "open-sbc-12layer"


def once() -> str:
    t0 = time.perf_counter()
    board = scanner.load_board(BOARD)
    t1 = time.perf_counter()
    marks = []
    result = scanner.scan(board, progress=lambda msg: marks.append(time.perf_counter()))
    t2 = time.perf_counter()
    find, solve, score = marks[1] - marks[0], marks[2] - marks[1], t2 - marks[2]
    return (f"| {board.segment_count:,} | {result.summary['coupled_runs']:,} | {t1 - t0:.2f} | {find:.2f} | "
            f"{solve:.2f} | {score:.2f} | {t2 - t1:.2f} | {find + score:.2f} |")


def main(argv) -> None:
    if not BOARD.is_dir():
        print(f"{BOARD} not found; nothing to measure")
        return
    print("| segments | runs | import s | finder s | solves s | scoring s | scan total s | finder + scoring s |")
    print("|---|---|---|---|---|---|---|---|")
    for _ in range(int(argv[1]) if len(argv) > 1 else 3):
        print(once(), flush=True)


if __name__ == "__main__":
    main(sys.argv)
