"""Time `nearfar batch` on copies of the demo board with 1 and 2 local worker processes, against plain scans.

Makes COPIES copies of ``fixtures/demo-board/x2`` (different folders, so each is its own board), then, for
reports without images and with them:

- plain: ``scanner.scan_job.scan_board`` (what ``nearfar scan --out`` runs) on every copy, one after the
  other in this process;
- batch with 1 and with 2 workers: ``scanner.batch.run.run_batch`` with ``force`` (every board scanned),
  wall time from the cluster's start to the summary written, into a fresh folder each time;
- the re-run with 2 workers, nothing changed (every board skipped);
- starting and closing a local cluster with no work, for the fixed part of the overhead;
- a control without Dask: the plain scans split between two processes started together, for the
  speed-up the machine itself offers at that moment (it is shared with other jobs).

    python benchmarks/bench_batch.py [COPIES] [--tables-only]
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the nearfar command does, before numpy loads

import shutil
import sys
from concurrent.futures import ProcessPoolExecutor
from multiprocessing import get_context
import tempfile
import time
from pathlib import Path

from scanner.batch.boards import expand_boards  # noqa: E402
from scanner.batch.engine import connect  # noqa: E402
from scanner.batch.run import run_batch  # noqa: E402
from scanner.rules import load_rules  # noqa: E402
from scanner.scan_job import scan_board  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures/demo-board/x2"
RULES = ROOT / "fixtures/demo-rules.toml"


def timed(fn) -> float:
    started = time.perf_counter()
    fn()
    return time.perf_counter() - started


def plain_scans(boards: list[Path], out: Path, images: bool) -> None:
    rules = load_rules(RULES)
    for b in boards:
        scan_board(b, rules, out_dir=out / b.name, images=images)


def bench(copies: int, images: bool, work: Path) -> None:
    boards = [work / "boards" / f"copy-{i:02d}" for i in range(copies)]
    entries, _ = expand_boards([str(b) for b in boards])
    rules = load_rules(RULES)
    mode = "images" if images else "tables only"

    def plain():
        plain_scans(boards, work / "plain", images)

    def plain_in_two():
        with ProcessPoolExecutor(2, mp_context=get_context("spawn")) as pool:
            list(pool.map(plain_scans, [boards[0::2], boards[1::2]], [work / "plain-2"] * 2, [images] * 2))

    in_tasks = {}

    def batch(workers: int, out: Path, force: bool = True):
        rows, _ = run_batch(entries, rules, RULES, out, workers=workers, images=images, force=force)
        assert len(rows) == copies and all(r.verdict == "fail" for r in rows), rows
        in_tasks[workers, force] = sum(r.seconds for r in rows if not r.reused)

    load = os.getloadavg()[0]
    results = {"plain": timed(plain)}
    for workers in (1, 2):
        results[f"batch {workers}"] = timed(lambda: batch(workers, work / f"out-{workers}-{mode}"))
    results["re-run 2"] = timed(lambda: batch(2, work / f"out-2-{mode}", force=False))
    results["plain in 2 processes"] = timed(plain_in_two)
    load = max(load, os.getloadavg()[0])
    start_1 = cluster_start(1)
    print(f"{copies} boards, {mode}: " + ", ".join(f"{k} {v:.1f} s" for k, v in results.items())
          + f"; speed-up 1 -> 2 workers {results['batch 1'] / results['batch 2']:.2f}x "
          f"(plain, 1 -> 2 processes: {results['plain'] / results['plain in 2 processes']:.2f}x); "
          f"inside the tasks: 1 worker {in_tasks[1, True]:.1f} s, 2 workers {in_tasks[2, True]:.1f} s; "
          f"per board, batch (1 worker) minus plain {(results['batch 1'] - results['plain']) / copies:+.2f} s, "
          f"of which outside the tasks and the cluster start ({start_1:.1f} s) "
          f"{(results['batch 1'] - in_tasks[1, True] - start_1) / copies:+.3f} s; load average up to {load:.1f}",
          flush=True)


def cluster_start(workers: int) -> float:
    def start_and_close():
        with connect(None, workers):
            pass
    return timed(start_and_close)


if __name__ == "__main__":
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    copies = int(args[0]) if args else 20
    with tempfile.TemporaryDirectory(prefix="nearfar-bench-batch-") as tmp:
        work = Path(tmp)
        for i in range(copies):
            shutil.copytree(DEMO, work / "boards" / f"copy-{i:02d}")
        print("local cluster start and close, no work: "
              + ", ".join(f"{n} worker(s) {cluster_start(n):.1f} s" for n in (1, 2)), flush=True)
        bench(copies, False, work)
        if "--tables-only" not in sys.argv:
            bench(copies, True, work)
