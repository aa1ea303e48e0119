"""Time find_coupled_pieces + build_runs on synthetic boards of 10 k, 100 k and 1 M segments.

Each size runs in a fresh process so its peak resident memory (ru_maxrss) is its own.

    python benchmarks/bench_finder.py                 # all sizes
    python benchmarks/bench_finder.py 100000          # one size
"""
from __future__ import annotations

import resource
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from make_large_board import make_layers, run_per_size  # noqa: E402

from scanner.coupling.finder import find_coupled_pieces  # noqa: E402
from scanner.coupling.runs import build_runs  # noqa: E402

SIZES = (10_000, 100_000, 1_000_000)
SEARCH_MM = 0.5
RUN_GAP_MM = 5.0  # the gap at which the scan splits a net pair into separate runs


def bench_one(n_segments: int) -> str:
    layers = make_layers(n_segments)
    total = sum(len(s) for s in layers.values())
    rss_board = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    nets = int(max(s.net.max() for s in layers.values())) + 1
    active = np.ones(nets, dtype=bool)
    partner = np.full(nets, -1)
    t0 = time.perf_counter()
    pieces = find_coupled_pieces(layers, SEARCH_MM, net_active=active, net_partner=partner)
    t1 = time.perf_counter()
    runs = build_runs(pieces, max_gap_mm=RUN_GAP_MM)
    t2 = time.perf_counter()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    return (f"| {total:,} | {len(pieces):,} | {len(runs):,} | {t1 - t0:.2f} | {t2 - t1:.2f} | {t2 - t0:.2f} "
            f"| {rss:,.0f} | {rss_board:,.0f} |")


def main(argv: list[str]) -> None:
    run_per_size(argv, __file__, "| segments | pieces | runs | find s | runs s | total s | peak RSS MB | RSS before scan MB |", bench_one, SIZES)


if __name__ == "__main__":
    main(sys.argv)
