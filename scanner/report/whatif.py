"""What a finding's run would pick up at another spacing or another coupled length, and its plot.

The same model that scored the finding (``scanner.scoring.peaks.run_peaks`` over
the run's own chain of pieces, the scan's coupling tables, the aggressor's edge
and swing, the victim's receiver): for the spacing sweep every piece is set to
one uniform edge-to-edge spacing, as the fix guidance does; for the length sweep
every piece is shortened or lengthened in proportion. The run's own point is
its scan figure at its mean spacing and its coupled length.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from scanner.coupling.coefficients import TABLE_MIN_SPACING_MM
from scanner.physics.crosstalk import ramp_duration_s
from scanner.report import palette
from scanner.report.overlay import fit_line
from scanner.report.waveplot import ODD_MODE
from scanner.rules import receiver_gain
from scanner.scoring.peaks import run_peaks
from scanner.scoring.results import Hotspot, ScanResult

SWEEP_POINTS = 48
#: the length sweep runs from zero to this multiple of the run's coupled length
LENGTH_REACH = 2.5
FIGURE_IN = (8.0, 3.6)


@dataclass(frozen=True)
class Sweep:
    """Peak noise (V; NEXT magnitude, FEXT signed) against one quantity (mm)."""

    x_mm: np.ndarray
    next_v: np.ndarray
    fext_v: np.ndarray


@dataclass(frozen=True)
class WhatIf:
    spacing: Sweep | None  # None for a run that couples broadside to the neighbouring layer
    length: Sweep


def _peaks(hotspot: Hotspot, kb, kf, length_m, velocity, pieces: int, runs: int):
    start = np.arange(runs + 1) * pieces
    ramp_s = float(ramp_duration_s(hotspot.rise_time_ns * 1e-9))
    peaks = run_peaks(kb, kf, length_m, velocity, start, hotspot.swing_v, ramp_s, receiver_gain(hotspot.termination))
    return peaks.next_v, peaks.fext_v


def what_if(result: ScanResult, hotspot: Hotspot) -> WhatIf | None:
    """Both sweeps for one finding; None for an odd-mode differential aggressor, whose figure combines two runs."""
    if hotspot.aggressor_model == ODD_MODE or result.runs is None:
        return None
    runs, c = result.runs, result.piece_coefficients
    rows = runs.pieces_of(hotspot.run)
    p = runs.pieces
    n = len(rows)
    length_m = p.length_mm[rows] * 1e-3
    factors = np.linspace(0.0, LENGTH_REACH, SWEEP_POINTS)[1:]
    next_v, fext_v = _peaks(hotspot, np.tile(c.kb[rows], len(factors)), np.tile(c.kf_s_per_m[rows], len(factors)),
                            np.outer(factors, length_m).ravel(), np.tile(c.velocity_m_per_s[rows], len(factors)),
                            n, len(factors))
    length = Sweep(np.concatenate([[0.0], factors * hotspot.coupled_length_mm]),
                   np.concatenate([[0.0], next_v]), np.concatenate([[0.0], fext_v]))
    lookup = result.lookup
    same_layer = bool(np.all(p.layer[rows] == p.layer_b[rows]))
    if lookup is None or not same_layer or not all(int(k) in lookup.envs for k in p.layer[rows]):
        return WhatIf(None, length)
    reach = min(lookup.max_spacing_mm[int(k)] for k in p.layer[rows])
    low = max(TABLE_MIN_SPACING_MM, 0.3 * hotspot.min_spacing_mm)
    spacings = np.geomspace(low, max(reach, 2 * low), SWEEP_POINTS)
    width = np.tile(0.5 * (p.width_a_mm + p.width_b_mm)[rows], len(spacings))
    kb, kf, velocity = lookup.coefficients(np.tile(p.layer[rows], len(spacings)), width, np.repeat(spacings, n))
    next_v, fext_v = _peaks(hotspot, kb, kf, np.tile(length_m, len(spacings)), velocity, n, len(spacings))
    return WhatIf(Sweep(spacings, next_v, fext_v), length)


def _budget_mv(hotspot: Hotspot) -> dict[str, float]:
    return {k: v for k, v in (("NEXT", hotspot.next_budget_mv), ("FEXT", hotspot.fext_budget_mv)) if np.isfinite(v)}


def _axes(ax, sweep: Sweep, own_x: float, own_label: str, hotspot: Hotspot, xlabel: str, fix_x: float | None,
          fix_text: str) -> None:
    budgets = _budget_mv(hotspot)
    x = sweep.x_mm
    ax.plot(x, np.abs(sweep.next_v) * 1e3, color=palette.NEAR_END, linewidth=1.6, label="NEXT")
    ax.plot(x, np.abs(sweep.fext_v) * 1e3, color=palette.FAR_END, linewidth=1.6, label="|FEXT|")
    shared = len(set(budgets.values())) == 1
    for name, budget in budgets.items():
        colour = palette.BUDGET_LINE if shared else (palette.NEAR_END if name == "NEXT" else palette.FAR_END)
        ax.axhline(budget, color=colour, linestyle=(0, (5, 3)), linewidth=1.0,
                   label=f"budget {budget:.4g} mV" if shared else f"{name} budget {budget:.4g} mV")
        if shared:
            break
    status = palette.STATUS_COLOUR[hotspot.status]
    for value in (abs(hotspot.next_mv), abs(hotspot.fext_mv)):
        ax.plot([own_x], [value], "o", markersize=6, markerfacecolor="white", markeredgecolor=status,
                markeredgewidth=1.8, zorder=5)
    ax.plot([], [], "o", markerfacecolor="white", markeredgecolor=status, markeredgewidth=1.8, label=own_label)
    if fix_x is not None:
        ax.axvline(fix_x, color=palette.INK, linestyle=(0, (1, 2)), linewidth=0.9)
        ax.annotate(fix_text, (fix_x, 0.0), xycoords=("data", "axes fraction"), xytext=(3, 4),
                    textcoords="offset points", fontsize=7, color=palette.INK, va="bottom")
    top = max([abs(hotspot.next_mv), abs(hotspot.fext_mv)] + list(budgets.values()))
    ax.set_ylim(0, 1.35 * max(top, 1e-6))
    ax.set_xlabel(xlabel, fontsize=8)
    ax.set_ylabel("peak noise at the receiver (mV)", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.grid(True, color="#eee9df", linewidth=0.6)
    ax.legend(fontsize=6.5, loc="upper right", frameon=True, framealpha=0.85, edgecolor="#e6e1d7")


def what_if_figure(sweeps: WhatIf, hotspot: Hotspot) -> Figure:
    """Noise against uniform spacing (left, when the run has one) and against coupled length (right)."""
    fig = Figure(figsize=FIGURE_IN, facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    fix = hotspot.fix or {}
    boxes = [(0.08, 0.16, 0.39, 0.64), (0.58, 0.16, 0.39, 0.64)] if sweeps.spacing is not None \
        else [(0.08, 0.16, 0.89, 0.64)]
    if sweeps.spacing is not None:
        ax = fig.add_axes(boxes[0])
        needed = fix.get("spacing_needed_mm")
        _axes(ax, sweeps.spacing, hotspot.min_spacing_mm, "this run, at its smallest gap", hotspot,
              "uniform gap along the whole run (mm)",
              needed, f"≥ {needed:.3g} mm" if needed is not None else "")
        ax.set_xscale("log")
    ax = fig.add_axes(boxes[-1])
    longest = fix.get("max_length_mm")
    _axes(ax, sweeps.length, hotspot.coupled_length_mm, "this run", hotspot, "coupled length at today's gaps (mm)",
          longest, f"≤ {longest:.4g} mm" if longest is not None else "")
    room_in = 0.9 * FIGURE_IN[0]
    fig.text(0.08, 0.93, fit_line(f"#{hotspot.rank}  what the run would pick up: {hotspot.victim} (victim) ← "
                                  f"{hotspot.aggressor}", room_in, 10), fontsize=10, color=palette.INK, ha="left")
    fig.text(0.08, 0.87, fit_line("Same model as the scan; the dotted lines are the offered fix, re-scored to pass "
                                  "(within this run's share of its victims' budgets). "
                                  + ("" if sweeps.spacing is not None else "The run couples to the neighbouring "
                                     "layer, so only its length is swept."), room_in, 7.5),
             fontsize=7.5, color="#6b6357", ha="left")
    return fig
