"""Predicted victim noise against time for one finding, and its plot.

The waveforms come from ``scanner.physics.crosstalk.piecewise_peaks`` (weak
coupling, docs/physics.md §3) with the finding's own chain of pieces and their
coefficients and the aggressor's rise time and swing; the orientation shown is the
one with the larger near-end noise. The model is the scan's own (docs/physics.md,
terminations): for a victim with a high-impedance receiver each curve is that
receiver's voltage in one of the two cases — the near-end curve with the receiver
at the aggressor's driver end (victim driven from the far end), the far-end curve
with the receiver at the far end (victim driven from the same end) — and the plot
says so. The time
grid contains every breakpoint of the piecewise-linear waveforms, so the plotted
peaks are the model's exact peaks.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from scanner.board.model import Board
from scanner.physics.crosstalk import piecewise_peaks, ramp_duration_s, receiver_gain
from scanner.report import palette
from scanner.report.overlay import fit_line
from scanner.scoring.results import Hotspot, ScanResult

GRID_POINTS = 1200
#: curve labels: matched victim ends, or where the high-impedance receiver sits in each case
END_LABELS = {False: ("near end (matched)", "far end (matched)"),
              True: ("near end: receiver here, victim driven from the far end (wave doubled)",
                     "far end: receiver here, victim driven from the same end (wave doubled)")}
FIGURE_IN = (8.0, 4.8)
ODD_MODE = "differential (odd mode)"


@dataclass(frozen=True)
class FindingWaveforms:
    """Victim voltages (V) at both ends and the aggressor's edge (V) on one time grid (s)."""

    time_s: np.ndarray
    near_end_v: np.ndarray
    far_end_v: np.ndarray
    aggressor_v: np.ndarray
    aggressor: str  # the aggressor net whose run is shown
    receiver_gain: float  # 2 when both curves are doubled by a high-impedance receiver

    @property
    def near_end_peak_v(self) -> float:
        return float(self.near_end_v[np.argmax(np.abs(self.near_end_v))])

    @property
    def far_end_peak_v(self) -> float:
        return float(self.far_end_v[np.argmax(np.abs(self.far_end_v))])


def _time_grid(delay_s: np.ndarray, ramp_s: float) -> np.ndarray:
    """Uniform samples plus every breakpoint (either orientation), each also just before and after."""
    total = float(delay_s.sum())
    starts = 2 * np.concatenate([np.cumsum(delay_s) - delay_s, np.cumsum(delay_s[::-1]) - delay_s[::-1]])
    knots = np.concatenate([starts, starts + 2 * np.concatenate([delay_s, delay_s[::-1]]),
                            [0.0, total, 2 * total]])
    knots = np.concatenate([knots, knots + ramp_s])
    eps = 1e-6 * ramp_s
    end = 2 * total + 2.5 * ramp_s
    uniform = np.linspace(-0.1 * end, end, GRID_POINTS)
    return np.unique(np.concatenate([uniform, knots - eps, knots + eps]))


def finding_waveforms(result: ScanResult, board: Board, hotspot: Hotspot) -> FindingWaveforms:
    """Waveforms of one finding's run from its pieces' coefficients (aggressor edge starts at t = 0).

    For a differential aggressor in the odd-mode model the run is that of the member
    the finding carries; the scan's figure combines both members.
    """
    runs, coeff = result.runs, result.piece_coefficients
    rows = runs.pieces_of(hotspot.run)
    length_m = runs.pieces.length_mm[rows] * 1e-3
    velocity = coeff.velocity_m_per_s[rows]
    rise_time_s = hotspot.rise_time_ns * 1e-9
    ramp_s = float(ramp_duration_s(rise_time_s))
    time_s = _time_grid(length_m / velocity, ramp_s)
    noise = piecewise_peaks(coeff.kb[rows], coeff.kf_s_per_m[rows], length_m, velocity, rise_time_s,
                            hotspot.swing_v, termination=hotspot.termination, waveforms=True, time_s=time_s)
    victim = board.net_id(hotspot.victim)
    net_a, net_b = int(runs.net_a[hotspot.run]), int(runs.net_b[hotspot.run])
    aggressor = board.nets[net_b if net_a == victim else net_a]
    edge_v = hotspot.swing_v * np.clip(time_s / ramp_s, 0.0, 1.0)  # the linear ramp of docs/physics.md §3
    return FindingWaveforms(time_s, noise.near_end_v, noise.far_end_v, edge_v, aggressor,
                            receiver_gain(hotspot.termination))


def _budgets_v(hotspot: Hotspot) -> dict[str, float]:
    """The finite NEXT and FEXT budgets (V)."""
    budgets = {"NEXT": hotspot.next_budget_mv * 1e-3, "FEXT": hotspot.fext_budget_mv * 1e-3}
    return {k: v for k, v in budgets.items() if np.isfinite(v)}


def _budget_lines(ax, budgets: dict[str, float], limits_mv: tuple[float, float]) -> None:
    """The ±budget band: shaded inside the smaller budget, dashed limits (one pair when NEXT and FEXT agree)."""
    if not budgets:
        return
    shared = len(set(budgets.values())) == 1
    inner = min(budgets.values())
    ax.axhspan(-inner * 1e3, inner * 1e3, color=palette.BUDGET_BAND, zorder=0)
    for name, budget in budgets.items():
        colour = palette.BUDGET_LINE if shared else (palette.NEAR_END if name == "NEXT" else palette.FAR_END)
        label = f"budget ±{budget * 1e3:.4g} mV" if shared else f"{name} budget ±{budget * 1e3:.4g} mV"
        label += " (beyond the scale)" if budget * 1e3 > min(-limits_mv[0], limits_mv[1]) else ""
        for sign in (1, -1):
            ax.axhline(sign * budget * 1e3, color=colour, linestyle=(0, (5, 3)), linewidth=0.9, zorder=1,
                       label=label if sign > 0 else None)
        if shared:
            break


