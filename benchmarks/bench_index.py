"""Candidate pairs for the finder: shapely STRtree against rtree, on one layer of the synthetic boards.

Both indexes get the same boxes (segment bounding boxes grown by half the reach)
and return every pair of intersecting boxes; the time covers making the boxes,
building the index and the bulk query. Also timed: STRtree with the exact
``dwithin`` predicate on the centre lines (the alternative to box candidates plus
exact geometry in numpy).

    python benchmarks/bench_index.py
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import rtree
import shapely

sys.path.insert(0, str(Path(__file__).resolve().parent))
from make_large_board import make_layers  # noqa: E402

SEARCH_MM = 0.5


def _bounds(seg):
    grow = 0.5 * (SEARCH_MM + seg.width)
    lo = np.column_stack([np.minimum(seg.x0, seg.x1) - grow, np.minimum(seg.y0, seg.y1) - grow])
    hi = np.column_stack([np.maximum(seg.x0, seg.x1) + grow, np.maximum(seg.y0, seg.y1) + grow])
    return lo, hi


def strtree_boxes(seg) -> int:
    lo, hi = _bounds(seg)
    boxes = shapely.box(lo[:, 0], lo[:, 1], hi[:, 0], hi[:, 1])
    return shapely.STRtree(boxes).query(boxes).shape[1]


def strtree_dwithin(seg) -> int:
    lines = shapely.linestrings(np.stack([np.column_stack([seg.x0, seg.y0]),
                                          np.column_stack([seg.x1, seg.y1])], axis=1))
    reach = SEARCH_MM + seg.width.max()
    return shapely.STRtree(lines).query(lines, predicate="dwithin", distance=reach).shape[1]


def rtree_boxes(seg) -> int:
    lo, hi = _bounds(seg)
    index = rtree.index.Index((np.arange(len(lo), dtype=np.int64), lo, hi))
    ids, _counts = index.intersection_v(lo, hi)
    return len(ids)


def main() -> None:
    print("| segments (one layer) | method | pairs returned | seconds |")
    print("|---|---|---|---|")
    for n in (100_000, 1_000_000):
        seg = make_layers(n)[0]
        for name, fn in (("STRtree boxes", strtree_boxes), ("rtree boxes (intersection_v)", rtree_boxes),
                         ("STRtree dwithin", strtree_dwithin)):
            t0 = time.perf_counter()
            pairs = fn(seg)
            print(f"| {len(seg):,} | {name} | {pairs:,} | {time.perf_counter() - t0:.2f} |", flush=True)


if __name__ == "__main__":
    main()
