"""Time writing the report images and page for the demo board (and the shared real board when present).

Scans once, then times ``scanner.report.images.write_images`` and
``scanner.report.page.write_page`` into a fresh temporary folder, three times,
and prints each run with its CPU time (steadier than wall time on a shared
machine), the page's size and the machine's load average.

    python benchmarks/bench_images.py            # demo board
    python benchmarks/bench_images.py --real     # also the 12-layer real board (scan takes about a minute)
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the nearfar command does, before numpy loads

import sys
import tempfile
import time
from pathlib import Path

from scanner import load_board, scan  # noqa: E402
from scanner.report.images import write_images  # noqa: E402
from scanner.report.page import write_page  # noqa: E402
from scanner.rules import load_rules  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
BOARDS = [("demo", ROOT / "fixtures/demo-board/x2", ROOT / "fixtures/demo-rules.toml")]
REAL = ROOT / ".." / "shared" / "real-boards" / "open-sbc-12layer"
REPEATS = 3


def bench(name: str, board_path: Path, rules_path: Path | None) -> None:
    board = load_board(board_path)
    result = scan(board, load_rules(rules_path if rules_path and rules_path.is_file() else None))
    for _ in range(REPEATS):
        with tempfile.TemporaryDirectory() as out:
            load = os.getloadavg()[0]
            started, cpu = time.perf_counter(), time.process_time()
            files = write_images(result, board, out)
            images_s, images_cpu = time.perf_counter() - started, time.process_time() - cpu
            write_page(result, out, board)
            page_s = time.perf_counter() - started - images_s
            page_kb = (Path(out) / "report.html").stat().st_size / 1024
        print(f"{name}: {len(files)} images in {images_s:.2f} s ({images_cpu:.2f} s CPU), page {page_s:.2f} s "
              f"({page_kb:.0f} kB) "
              f"({len(result.hotspots)} findings listed, {sum(len(l.segments) for l in board.layers)} segments, "
              f"load average {load:.1f})", flush=True)


if __name__ == "__main__":
    if "--real" in sys.argv and REAL.is_dir():
        BOARDS.append(("real 12-layer", REAL, None))
    for args in BOARDS:
        bench(*args)