def _limits_mv(waves: FindingWaveforms, budgets: dict[str, float]) -> tuple[float, float]:
    """y range (mV) around both curves and the budgets unless these dwarf the noise; zero always inside."""
    values = np.concatenate([waves.near_end_v, waves.far_end_v])
    noise_max = max(float(np.abs(values).max()), 1e-6)
    budget = max([b for b in budgets.values() if b <= 4 * noise_max], default=0.0)
    high = max(float(values.max()), budget, 0.15 * noise_max)
    low = min(float(values.min()), -budget, -0.15 * noise_max)
    room = 0.15 * (high - low)  # headroom for the peak labels
    return 1e3 * (low - room), 1e3 * (high + room)


def wave_figure(waves: FindingWaveforms, hotspot: Hotspot) -> Figure:
    """Near-end and far-end victim noise (mV) with the budget band and the aggressor edge (right axis)."""
    fig = Figure(figsize=FIGURE_IN, facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.09, 0.25, 0.8, 0.58))
    t_ns = waves.time_s * 1e9
    budgets = _budgets_v(hotspot)
    low, high = _limits_mv(waves, budgets)
    _budget_lines(ax, budgets, (low, high))
    near_label, far_label = END_LABELS[waves.receiver_gain != 1]
    ax.plot(t_ns, waves.near_end_v * 1e3, color=palette.NEAR_END, linewidth=1.7, label=near_label, zorder=3)
    ax.plot(t_ns, waves.far_end_v * 1e3, color=palette.FAR_END, linewidth=1.7, label=far_label, zorder=3)
    exact = hotspot.exact or {}
    for peak_v, values, colour, name in ((waves.near_end_peak_v, waves.near_end_v, palette.NEAR_END, "NEXT"),
                                         (waves.far_end_peak_v, waves.far_end_v, palette.FAR_END, "FEXT")):
        t_peak = t_ns[np.argmax(np.abs(values))]
        ax.plot([t_peak], [peak_v * 1e3], "o", color=colour, markersize=4, zorder=4)
        ax.annotate(f"{name} {peak_v * 1e3:.4g} mV", (t_peak, peak_v * 1e3), textcoords="offset points",
                    xytext=(6, 6 if peak_v >= 0 else -12), fontsize=7.5, color=colour, zorder=5)
        exact_mv = exact.get(f"{name.lower()}_mv")
        if exact_mv is not None:
            # the exact simulation reports a peak magnitude for NEXT: shown on the estimate's side of zero
            shown_mv = abs(exact_mv) * np.sign(peak_v) if name == "NEXT" else exact_mv
            ax.plot([t_peak], [shown_mv], "x", color=colour, markersize=7, markeredgewidth=1.6, zorder=4,
                    label="exact line simulation, peak" if name == "NEXT" else None)
    ax.set_ylim(low, high)
    ax.set_xlim(t_ns[0], t_ns[-1])
    ax.axhline(0, color="#b9b1a3", linewidth=0.6, zorder=1)
    ax.set_xlabel("time after the aggressor edge starts (ns)", fontsize=8)
    ax.set_ylabel("victim noise (mV)", fontsize=8)
    ax.tick_params(labelsize=7)
    edge_ax = ax.twinx()
    edge_ax.plot(t_ns, waves.aggressor_v, color=palette.EDGE, linestyle=(0, (2, 2)), linewidth=1.1,
                 label=f"aggressor edge, {hotspot.rise_time_ns:g} ns 10–90 % (right axis)")
    edge_top = 1.25 * hotspot.swing_v
    edge_ax.set_ylim(edge_top * low / high, edge_top)  # zero volts level with zero millivolts
    edge_ax.set_ylabel("aggressor (V)", fontsize=8, color=palette.EDGE)
    edge_ax.tick_params(labelsize=7, colors=palette.EDGE)
    handles, labels = ax.get_legend_handles_labels()
    more_h, more_l = edge_ax.get_legend_handles_labels()
    fig.legend(handles + more_h, labels + more_l, fontsize=7, loc="lower center", ncol=2, frameon=False,
               bbox_to_anchor=(0.49, 0.0))
    note = ""
    if hotspot.aggressor_model == ODD_MODE:
        note = f"; run of {waves.aggressor} only, the table combines both members"
    if exact:
        note += f"; exact simulation NEXT {exact['next_mv']:.4g} mV, FEXT {exact['fext_mv']:.4g} mV"
    room_in = 0.88 * FIGURE_IN[0]
    fig.text(0.09, 0.93, fit_line(f"#{hotspot.rank}  {hotspot.victim} (victim) ← {hotspot.aggressor} (aggressor)",
                                  room_in, 10), fontsize=10, color=palette.INK, ha="left")
    fig.text(0.09, 0.875, fit_line(f"{hotspot.coupled_length_mm:.4g} mm on {'+'.join(hotspot.layers)} "
                                   f"({hotspot.structure}), {hotspot.swing_v:g} V swing, weak-coupling model{note}",
                                   room_in, 7.5), fontsize=7.5, color="#6b6357", ha="left")
    return fig
