"""The stackup as a drawing: every layer top to bottom, signal layers labelled with their structure and
reference plane, dielectrics with thickness and εr.

Heights follow the thicknesses, except that no layer is drawn thinner than
``MIN_BAND`` of the drawing, so thin copper and soldermask stay legible; the
labels give the true figures.
"""
from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from scanner.report import palette
from scanner.report.sectionplot import er_colour
from scanner.report.view import layer_references
from scanner.scoring.results import ScanResult

FIGURE_IN = (7.5, 4.6)
MIN_BAND = 0.035
COPPER = "#b07a4a"
MASK = "#d5e3d6"
TRACE_BLOCKS = 5


def _bands(thickness: np.ndarray) -> np.ndarray:
    """Drawn heights (fractions of the whole) from the thicknesses, none below MIN_BAND."""
    share = thickness / max(thickness.sum(), 1e-12)
    drawn = np.maximum(share, MIN_BAND)
    return drawn / drawn.sum()


def stackup_figure(result: ScanResult) -> Figure:
    """The drawing of ``result.stackup`` with the board's copper layers named in stack order."""
    items = result.stackup.get("layers", [])
    layers = result.board.get("layers", [])
    references = layer_references(result)
    fig = Figure(figsize=FIGURE_IN, facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.02, 0.03, 0.96, 0.84))
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    ax.axis("off")
    heights = _bands(np.array([float(s.get("thickness_mm") or 0.0) for s in items]))
    left, width = 0.30, 0.26
    y = 1.0
    copper_seen = 0
    for item, h in zip(items, heights):
        y -= h
        kind = item.get("kind")
        thickness, er = item.get("thickness_mm"), item.get("epsilon_r")
        if kind == "copper":
            board_layer = layers[copper_seen] if copper_seen < len(layers) else {}
            copper_seen += 1
            name = board_layer.get("name", item.get("name"))
            if board_layer.get("kind") == "plane":
                ax.add_patch(Rectangle((left, y), width, h, facecolor=COPPER, edgecolor="none"))
                label = f"{name}  plane"
            else:
                block = width / (2 * TRACE_BLOCKS)
                for k in range(TRACE_BLOCKS):
                    ax.add_patch(Rectangle((left + (2 * k + 0.5) * block, y), block, h, facecolor=COPPER,
                                           edgecolor="none"))
                label = f"{name}  signal: {references.get(name, 'not scanned')}"
            ax.text(left + width + 0.02, y + h / 2, label, fontsize=7.5, va="center", color=palette.INK,
                    fontweight="bold" if board_layer.get("kind") != "plane" else "normal")
            ax.text(left - 0.02, y + h / 2, f"copper {thickness:.3g} mm" if thickness else "copper",
                    fontsize=6.5, va="center", ha="right", color="#6b6357")
            continue
        colour = MASK if kind == "soldermask" else er_colour(er or 4.0)
        ax.add_patch(Rectangle((left, y), width, h, facecolor=colour, edgecolor="#d8ccb0", linewidth=0.5))
        text = f"{item.get('name') or kind}: {thickness:.3g} mm" + (f", εr {er:g}" if er else "")
        ax.text(left - 0.02, y + h / 2, text, fontsize=6.5, va="center", ha="right", color="#6b6357")
    total = sum(float(s.get("thickness_mm") or 0.0) for s in items)
    source = result.stackup.get("source", "unknown")
    fig.text(0.02, 0.95, f"Stackup of {result.board.get('name', '')}: {total:.3g} mm over {len(items)} layers "
             f"(from {source})", fontsize=10, color=palette.INK, ha="left", va="center")
    fig.text(0.02, 0.905, "Top of the board first; band heights follow the thicknesses, thin layers drawn wider "
             "than to scale", fontsize=7.5, color="#6b6357", ha="left", va="center")
    return fig
