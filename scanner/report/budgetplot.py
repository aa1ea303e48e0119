"""Budget used per victim, all its aggressors together: horizontal bars, worst first, with the budget at 100 %."""
from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from scanner.report import palette
from scanner.scoring.results import VictimTotal

TOP = 30
WIDTH_IN = 7.5
ROW_IN = 0.2
MARGIN_IN = {"top": 0.62, "bottom": 0.45}


def budget_figure(victims: list[VictimTotal], basis: str = "worst-case") -> Figure:
    """Bars for the first ``TOP`` victims as given (worst first), coloured by status, labelled with the share."""
    shown = victims[:TOP]
    height = MARGIN_IN["top"] + MARGIN_IN["bottom"] + ROW_IN * max(len(shown), 3)
    fig = Figure(figsize=(WIDTH_IN, height), facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.3, MARGIN_IN["bottom"] / height, 0.62, 1 - (MARGIN_IN["top"] + MARGIN_IN["bottom"]) / height))
    used = np.array([v.budget_used_pct for v in shown])
    y = np.arange(len(shown))[::-1]
    ax.barh(y, used, height=0.7, color=[palette.STATUS_COLOUR[v.status] for v in shown], zorder=2)
    reach = max(float(used.max()) if len(used) else 0.0, 100.0) * 1.15
    for yi, u in zip(y, used):
        ax.text(u + reach * 0.01, yi, f"{u:.0f} %", va="center", fontsize=6.5, color=palette.INK)
    ax.axvline(100, color=palette.INK, linewidth=1.1, zorder=3)
    ax.text(100, len(shown) - 0.35, " budget", fontsize=7, color=palette.INK, va="bottom")
    ax.set_yticks(y, [f"{v.net} ({v.net_class})" for v in shown], fontsize=7)
    ax.set_xlim(0, reach)
    ax.set_ylim(-0.6, len(shown) - 0.1)
    ax.set_xlabel("share of the victim's budget used (%)", fontsize=8)
    ax.tick_params(axis="x", labelsize=7)
    ax.grid(True, axis="x", color="#eee9df", linewidth=0.6, zorder=0)
    for spine in ("top", "right"):
        ax.spines[spine].set_visible(False)
    more = f"; {len(victims) - len(shown)} more in the table" if len(victims) > len(shown) else ""
    fig.text(0.02, 1 - 0.22 / height, "Budget used per victim, all aggressors together", fontsize=10,
             color=palette.INK, ha="left", va="center")
    fig.text(0.02, 1 - 0.42 / height, f"Aggressors added as the {basis} sum; {len(shown)} victims, worst first{more}",
             fontsize=7.5, color="#6b6357", ha="left", va="center")
    return fig
