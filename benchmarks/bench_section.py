"""Cross-section solver timings: one solve per geometry (cache cleared) and one per-layer coupling table.

Plain script: ``python benchmarks/bench_section.py``. Prints the best and median of
repeated runs, the panel count and, for the table, the number of solves.
"""
from __future__ import annotations

import os
import statistics
import time

from scanner.physics import CouplingTable, solve_cross_section, traces_on_layer
from scanner.physics.coupling import _table
from scanner.physics.solver import _solve_cached, panel_count

CASES = {
    "microstrip pair, 35 um copper": traces_on_layer([(0.1, 4.2)], [], "below", [0.15, 0.15], [0.15], 0.035),
    "microstrip pair, soldermask": traces_on_layer([(0.1, 4.2)], [], "below", [0.15, 0.15], [0.15], 0.035,
                                                   soldermask=(0.02, 3.5)),
    "stripline pair, one material": traces_on_layer([(0.12, 4.2)], [(0.15, 4.2)], "both", [0.1, 0.1], [0.1], 0.018),
    "stripline pair, core + prepreg": traces_on_layer([(0.12, 4.4)], [(0.15, 3.8)], "both", [0.1, 0.1], [0.1],
                                                      0.018),
    "microstrip, 5 traces, soldermask": traces_on_layer([(0.1, 4.2)], [], "below", [0.15] * 5, [0.15] * 4, 0.035,
                                                        soldermask=(0.02, 3.5)),
}
REPEATS = 15


def timed(fn, repeats):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times), statistics.median(times)


def solve_fresh(section):
    _solve_cached.cache_clear()
    solve_cross_section(section)


def table_fresh():
    _solve_cached.cache_clear()
    _table.cache_clear()
    CouplingTable.for_layer([], [(0.1, 4.2)], "below", 0.15, 0.035, soldermask=(0.02, 3.5))


def main():
    print(f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', '(unset)')}, load average "
          f"{os.getloadavg()[0]:.1f}")
    print(f"{'cross-section':36s} {'panels':>6s} {'best ms':>8s} {'median ms':>9s}")
    for name, section in CASES.items():
        best, median = timed(lambda: solve_fresh(section), REPEATS)
        print(f"{name:36s} {panel_count(section):6d} {best * 1e3:8.1f} {median * 1e3:9.1f}")
    best, median = timed(table_fresh, 3)
    print(f"{'coupling table (15 solves), masked':36s} {'':6s} {best * 1e3:8.1f} {median * 1e3:9.1f}")


if __name__ == "__main__":
    main()
