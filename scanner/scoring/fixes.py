"""Changes to one coupled run, solved and re-scored with the same physics that scored it.

For directed runs, each against its own target budgets (``DirectedRuns.next_budget_v`` /
``fext_budget_v`` as given by the caller):

* the uniform edge-to-edge spacing along the whole run (same pieces, lengths and layers)
  at which the noise just meets the target;
* the coupled length, at today's spacing profile, at which it just meets the target
  (every piece shortened in proportion);
* the nearest stripline layer (when the run is not already in stripline), with the share of
  the target the same run would use there.

Roots are found by bisection on the cached cross-section tables, for all runs at once
(vectorised). Spacing is searched up to the tables' reach; a run that needs more gets NaN.
Runs that couple broadside to the neighbouring signal layer get the length only.
``peaks_at_spacing`` and ``peaks_at_length`` re-score a change; the fix plans use them to
check every offered change before it is shown.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.coupling.coefficients import TABLE_MIN_SPACING_MM, CouplingLookup
from scanner.scoring.directions import DirectedRuns, directed_noise

#: steps halve the log-interval: 12 steps bring 0.02-3 mm (spacing) to 0.12 % and 1e-4-50 (length factor) to
#: 0.3 %, well inside the fix margin (the offered value is then rounded the safe way and re-scored)
BISECTION_STEPS = 12
MAX_LENGTH_FACTOR = 50.0


@dataclass(frozen=True)
class RowFixes:
    """Per directed run: spacing (mm) and length factor meeting its target (NaN: none found), the tables'
    spacing reach (mm), and the stripline layer offered (-1: none) with the share of target used there."""

    spacing_mm: np.ndarray
    reach_mm: np.ndarray
    length_factor: np.ndarray
    layer: np.ndarray
    layer_used: np.ndarray


def _piece_of(sub: DirectedRuns) -> np.ndarray:
    return np.repeat(np.arange(len(sub)), np.diff(sub.piece_start))


def peaks_at_length(sub: DirectedRuns, runs, coefficients, factor: np.ndarray):
    """(NEXT V, FEXT V, used) per directed run with every piece's length scaled by its run's ``factor``."""
    rows = sub.piece_rows
    kb, kf, v = (c[rows] for c in coefficients)
    return directed_noise(sub, kb, kf, runs.pieces.length_mm[rows] * 1e-3 * factor[_piece_of(sub)], v)


def peaks_at_spacing(sub: DirectedRuns, runs, lookup: CouplingLookup, spacing_mm: np.ndarray, prepared=None):
    """(NEXT V, FEXT V, used) per directed run with all its pieces at one uniform edge spacing."""
    rows = sub.piece_rows
    p = runs.pieces
    if prepared is None:
        prepared = lookup.prepare(p.layer[rows].astype(np.int64), 0.5 * (p.width_a_mm + p.width_b_mm)[rows])
    kb, kf, v = prepared.coefficients(spacing_mm[_piece_of(sub)])
    return directed_noise(sub, kb, kf, p.length_mm[rows] * 1e-3, v)


def peaks_at_layer(sub: DirectedRuns, runs, lookup: CouplingLookup, layer: np.ndarray):
    """(NEXT V, FEXT V, used) per directed run moved whole to another layer (same widths and spacings)."""
    rows = sub.piece_rows
    p = runs.pieces
    kb, kf, v = lookup.coefficients(np.asarray(layer, dtype=np.int64)[_piece_of(sub)],
                                    0.5 * (p.width_a_mm + p.width_b_mm)[rows], p.spacing_mean_mm[rows])
    return directed_noise(sub, kb, kf, p.length_mm[rows] * 1e-3, v)


def solve_rows(sub: DirectedRuns, runs, lookup: CouplingLookup, coefficients, broadside_runs: np.ndarray) -> RowFixes:
    """Spacing, length and layer meeting each directed run's target budgets; see the module docstring."""
    n = len(sub)
    length_factor = _bisect(lambda f: peaks_at_length(sub, runs, coefficients, f)[2],
                            np.full(n, 1e-4), np.full(n, MAX_LENGTH_FACTOR), increasing=True)
    spacing, reach = np.full(n, np.nan), np.full(n, np.nan)
    layer, layer_used = np.full(n, -1), np.full(n, np.nan)
    same_layer = np.flatnonzero(~broadside_runs[sub.run])
    if len(same_layer):
        part = sub.take(same_layer)
        spacing[same_layer], reach[same_layer], layer[same_layer], layer_used[same_layer] = _spacing_and_layer(
            part, runs, lookup)
    return RowFixes(spacing, reach, length_factor, layer, layer_used)


def _spacing_and_layer(sub: DirectedRuns, runs, lookup: CouplingLookup):
    rows = sub.piece_rows
    p = runs.pieces
    prepared = lookup.prepare(p.layer[rows].astype(np.int64), 0.5 * (p.width_a_mm + p.width_b_mm)[rows])
    reach = np.minimum.reduceat(prepared.reach_mm, sub.piece_start[:-1])
    needed = _bisect(lambda s: peaks_at_spacing(sub, runs, lookup, s, prepared)[2],
                     np.full(len(sub), TABLE_MIN_SPACING_MM), reach, increasing=False)
    layer, used = _alternative_layers(sub, runs, lookup)
    return needed, reach, layer, used


def _bisect(fn, lo, hi, increasing: bool) -> np.ndarray:
    """Per element, the argument (log scale) where fn crosses 1 from the side that meets it; NaN where it does not."""
    ok = (fn(lo) <= 1.0) if increasing else (fn(hi) <= 1.0)
    lo, hi = lo.copy(), hi.copy()
    for _ in range(BISECTION_STEPS):
        mid = np.sqrt(lo * hi)
        over = fn(mid) > 1.0
        if increasing:
            hi = np.where(over, mid, hi)
            lo = np.where(over, lo, mid)
        else:
            lo = np.where(over, mid, lo)
            hi = np.where(over, hi, mid)
    return np.where(ok, lo if increasing else hi, np.nan)


def _alternative_layers(sub: DirectedRuns, runs, lookup: CouplingLookup):
    """The nearest stripline layer for runs not in stripline, and the share of target used there."""
    n = len(sub)
    striplines = sorted(i for i, e in lookup.envs.items() if e.structure == "stripline" and not e.on_plane)
    if not striplines:
        return np.full(n, -1), np.full(n, np.nan)
    main = runs.main_layer[sub.run]
    target = np.array([min(striplines, key=lambda s: (abs(s - int(m)), s)) for m in main])
    todo = np.array([lookup.envs[int(m)].structure != "stripline" for m in main])
    used = peaks_at_layer(sub, runs, lookup, target)[2]
    return np.where(todo, target, -1), np.where(todo, used, np.nan)
