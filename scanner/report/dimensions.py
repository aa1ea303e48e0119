"""Marks on a close-up: the net names at their traces, the gap and the coupled length.

All offsets are in points, so the marks keep their size whatever the crop's scale.
The coupled length is drawn as a dimension line along the direction of the run's
worst stretch, spanning the whole run; its text gives the coupled length itself,
which on a bent run is longer than the span.
"""
from __future__ import annotations

import numpy as np
from matplotlib.patheffects import withStroke

from scanner.report import palette
from scanner.report.overlay import Canvas

Z_DIMENSION = 6.5
#: how far the length dimension line sits beyond the run's copper, and its end ticks (points)
LENGTH_OFFSET_PT = 16.0
TICK_PT = 4.0
#: how far net-name and gap labels sit from the point they name (points)
LABEL_OFFSET_PT = 24.0
FONT_PT = 7.5
_HALO = [withStroke(linewidth=2.5, foreground="white")]


def _upright_deg(direction: np.ndarray) -> float:
    angle = float(np.degrees(np.arctan2(direction[1], direction[0])))
    return angle - 180.0 if angle > 90.0 else angle + 180.0 if angle <= -90.0 else angle


def length_mark(canvas: Canvas, points: np.ndarray, direction: np.ndarray, half_width_mm: float, length_mm: float,
                side: float) -> None:
    """A dimension line along ``direction`` spanning the points (the run's piece ends), beside them on the
    ``side`` of the normal (+1 or -1), with ticks at its ends, faint extension lines back to the run and the
    coupled length as text."""
    ax, ppm = canvas.ax, canvas.points_per_mm
    normal = np.array([-direction[1], direction[0]])
    centre = points.mean(axis=0)
    along = (points - centre) @ direction
    across = (points - centre) @ normal
    reach = (across.max() if side > 0 else -across.min()) + half_width_mm + LENGTH_OFFSET_PT / ppm
    base = centre + side * reach * normal
    ends = np.array([base + along.min() * direction, base + along.max() * direction])
    tick = TICK_PT / ppm * normal
    ax.plot(ends[:, 0], ends[:, 1], color=palette.DIMENSION, linewidth=0.9, zorder=Z_DIMENSION)
    for end, t in zip(ends, (along.min(), along.max())):
        ax.plot([end[0] - tick[0], end[0] + tick[0]], [end[1] - tick[1], end[1] + tick[1]],
                color=palette.DIMENSION, linewidth=0.9, zorder=Z_DIMENSION)
        run_end = points[np.argmin(np.abs(along - t))]
        ax.plot([run_end[0], end[0]], [run_end[1], end[1]], color=palette.DIMENSION, linewidth=0.5,
                linestyle=(0, (2, 2)), alpha=0.7, zorder=Z_DIMENSION)
    middle = ends.mean(axis=0)
    ax.annotate(f"{length_mm:.4g} mm coupled", middle, xytext=tuple(side * 7.0 * normal), textcoords="offset points",
                ha="center", va="center", rotation=_upright_deg(direction), rotation_mode="anchor",
                fontsize=FONT_PT, color=palette.DIMENSION, zorder=Z_DIMENSION, path_effects=_HALO)


def gap_mark(canvas: Canvas, at: np.ndarray, normal: np.ndarray, reach_mm: float, gap_mm: float, side: float) -> None:
    """A thin line across the pair where the gap is smallest and a label naming the gap, on ``side``."""
    ax = canvas.ax
    ends = np.array([at - reach_mm * normal, at + reach_mm * normal])
    ax.plot(ends[:, 0], ends[:, 1], color=palette.DIMENSION, linewidth=0.7, zorder=Z_DIMENSION)
    offset = side * LABEL_OFFSET_PT * normal + np.array([LABEL_OFFSET_PT * 0.6, 0.0])
    ax.annotate(f"gap {gap_mm:.3g} mm", at, xytext=tuple(offset), textcoords="offset points",
                ha="left" if offset[0] >= 0 else "right", va="bottom" if offset[1] >= 0 else "top",
                fontsize=FONT_PT, color=palette.DIMENSION, zorder=Z_DIMENSION, path_effects=_HALO,
                arrowprops=dict(arrowstyle="-", color=palette.DIMENSION, linewidth=0.6, shrinkA=1, shrinkB=0))


def net_label(canvas: Canvas, at: np.ndarray, normal: np.ndarray, side: float, text: str, colour: str) -> None:
    """A net's name beside its trace, joined to it by a short leader."""
    offset = side * LABEL_OFFSET_PT * normal + np.array([LABEL_OFFSET_PT * 0.3, 0.0])
    canvas.ax.annotate(text, at, xytext=tuple(offset), textcoords="offset points",
                       ha="right" if offset[0] < 0 else "left", va="bottom" if offset[1] >= 0 else "top",
                       fontsize=FONT_PT, fontweight="bold", color=colour, zorder=Z_DIMENSION, path_effects=_HALO,
                       arrowprops=dict(arrowstyle="-", color=colour, linewidth=0.7, shrinkA=1, shrinkB=0))
