"""Bulk spatial-index queries whose memory and time are known before they run.

A shapely STRtree query over many geometries returns every overlapping pair at once; copper drawn a
million times over one spot would ask for a trillion pairs (and GEOS, short of memory, may take the
process down). Here, before anything is queried:

* the index's own memory is checked against what is free (:func:`check_index_memory`);
* the number of candidate pairs is estimated from a sample of the query geometries, each queried alone,
  and refused beyond the pair limit (``NEARFAR_MAX_PAIRS``) or the free memory;
* the query runs in chunks sized from a per-geometry upper bound on its pairs (how many indexed boxes
  overlap it along x, or along y, whichever is fewer), so no chunk can be larger than planned.
"""
from __future__ import annotations

from typing import Iterator

import numpy as np
import shapely

from scanner.errors import InputError
from scanner.input_limits import limit
from scanner.memory import check_memory

#: (environment variable, default): candidate pairs one bulk query may examine (a dense real board: tens of millions)
PAIRS = ("NEARFAR_MAX_PAIRS", 200_000_000)
#: bytes per indexed geometry in an STRtree (its box in the tree; the geometry itself is counted by its maker)
BYTES_PER_INDEXED = 120
#: bytes per candidate pair while a chunk is examined (two indices and the arrays computed from them)
BYTES_PER_PAIR = 200
#: planned candidate pairs per chunk
CHUNK_PAIRS = 1 << 21
#: query geometries sampled to estimate the pairs
SAMPLE = 500


def check_index_memory(count: int, bytes_each: int, what: str) -> None:
    """Refuse to build geometries and an index over ``count`` items of ``bytes_each`` when that will not fit."""
    check_memory(count * (bytes_each + BYTES_PER_INDEXED), f"indexing {count:,} {what}")


def _overlaps_1d(lo: np.ndarray, hi: np.ndarray, tree_lo: np.ndarray, tree_hi: np.ndarray) -> np.ndarray:
    """Per query interval, how many tree intervals overlap it (exact, in one dimension)."""
    starts, ends = np.sort(tree_lo), np.sort(tree_hi)
    return np.searchsorted(starts, hi, side="right") - np.searchsorted(ends, lo, side="left")


def pair_bounds(query_bounds: np.ndarray, tree_bounds: np.ndarray) -> np.ndarray:
    """Per query box (rows x0, y0, x1, y1), an upper bound on the tree boxes overlapping it."""
    if not len(query_bounds) or not len(tree_bounds):
        return np.zeros(len(query_bounds), dtype=np.int64)
    along_x = _overlaps_1d(query_bounds[:, 0], query_bounds[:, 2], tree_bounds[:, 0], tree_bounds[:, 2])
    along_y = _overlaps_1d(query_bounds[:, 1], query_bounds[:, 3], tree_bounds[:, 1], tree_bounds[:, 3])
    return np.minimum(along_x, along_y)


def estimated_pairs(tree: shapely.STRtree, geoms: np.ndarray, bound: np.ndarray, stop_above: float) -> float:
    """Candidate pairs of the whole query, estimated from a fixed sample queried one by one; the sampling
    stops as soon as the estimate passes ``stop_above``."""
    n = len(geoms)
    if n <= SAMPLE:
        return float(bound.sum()) if bound.sum() <= stop_above else _sampled(tree, geoms, np.arange(n), n, stop_above)
    picks = np.random.default_rng(0).choice(n, SAMPLE, replace=False)
    return _sampled(tree, geoms, picks, n, stop_above)


def _sampled(tree, geoms, picks, n, stop_above) -> float:
    found = 0
    for k, i in enumerate(picks, start=1):
        found += len(tree.query(geoms[i]))
        if found * n / len(picks) > stop_above:
            return found * n / k
    return found * n / len(picks)


def query_chunks(tree: shapely.STRtree, geoms: np.ndarray, what: str,
                 where: str | None = None) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """``tree.query(geoms)`` as (query index, tree index) arrays, chunk by chunk; InputError (naming
    ``what`` and ``where``) when the pairs would pass the pair limit or the free memory."""
    if not len(geoms) or not len(tree):
        return
    bound = pair_bounds(shapely.bounds(geoms), shapely.bounds(tree.geometries))
    most = limit(PAIRS)
    estimate = estimated_pairs(tree, geoms, bound, most)
    if estimate > most:
        raise InputError(f"{what}: about {estimate:,.0f} pairs of overlapping boxes to examine, more than the "
                         f"limit of {most:,} (raise it with {PAIRS[0]}); copper drawn many times over one place?",
                         path=where)
    check_memory(min(CHUNK_PAIRS, float(bound.max())) * BYTES_PER_PAIR, f"{what}: examining candidate pairs", where)
    ends = np.searchsorted(np.cumsum(bound), np.arange(CHUNK_PAIRS, bound.sum() + CHUNK_PAIRS, CHUNK_PAIRS),
                           side="right")
    start = 0
    for end in np.unique(np.clip(ends, 1, len(geoms))):
        if end <= start:
            continue
        q, t = tree.query(geoms[start:end])
        yield q + start, t
        start = end
    if start < len(geoms):
        q, t = tree.query(geoms[start:])
        yield q + start, t


def query_all(tree: shapely.STRtree, geoms: np.ndarray, what: str, where: str | None = None,
              keep=None) -> tuple[np.ndarray, np.ndarray]:
    """All pairs of :func:`query_chunks`, each chunk first filtered by ``keep(q, t) -> bool array`` when given;
    the pairs kept are checked against the free memory as they accumulate."""
    qs, ts, held = [], [], 0
    for q, t in query_chunks(tree, geoms, what, where):
        if keep is not None:
            ok = keep(q, t)
            q, t = q[ok], t[ok]
        held += len(q)
        check_memory(len(q) * 16, f"{what}: keeping {held:,} pairs", where)
        qs.append(q)
        ts.append(t)
    if not qs:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    return np.concatenate(qs).astype(np.int64), np.concatenate(ts).astype(np.int64)
