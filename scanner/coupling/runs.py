"""Join coupled pieces into coupled runs, one per unordered net pair (optionally split at gaps).

Order along a run: each net pair's pieces are projected onto the pair's principal
direction (the main axis of the length-weighted spread of all piece ends) and
sorted by the projection of their midpoints. This is monotone along straight,
L-shaped and arc-shaped runs (arcs up to 180°); a run that folds back on itself
(a serpentine beside a straight trace) gets its pieces interleaved in the profile.
Totals (length, minimum and mean spacing) do not depend on the order.

The worst piece of a run is the one with the largest ``length / centre distance``
(centre distance = edge spacing + half the two widths): long and close, and never
infinite for touching copper.

A pair's pieces on several layers (both nets changing layer together through vias)
stay one run; ``layer_mask`` has bit k set for each layer k used.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.coupling.finder import CoupledPieces, previous_interval_end


@dataclass(frozen=True)
class CoupledRuns:
    """One row per run; the pieces of run i, in order, are ``pieces`` rows ``piece_order[run_start[i]:run_start[i+1]]``.

    ``piece_offset_mm`` (aligned with ``piece_order``) is the coupled length before
    each piece along its run. Spacing and widths are length-weighted means except
    ``spacing_min_mm``. ``worst_*`` locate the worst piece (midpoint and ends, board
    mm); ``x_min_mm..y_max_mm`` bound the run's pieces on the centre line.
    """

    net_a: np.ndarray
    net_b: np.ndarray
    coupled_length_mm: np.ndarray
    spacing_min_mm: np.ndarray
    spacing_mean_mm: np.ndarray
    width_a_mm: np.ndarray
    width_b_mm: np.ndarray
    layer_mask: np.ndarray
    main_layer: np.ndarray
    piece_count: np.ndarray
    worst_piece: np.ndarray
    worst_x_mm: np.ndarray
    worst_y_mm: np.ndarray
    worst_x0_mm: np.ndarray
    worst_y0_mm: np.ndarray
    worst_x1_mm: np.ndarray
    worst_y1_mm: np.ndarray
    x_min_mm: np.ndarray
    y_min_mm: np.ndarray
    x_max_mm: np.ndarray
    y_max_mm: np.ndarray
    piece_order: np.ndarray
    run_start: np.ndarray
    piece_offset_mm: np.ndarray
    pieces: CoupledPieces

    def __len__(self) -> int:
        return len(self.net_a)

    def pieces_of(self, run: int) -> np.ndarray:
        """Row indices into ``pieces`` of one run, in order along the run."""
        return self.piece_order[self.run_start[run]:self.run_start[run + 1]]

    def profile(self, run: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(offset_mm, length_mm, spacing_mean_mm) of a run's pieces in order."""
        rows = self.pieces_of(run)
        offset = self.piece_offset_mm[self.run_start[run]:self.run_start[run + 1]]
        return offset, self.pieces.length_mm[rows], self.pieces.spacing_mean_mm[rows]

    def layers_of(self, run: int) -> tuple[int, ...]:
        mask = int(self.layer_mask[run])
        return tuple(k for k in range(mask.bit_length()) if mask >> k & 1)


def _first_rows(sorted_keys: tuple[np.ndarray, ...]) -> np.ndarray:
    """Positions where any of the (already sorted) key arrays changes, starting with 0."""
    n = len(sorted_keys[0])
    change = np.zeros(n, dtype=bool)
    change[:1] = True
    for k in sorted_keys:
        change[1:] |= k[1:] != k[:-1]
    return np.flatnonzero(change)


def _principal_projection(p: CoupledPieces, pair: np.ndarray, n_pairs: int):
    """Per piece: projections of midpoint and both ends on its pair's principal axis."""
    w = np.maximum(p.length_mm, 1e-9)
    xs, ys = np.concatenate([p.x0_mm, p.x1_mm]), np.concatenate([p.y0_mm, p.y1_mm])
    grp, ww = np.concatenate([pair, pair]), np.concatenate([w, w])

    def gsum(v):
        return np.bincount(grp, weights=ww * v, minlength=n_pairs)

    wsum = gsum(np.ones_like(xs))
    mx, my = gsum(xs) / wsum, gsum(ys) / wsum
    dx, dy = xs - mx[grp], ys - my[grp]
    cxx, cyy, cxy = gsum(dx * dx), gsum(dy * dy), gsum(dx * dy)
    theta = 0.5 * np.arctan2(2.0 * cxy, cxx - cyy)
    ax, ay = np.cos(theta)[pair], np.sin(theta)[pair]
    p0 = p.x0_mm * ax + p.y0_mm * ay
    p1 = p.x1_mm * ax + p.y1_mm * ay
    return 0.5 * (p0 + p1), np.minimum(p0, p1), np.maximum(p0, p1)


