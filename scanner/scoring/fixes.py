"""Fix guidance for warn and fail findings, solved with the same physics that scored them.

For each directed run over ``warn_fraction`` of its budget:

* ``spacing_needed_mm``: the uniform edge-to-edge spacing along the whole run
  (same pieces, lengths and layers) at which the noise just meets the budget;
* ``max_length_mm``: the coupled length, at today's spacing profile, at which it
  just meets the budget (every piece shortened in proportion);
* ``alternative_layer``: the nearest stripline layer (when the run is not
  already in stripline) and the budget the same run would use there.

Both roots are found by bisection on the cached cross-section tables, for all
findings at once (vectorised). Spacing is searched up to the tables' reach; a
run that needs more gets ``None`` and a note. Runs that couple broadside to the
neighbouring signal layer get the length guidance and a note.
"""
from __future__ import annotations

import numpy as np

from scanner.coupling.coefficients import TABLE_MIN_SPACING_MM, CouplingLookup
from scanner.scoring.directions import DirectedRuns, directed_noise as noise

#: steps halve the log-interval: 14 steps bring 0.02-3 mm (spacing) to 0.03 % and 1e-4-50 (length factor) to 0.08 %
BISECTION_STEPS = 14
MAX_LENGTH_FACTOR = 50.0


def fix_guidance(d: DirectedRuns, select: np.ndarray, runs, lookup: CouplingLookup, board,
                 coefficients: tuple[np.ndarray, np.ndarray, np.ndarray], broadside_runs: np.ndarray) -> dict[int, dict]:
    """Fix dicts keyed by directed-run index, for the directed runs in ``select``.

    ``coefficients`` are the scan's per-piece (Kb, Kf, velocity); runs flagged in ``broadside_runs``
    (coupling to the neighbouring signal layer) get the length guidance only.
    """
    select = np.asarray(select, dtype=np.int64)
    if len(select) == 0:
        return {}
    sub = d.take(select)
    rows = sub.piece_rows
    length_m = runs.pieces.length_mm[rows] * 1e-3
    piece_run = np.repeat(np.arange(len(select)), np.diff(sub.piece_start))
    kb0, kf0, v0 = (c[rows] for c in coefficients)

    def used_at_scale(f_per_run):
        return noise(sub, kb0, kf0, length_m * f_per_run[piece_run], v0)[2]

    n = len(select)
    length_factor = _bisect(used_at_scale, np.full(n, 1e-4), np.full(n, MAX_LENGTH_FACTOR), increasing=True, log=True)
    same_layer = ~broadside_runs[sub.run]
    spacing_needed, reach, alternatives = np.full(n, np.nan), np.full(n, np.nan), [None] * n
    if same_layer.any():
        done = _spacing_and_layer(d.take(select[same_layer]), runs, lookup, board)
        for i, (s_needed, s_reach, alternative) in zip(np.flatnonzero(same_layer), zip(*done)):
            spacing_needed[i], reach[i], alternatives[i] = s_needed, s_reach, alternative

    out = {}
    coupled = runs.coupled_length_mm[sub.run]
    for i, j in enumerate(select):
        fix = {"spacing_needed_mm": None if np.isnan(spacing_needed[i]) else round(float(spacing_needed[i]), 3),
               "max_length_mm": None if np.isnan(length_factor[i]) else round(float(length_factor[i] * coupled[i]), 2),
               "alternative_layer": alternatives[i]}
        notes = []
        if not same_layer[i]:
            notes.append("the run couples broadside to the neighbouring signal layer: offset the traces in plan "
                         "view, shorten the overlap, or put a plane between the layers")
        elif fix["spacing_needed_mm"] is None:
            notes.append(f"no uniform spacing up to {reach[i]:.2f} mm meets the budget; shorten or move the run")
        if fix["max_length_mm"] is None:
            notes.append("no coupled length meets the budget")
        if notes:
            fix["note"] = "; ".join(notes)
        out[int(j)] = fix
    return out


def _spacing_and_layer(sub: DirectedRuns, runs, lookup: CouplingLookup, board):
    """For same-layer runs: the uniform spacing that meets the budget, the tables' reach, the stripline option."""
    rows = sub.piece_rows
    p = runs.pieces
    layer = p.layer[rows].astype(np.int64)
    width = 0.5 * (p.width_a_mm + p.width_b_mm)[rows]
    length_m = p.length_mm[rows] * 1e-3
    spacing = np.maximum(p.spacing_mean_mm[rows], TABLE_MIN_SPACING_MM)
    piece_run = np.repeat(np.arange(len(sub)), np.diff(sub.piece_start))
    prepared = lookup.prepare(layer, width)

    def used_at_spacing(s_per_run):
        kb, kf, v = prepared.coefficients(s_per_run[piece_run])
        return noise(sub, kb, kf, length_m, v)[2]

    reach = np.minimum.reduceat(prepared.reach_mm, sub.piece_start[:-1])
    needed = _bisect(used_at_spacing, np.full(len(sub), TABLE_MIN_SPACING_MM), reach, increasing=False, log=True)
    alternatives = _alternative_layers(sub, runs, lookup, board, width, spacing, length_m, piece_run)
    return needed, reach, alternatives


def _bisect(fn, lo, hi, increasing: bool, log: bool) -> np.ndarray:
    """Per element, the argument where fn crosses 1 (used fraction = budget); NaN where it does not."""
    f_lo, f_hi = fn(lo), fn(hi)
    ok = (f_hi <= 1.0) if not increasing else (f_lo <= 1.0)
    lo, hi = lo.copy(), hi.copy()
    for _ in range(BISECTION_STEPS):
        mid = np.sqrt(lo * hi) if log else 0.5 * (lo + hi)
        over = fn(mid) > 1.0
        if increasing:
            hi = np.where(over, mid, hi)
            lo = np.where(over, lo, mid)
        else:
            lo = np.where(over, mid, lo)
            hi = np.where(over, hi, mid)
    # the side that meets the budget
    return np.where(ok, lo if increasing else hi, np.nan)


def _alternative_layers(sub, runs, lookup, board, width, spacing, length_m, piece_run):
    striplines = sorted(i for i, e in lookup.envs.items() if e.structure == "stripline" and not e.on_plane)
    out = [None] * len(sub)
    if not striplines:
        return out
    main = runs.main_layer[sub.run]
    already = np.array([lookup.envs[int(m)].structure == "stripline" for m in main])
    target = np.array([min(striplines, key=lambda s: (abs(s - int(m)), s)) for m in main])
    todo = ~already
    if not todo.any():
        return out
    kb, kf, v = lookup.coefficients(target[piece_run], width, spacing)
    used = noise(sub, kb, kf, length_m, v)[2]
    for i in np.flatnonzero(todo):
        out[i] = {"layer": board.layers[int(target[i])].name, "structure": "stripline",
                  "budget_used": round(float(used[i]), 4)}
    return out
