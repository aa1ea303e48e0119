"""Large synthetic routed layers for the finder benchmarks: TraceSegments per copper layer.

The copper mimics routed boards: buses (bundles of 4-24 parallel traces at a
constant pitch following one path with 45° bends, some dense at minimum
spacing), single nets routed as random walks with 45° bends, legs sometimes
split into several collinear draws (as CAD output often is) and a few strokes
drawn twice. Each bus trace and each walk is its own net. The board grows with
the segment count so the copper density stays about the same.

    python benchmarks/make_large_board.py 100000   # prints a summary
"""
from __future__ import annotations

import subprocess
import sys

import numpy as np

from scanner.board.model import TraceSegments

LAYERS = 4
#: board area per segment (mm^2); sets the density (about 13 candidate pairs per segment at 0.5 mm)
AREA_PER_SEGMENT_MM2 = 1.6
BUS_SHARE = 0.6  # fraction of segments in buses


def _walk_directions(rng, n_paths: int, legs: int) -> np.ndarray:
    """Leg directions in multiples of 45°: a random start, then turns of -45°, 0 or +45°."""
    start = rng.integers(0, 8, n_paths)[:, None]
    turns = rng.choice([-1, 0, 0, 1], size=(n_paths, legs - 1))
    steps = np.concatenate([start, turns], axis=1)
    return np.cumsum(steps, axis=1) % 8 * (np.pi / 4)


def _walks(rng, n_paths: int, legs: int, side_mm: float):
    """Vertices (n_paths, legs + 1) of routes with 45° bends."""
    theta = _walk_directions(rng, n_paths, legs)
    step = rng.uniform(0.5, 12.0, size=(n_paths, legs))
    x = np.cumsum(np.concatenate([rng.uniform(0, side_mm, (n_paths, 1)), step * np.cos(theta)], axis=1), axis=1)
    y = np.cumsum(np.concatenate([rng.uniform(0, side_mm, (n_paths, 1)), step * np.sin(theta)], axis=1), axis=1)
    return x, y, theta


def _offset_vertices(x, y, theta, offset_mm):
    """Vertices of paths offset sideways by ``offset_mm`` (one per path) with mitred 45° joints."""
    nx, ny = -np.sin(theta), np.cos(theta)  # left normal of each leg
    nx_in = np.concatenate([nx[:, :1], nx], axis=1)
    ny_in = np.concatenate([ny[:, :1], ny], axis=1)
    nx_out = np.concatenate([nx, nx[:, -1:]], axis=1)
    ny_out = np.concatenate([ny, ny[:, -1:]], axis=1)
    scale = np.asarray(offset_mm)[:, None] / (1.0 + nx_in * nx_out + ny_in * ny_out)
    return x + (nx_in + nx_out) * scale, y + (ny_in + ny_out) * scale


def _legs(x, y, width, net):
    """Segments from vertex rows: x, y (paths, legs + 1); width, net per path."""
    legs = x.shape[1] - 1
    return (x[:, :-1].ravel(), y[:, :-1].ravel(), x[:, 1:].ravel(), y[:, 1:].ravel(),
            np.repeat(width, legs), np.repeat(net, legs))


def _buses(rng, n_segments: int, side_mm: float):
    """Buses of 4-24 traces (mean 14) with 6 legs each; 30 % dense (0.1 mm gaps). Returns segments, next net id."""
    legs = 6
    n_bus = max(1, round(n_segments / (legs * 14)))
    traces = rng.integers(4, 25, n_bus)
    width = rng.choice([0.1, 0.127, 0.15, 0.2], n_bus)
    gap = np.where(rng.random(n_bus) < 0.3, 0.1, rng.uniform(0.1, 0.4, n_bus))
    x, y, theta = _walks(rng, n_bus, legs, side_mm)
    parts, net = [], 0
    for k in range(int(traces.max())):
        on = traces > k
        xo, yo = _offset_vertices(x[on], y[on], theta[on], k * (width[on] + gap[on]))
        count = int(on.sum())
        parts.append(_legs(xo, yo, width[on], np.arange(net, net + count)))
        net += count
    return parts, net


def _split_and_double(rng, seg: tuple) -> tuple:
    """Split a quarter of the segments into 2-3 collinear draws; draw 0.5 % twice."""
    x0, y0, x1, y1, w, net = seg
    pieces = np.where(rng.random(len(x0)) < 0.25, rng.integers(2, 4, len(x0)), 1)
    idx = np.repeat(np.arange(len(x0)), pieces)
    first = np.repeat(np.cumsum(pieces) - pieces, pieces)
    k = np.arange(len(idx)) - first
    f0, f1 = k / pieces[idx], (k + 1) / pieces[idx]
    dx, dy = x1 - x0, y1 - y0
    out = [x0[idx] + f0 * dx[idx], y0[idx] + f0 * dy[idx], x0[idx] + f1 * dx[idx], y0[idx] + f1 * dy[idx],
           w[idx], net[idx]]
    twice = rng.random(len(idx)) < 0.005
    return tuple(np.concatenate([a, a[twice]]) for a in out)


def make_layers(n_segments: int, seed: int = 1) -> dict[int, TraceSegments]:
    """About ``n_segments`` trace segments spread over ``LAYERS`` copper layers."""
    rng = np.random.default_rng(seed)
    side = float(np.sqrt(n_segments / LAYERS * AREA_PER_SEGMENT_MM2))
    target = int(n_segments / 1.3)  # splitting adds about 30 %
    parts, net = _buses(rng, int(target * BUS_SHARE), side)
    legs = 5
    n_walks = max(1, (target - sum(len(p[0]) for p in parts)) // legs)
    x, y, _ = _walks(rng, n_walks, legs, side)
    parts.append(_legs(x, y, rng.choice([0.1, 0.127, 0.15, 0.2, 0.25], n_walks), np.arange(net, net + n_walks)))
    seg = _split_and_double(rng, tuple(np.concatenate([p[k] for p in parts]) for k in range(6)))
    # each net (with all its segments) on one layer
    layer_of_net = rng.integers(0, LAYERS, int(seg[5].max()) + 1)
    layer = layer_of_net[seg[5]]
    return {k: TraceSegments(*(a[layer == k] for a in seg)) for k in range(LAYERS)}


def main(argv: list[str]) -> None:
    n = int(argv[1]) if len(argv) > 1 else 100_000
    layers = make_layers(n)
    total = sum(len(s) for s in layers.values())
    nets = len(np.unique(np.concatenate([s.net for s in layers.values()])))
    print(f"{total} segments, {nets} nets, {len(layers)} layers")


if __name__ == "__main__":
    main(sys.argv)


def run_per_size(argv: list[str], script: str, header: str, bench_one, sizes=(10_000, 100_000, 1_000_000)) -> None:
    """Benchmark driver: with a size argument run ``bench_one(size)`` here; without, print the table
    header and run every size in a fresh process of ``script`` (so each peak RSS is its own)."""
    if len(argv) > 1:
        print(bench_one(int(argv[1])), flush=True)
        return
    print(header)
    print("|---" * (header.count("|") - 1) + "|", flush=True)
    for n in sizes:
        subprocess.run([sys.executable, script, str(n)], check=True)