def build_runs(pieces: CoupledPieces, max_gap_mm: float | None = None) -> CoupledRuns:
    """Coupled runs from pieces: one per net pair, or split where the run has a gap longer than ``max_gap_mm``.

    A gap is measured along the pair's principal axis between the end of the pieces
    so far and the start of the next piece; ``None`` never splits.
    """
    p = pieces
    n = len(p)
    if n and max(p.layer.max(), p.layer_b.max()) > 62:
        raise ValueError("layer indices above 62 do not fit the run layer mask")
    pair_key = p.net_a.astype(np.int64) << np.int64(32) | p.net_b.astype(np.int64)
    uniq, pair = np.unique(pair_key, return_inverse=True)
    pair = pair.ravel()
    mid, lo, hi = _principal_projection(p, pair, len(uniq))

    run_of = pair if max_gap_mm is None else _split_at_gaps(pair, lo, hi, mid, max_gap_mm)
    order = np.lexsort((mid, run_of))
    start = _first_rows((run_of[order],))
    run_start = np.append(start, n).astype(np.int64)

    def per_run(ufunc, values):
        return ufunc.reduceat(values[order], start) if n else np.zeros(0, dtype=values.dtype)

    length = per_run(np.add, p.length_mm)
    safe_length = np.where(length > 0, length, 1.0)

    def weighted(values):
        return per_run(np.add, p.length_mm * values) / safe_length

    centre = p.spacing_mean_mm + 0.5 * (p.width_a_mm + p.width_b_mm)
    worst = _argmax_per_run(run_of, p.length_mm / np.maximum(centre, 1e-9))
    cum = np.cumsum(p.length_mm[order])
    offset = cum - p.length_mm[order] - np.repeat(cum[start] - p.length_mm[order][start], np.diff(run_start))
    return CoupledRuns(
        net_a=p.net_a[order][start], net_b=p.net_b[order][start], coupled_length_mm=length,
        spacing_min_mm=per_run(np.minimum, p.spacing_min_mm), spacing_mean_mm=weighted(p.spacing_mean_mm),
        width_a_mm=weighted(p.width_a_mm), width_b_mm=weighted(p.width_b_mm),
        layer_mask=per_run(np.bitwise_or, np.left_shift(np.int64(1), p.layer.astype(np.int64))
                           | np.left_shift(np.int64(1), p.layer_b.astype(np.int64))),
        main_layer=_main_layer(p, run_of), piece_count=np.diff(run_start),
        worst_piece=worst, worst_x_mm=0.5 * (p.x0_mm[worst] + p.x1_mm[worst]),
        worst_y_mm=0.5 * (p.y0_mm[worst] + p.y1_mm[worst]), worst_x0_mm=p.x0_mm[worst],
        worst_y0_mm=p.y0_mm[worst], worst_x1_mm=p.x1_mm[worst], worst_y1_mm=p.y1_mm[worst],
        x_min_mm=per_run(np.minimum, np.minimum(p.x0_mm, p.x1_mm)),
        y_min_mm=per_run(np.minimum, np.minimum(p.y0_mm, p.y1_mm)),
        x_max_mm=per_run(np.maximum, np.maximum(p.x0_mm, p.x1_mm)),
        y_max_mm=per_run(np.maximum, np.maximum(p.y0_mm, p.y1_mm)),
        piece_order=order.astype(np.int64), run_start=run_start, piece_offset_mm=offset, pieces=p)


def _split_at_gaps(pair: np.ndarray, lo: np.ndarray, hi: np.ndarray, mid: np.ndarray, max_gap_mm: float) -> np.ndarray:
    """Run number of each piece: a new run starts at each pair and after each gap longer than ``max_gap_mm``."""
    if not len(pair):
        return pair
    base = lo.min()
    prev_end = previous_interval_end(pair, np.zeros_like(pair), lo - base, hi - base, (mid,))
    order = np.lexsort((mid, lo, pair))
    new_run = np.zeros(len(pair), dtype=bool)
    new_run[_first_rows((pair[order],))] = True
    new_run |= (lo - base - prev_end > max_gap_mm)[order]
    run_of = np.empty_like(pair)
    run_of[order] = np.cumsum(new_run) - 1
    return run_of


def _argmax_per_run(run_of: np.ndarray, weight: np.ndarray) -> np.ndarray:
    order = np.lexsort((-weight, run_of))
    return order[_first_rows((run_of[order],))].astype(np.int64)


def _main_layer(p: CoupledPieces, run_of: np.ndarray) -> np.ndarray:
    """The layer carrying the most coupled length of each run."""
    order = np.lexsort((p.layer, run_of))
    start = _first_rows((run_of[order], p.layer[order]))
    if not len(order):
        return np.zeros(0, dtype=np.int32)
    sums = np.add.reduceat(p.length_mm[order], start)
    runs, layers = run_of[order][start], p.layer[order][start]
    best = np.lexsort((-sums, runs))
    return layers[best[_first_rows((runs[best],))]].astype(np.int32)
