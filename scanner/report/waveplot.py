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
FIGURE_WIDTH_IN = 8.0
#: height of one receiver scenario's panel, and of the title and bottom margins (inches)
PANEL_IN, HEADER_IN, FOOTER_IN = 2.9, 0.8, 0.1
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


def _limits_mv(curves: list[np.ndarray], budgets: dict[str, float]) -> tuple[float, float]:
    """y range (mV) around the curves and the budgets unless these dwarf the noise; zero always inside."""
    values = np.concatenate(curves)
    noise_max = max(float(np.abs(values).max()), 1e-6)
    budget = max([b for b in budgets.values() if b <= 4 * noise_max], default=0.0)
    high = max(float(values.max()), budget, 0.15 * noise_max)
    low = min(float(values.min()), -budget, -0.15 * noise_max)
    room = 0.15 * (high - low)  # headroom for the peak labels
    return 1e3 * (low - room), 1e3 * (high + room)


@dataclass(frozen=True)
class Scenario:
    """Where the victim's receiver sits, and what each end of the victim sees then."""

    title: str
    curves: list[tuple[np.ndarray, str, str, bool]]  # (volts, colour, label, marked: the receiver's curve)


def scenarios(waves: FindingWaveforms) -> list[Scenario]:
    """One scenario per receiver position (docs/physics.md §4): with a high-impedance receiver, either at the far
    end (victim driven from the aggressor's driver end: the receiver sees the doubled FEXT, the near-end wave
    lands on the victim's own driver) or at the near end (driven from the other end: the receiver sees the doubled
    NEXT). A victim matched at both ends has one scenario: each end takes its wave as it arrives."""
    gain = waves.receiver_gain
    if gain == 1:
        return [Scenario("Victim matched at both ends: each end takes the wave arriving there",
                         [(waves.near_end_v, palette.NEAR_END, "near end (nearer the aggressor's driver)", True),
                          (waves.far_end_v, palette.FAR_END, "far end", True)])]
    return [Scenario("Receiver at the far end (victim driven from the same end as the aggressor)",
                     [(waves.far_end_v, palette.FAR_END, "far end, at the receiver (doubled)", True),
                      (waves.near_end_v / gain, palette.NEAR_END, "near end, into the victim's driver", False)]),
            Scenario("Receiver at the near end (victim driven from the far end)",
                     [(waves.near_end_v, palette.NEAR_END, "near end, at the receiver (doubled)", True),
                      (waves.far_end_v / gain, palette.FAR_END, "far end, into the victim's driver", False)])]


def _panel(ax, t_ns, waves: FindingWaveforms, scenario: Scenario, hotspot: Hotspot, last: bool) -> None:
    budgets = _budgets_v(hotspot)
    low, high = _limits_mv([c for c, _, _, _ in scenario.curves], budgets)
    _budget_lines(ax, budgets, (low, high))
    exact = hotspot.exact or {}
    for volts, colour, label, marked in scenario.curves:
        ax.plot(t_ns, volts * 1e3, color=colour, linewidth=1.7 if marked else 1.0, label=label, zorder=3,
                linestyle="-" if marked else (0, (4, 2)))
        if not marked:
            continue
        name = "NEXT" if colour == palette.NEAR_END else "FEXT"
        k = int(np.argmax(np.abs(volts)))
        peak_mv = float(volts[k]) * 1e3
        ax.plot([t_ns[k]], [peak_mv], "o", color=colour, markersize=4, zorder=4)
        ax.annotate(f"{name} {peak_mv:.4g} mV", (t_ns[k], peak_mv), textcoords="offset points",
                    xytext=(6, 6 if peak_mv >= 0 else -12), fontsize=7.5, color=colour, zorder=5)
        exact_mv = exact.get(f"{name.lower()}_mv")
        if exact_mv is not None:
            # the exact simulation reports a peak magnitude for NEXT: shown on the estimate's side of zero
            shown_mv = abs(exact_mv) * np.sign(peak_mv) if name == "NEXT" else exact_mv
            ax.plot([t_ns[k]], [shown_mv], "x", color=colour, markersize=7, markeredgewidth=1.6, zorder=4,
                    label=f"exact line simulation, {name} peak")
    ax.set_ylim(low, high)
    ax.set_xlim(t_ns[0], t_ns[-1])
    ax.axhline(0, color="#b9b1a3", linewidth=0.6, zorder=1)
    ax.set_title(scenario.title, fontsize=8.5, loc="left", color=palette.INK)
    if last:
        ax.set_xlabel("time after the aggressor edge starts (ns)", fontsize=8)
    ax.set_ylabel("victim noise (mV)", fontsize=8)
    ax.tick_params(labelsize=7)
    # the aggressor's edge as a shape on the same axes: zero level with zero, its swing at 80 % of the top
    edge_scale = 0.8 * high / hotspot.swing_v
    ax.plot(t_ns, waves.aggressor_v * edge_scale, color=palette.EDGE, linestyle=(0, (2, 2)), linewidth=1.1,
            label=f"aggressor edge (shape), 0 to {hotspot.swing_v:g} V, {hotspot.rise_time_ns:g} ns 10–90 %")
    ax.legend(fontsize=6.5, loc="upper right", frameon=True, framealpha=0.85, edgecolor="#e6e1d7")


def wave_figure(waves: FindingWaveforms, hotspot: Hotspot) -> Figure:
    """Victim noise (mV) for each receiver position, one panel each, with the budget band and the aggressor edge."""
    panels = scenarios(waves)
    height_in = PANEL_IN * len(panels) + HEADER_IN + FOOTER_IN
    fig = Figure(figsize=(FIGURE_WIDTH_IN, height_in), facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    t_ns = waves.time_s * 1e9
    for i, scenario in enumerate(panels):
        bottom = (FOOTER_IN + (len(panels) - 1 - i) * PANEL_IN + 0.35) / height_in
        ax = fig.add_axes((0.09, bottom, 0.87, (PANEL_IN - 0.7) / height_in))
        _panel(ax, t_ns, waves, scenario, hotspot, last=i == len(panels) - 1)
    note = ""
    if hotspot.aggressor_model == ODD_MODE:
        note = f"; run of {waves.aggressor} only, the table combines both members"
    if hotspot.exact:
        note += f"; exact simulation NEXT {hotspot.exact['next_mv']:.4g} mV, FEXT {hotspot.exact['fext_mv']:.4g} mV"
    room_in = 0.88 * FIGURE_WIDTH_IN
    fig.text(0.09, 1 - 0.3 / height_in, fit_line(f"#{hotspot.rank}  {hotspot.victim} (victim) ← {hotspot.aggressor} "
                                                 "(aggressor)", room_in, 10), fontsize=10, color=palette.INK, ha="left")
    fig.text(0.09, 1 - 0.5 / height_in, fit_line(f"{hotspot.coupled_length_mm:.4g} mm on {'+'.join(hotspot.layers)} "
                                                  f"({hotspot.structure}), {hotspot.swing_v:g} V swing{note}",
                                                  room_in, 7.5), fontsize=7.5, color="#6b6357", ha="left")
    fig.text(0.09, 1 - 0.66 / height_in, "Near end: the victim's end nearer the aggressor's driver; far end: the "
             "other end.", fontsize=7.5, color="#6b6357", ha="left")
    return fig
