"""Time the full scan (roles, finder, runs, cross-section tables, scoring, fix guidance, ranking)
on synthetic boards of 10 k, 100 k and 1 M trace segments.

The copper comes from make_large_board (four routed signal layers); here it is
placed in an eight-layer build with reference planes so every signal layer is
microstrip or stripline. Each size runs in a fresh process so its peak resident
memory (ru_maxrss) is its own.

    python benchmarks/bench_scan.py             # all sizes
    python benchmarks/bench_scan.py 100000      # one size
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the nearfar command does, before numpy loads

import resource
import sys
import time
from pathlib import Path


sys.path.insert(0, str(Path(__file__).resolve().parent))
from make_large_board import make_layers, run_per_size  # noqa: E402

from scanner import scan  # noqa: E402
from scanner.board.model import Board, CopperLayer, CopperShapes, Holes, TraceSegments  # noqa: E402
from scanner.board.layerstack import default_stackup  # noqa: E402
from scanner.rules import parse_rules  # noqa: E402

SIZES = (10_000, 100_000, 1_000_000)
KINDS = ("signal", "plane", "signal", "plane", "plane", "signal", "plane", "signal")
RULES = parse_rules({"scan": {"search_distance_mm": 0.5},
                     "class": [{"name": "fast", "nets": ["N1*", "N3*", "N5*"], "rise_time_ns": 0.5}]}, "benchmark")


def synthetic_board(n_segments: int) -> Board:
    generated = make_layers(n_segments)
    n_nets = int(max(s.net.max() for s in generated.values())) + 1
    signal_slots = [i for i, k in enumerate(KINDS) if k == "signal"]
    layers = []
    for i, kind in enumerate(KINDS):
        seg = generated[signal_slots.index(i)] if kind == "signal" else TraceSegments.empty()
        side = "top" if i == 0 else "bottom" if i == len(KINDS) - 1 else "inner"
        layers.append(CopperLayer(f"L{i + 1:02d}", i, side, kind, "benchmark", None, seg, CopperShapes.empty()))
    return Board("synthetic", "benchmark", "synthetic", layers, [f"N{i}" for i in range(n_nets)], Holes.empty(),
                 default_stackup(len(KINDS)))


def bench_one(n_segments: int) -> str:
    board = synthetic_board(n_segments)
    rss_board = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    t0 = time.perf_counter()
    stages = []
    last = [t0]

    def progress(msg):
        now = time.perf_counter()
        stages.append(f"{now - last[0]:.1f}")
        last[0] = now

    result = scan(board, RULES, progress=progress)
    t1 = time.perf_counter()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    stages.append(f"{t1 - last[0]:.1f}")
    return (f"| {board.segment_count:,} | {result.summary['coupled_runs']:,} | {len(result.hotspots):,} | "
            f"{result.settings['cross_section_solves']} | {' / '.join(stages[1:])} | {t1 - t0:.1f} | "
            f"{rss:,.0f} | {rss_board:,.0f} |")


def main(argv: list[str]) -> None:
    run_per_size(argv, __file__, "| segments | runs scored | findings | solves | find / solve / score s | total s | peak RSS MB | RSS before scan MB |", bench_one, SIZES)


if __name__ == "__main__":
    main(sys.argv)
