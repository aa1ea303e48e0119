"""Overlay figures: a board window at true scale with copper, highlighted runs and ranked markers.

Each figure is sized so that the window fills a fixed axes box at equal x and y
scale; from that box the millimetre-to-point factor is known before anything is
drawn, which lets traces be stroked at their true widths and labels be placed in
points (``scanner.report.labels``). Views are seen from the top, in the
coordinates of the fabrication files.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.font_manager import FontProperties
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

from scanner.board.model import TraceSegments
from scanner.report import palette
from scanner.report.copper import Window, stroke_collection
from scanner.report.labels import place_labels
from scanner.report.marks import Mark, RoleTraces, has_geometric

MARGIN_IN = {"left": 0.8, "right": 0.3, "top": 0.55, "bottom": 0.95}
LABEL_FONT = FontProperties(family="DejaVu Sans", size=7.5, weight="bold")
LABEL_PAD_PT = 2.0
#: average glyph width of the default sans-serif font, in em, with some margin (for one-line titles)
CHAR_WIDTH_EM = 0.62
MARKER_RADIUS_PT = 3.5
#: highlighted traces are never drawn thinner than this, so thin runs stay visible at board scale
MIN_HIGHLIGHT_PT = 1.6
SIDE_MARKER = {"top": "o", "inner": "D", "bottom": "s"}
SIDE_NAME = {"top": "on the top layer", "inner": "on an inner layer", "bottom": "on the bottom layer"}
Z_HIGHLIGHT, Z_DASH, Z_WORST, Z_LEADER, Z_MARK, Z_LABEL = 5.0, 5.5, 4.5, 6.0, 7.0, 8.0


@dataclass(frozen=True)
class Canvas:
    """A figure whose single axes shows ``window`` (mm) at ``points_per_mm``."""

    figure: Figure
    ax: object
    window: Window
    points_per_mm: float
    size_pt: tuple[float, float]


def canvas_for(window: Window, max_size_in: tuple[float, float], min_size_in: tuple[float, float]) -> Canvas:
    """A figure for the window at equal scale, the axes box within the size limits; the window grows to fit."""
    x0, y0, x1, y1 = window
    w_mm, h_mm = max(x1 - x0, 1e-3), max(y1 - y0, 1e-3)
    scale = min(max_size_in[0] / w_mm, max_size_in[1] / h_mm)  # inches per mm
    ax_w, ax_h = max(w_mm * scale, min_size_in[0]), max(h_mm * scale, min_size_in[1])
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    half_w, half_h = 0.5 * ax_w / scale, 0.5 * ax_h / scale
    window = (cx - half_w, cy - half_h, cx + half_w, cy + half_h)
    fig_w = ax_w + MARGIN_IN["left"] + MARGIN_IN["right"]
    fig_h = ax_h + MARGIN_IN["top"] + MARGIN_IN["bottom"]
    fig = Figure(figsize=(fig_w, fig_h), facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((MARGIN_IN["left"] / fig_w, MARGIN_IN["bottom"] / fig_h, ax_w / fig_w, ax_h / fig_h))
    ax.set_xlim(window[0], window[2])
    ax.set_ylim(window[1], window[3])
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_facecolor(palette.BACKGROUND)
    ax.set_xlabel("x (mm)", fontsize=8)
    ax.set_ylabel("y (mm)", fontsize=8)
    ax.tick_params(labelsize=7, colors=palette.INK)
    for spine in ax.spines.values():
        spine.set_color("#b9b1a3")
    return Canvas(fig, ax, window, scale * 72.0, (ax_w * 72.0, ax_h * 72.0))


def padded(bounds, fraction: float, minimum_mm: float) -> Window:
    x0, y0, x1, y1 = bounds
    pad = max(fraction * max(x1 - x0, y1 - y0), minimum_mm)
    return (x0 - pad, y0 - pad, x1 + pad, y1 + pad)


def scale_bar(canvas: Canvas) -> np.ndarray:
    """A scale bar at the lower left of the axes; returns its box in axes points (for label placement)."""
    span = canvas.window[2] - canvas.window[0]
    target = span / 6
    step = 10 ** math.floor(math.log10(target))
    length = max(m * step for m in (1, 2, 5) if m * step <= target)
    text = f"{length:g} mm"
    bar = AnchoredSizeBar(canvas.ax.transData, length, text, loc="lower left", pad=0.35, borderpad=0.6, sep=3,
                          frameon=True, size_vertical=0, color=palette.INK,
                          fontproperties=FontProperties(size=7.5))
    bar.patch.set(facecolor="white", alpha=0.85, edgecolor="#b9b1a3")
    bar.set_zorder(Z_LABEL)
    canvas.ax.add_artist(bar)
    return np.array([[0.0, 0.0, length * canvas.points_per_mm + 22.0, 34.0]])


def draw_roles(canvas: Canvas, roles: RoleTraces, alpha: float = 1.0) -> None:
    """Victim traces solid teal, aggressor traces plum with a pale dashed centre line (``alpha`` < 1: a run's
    pieces on another layer)."""
    for segments, colour in ((roles.aggressor, palette.AGGRESSOR), (roles.victim, palette.VICTIM)):
        if len(segments) == 0:
            continue
        widened = _widened(segments, MIN_HIGHLIGHT_PT / canvas.points_per_mm)
        canvas.ax.add_collection(stroke_collection(widened, canvas.points_per_mm, colour, Z_HIGHLIGHT, alpha=alpha))
    if len(roles.aggressor):
        dash = _widened(roles.aggressor, 0.0)
        lines = stroke_collection(dash, canvas.points_per_mm, palette.AGGRESSOR_DASH, Z_DASH, linestyles=(0, (3, 3)),
                                  alpha=alpha)
        lines.set_linewidths(np.clip(dash.width * canvas.points_per_mm * 0.3, 0.4, 1.0))
        canvas.ax.add_collection(lines)


def _widened(segments: TraceSegments, min_width_mm: float) -> TraceSegments:
    return TraceSegments(segments.x0, segments.y0, segments.x1, segments.y1,
                         np.maximum(segments.width, min_width_mm), segments.net)


def draw_marks(canvas: Canvas, marks: list[Mark], obstacles: np.ndarray, shaped: bool = False) -> dict[str, str]:
    """Markers at the findings (shaped by copper side when ``shaped``) and their labels, placed clear of each
    other and of the obstacles (boxes in axes points), joined to them by leader lines. Returns the hover
    title of each label by its id in vector output."""
    if not marks:
        return {}
    marks = sorted(marks, key=lambda m: m.order)
    ax, ppm = canvas.ax, canvas.points_per_mm
    wx0, wy0 = canvas.window[0], canvas.window[1]
    renderer = canvas.figure.canvas.get_renderer()
    px_to_pt = 72.0 / canvas.figure.dpi
    sizes = np.array([renderer.get_text_width_height_descent(m.text, LABEL_FONT, ismath=False)[:2] for m in marks])
    width = sizes[:, 0] * px_to_pt + 2 * LABEL_PAD_PT
    height = sizes[:, 1] * px_to_pt + 2 * LABEL_PAD_PT
    anchor_x = np.array([(m.x_mm - wx0) * ppm for m in marks])
    anchor_y = np.array([(m.y_mm - wy0) * ppm for m in marks])
    layout = place_labels(anchor_x, anchor_y, width, height, (0.0, 0.0, *canvas.size_pt), MARKER_RADIUS_PT,
                          obstacles)
    for shape in sorted({(SIDE_MARKER[m.side] if shaped else "o") for m in marks}):
        chosen = [m for m in marks if (SIDE_MARKER[m.side] if shaped else "o") == shape]
        ax.scatter([m.x_mm for m in chosen], [m.y_mm for m in chosen], s=(2 * MARKER_RADIUS_PT) ** 2, marker=shape,
                   facecolors="white", edgecolors=[palette.STATUS_COLOUR[m.status] for m in chosen],
                   linewidths=1.6, zorder=Z_MARK)
    label_x, label_y = wx0 + layout.x / ppm, wy0 + layout.y / ppm
    # leaders from marker centre to label centre, under every marker and label so none is crossed out
    leaders = np.stack([np.column_stack([[m.x_mm for m in marks], [m.y_mm for m in marks]]),
                        np.column_stack([label_x, label_y])], axis=1)
    ax.add_collection(LineCollection(leaders, colors=palette.LEADER, linewidths=0.6, zorder=Z_LEADER))
    titles = {}
    for i, (m, lx, ly) in enumerate(zip(marks, label_x, label_y)):
        text = ax.text(lx, ly, m.text, ha="center", va="center", fontproperties=LABEL_FONT,
                       color=palette.STATUS_TEXT[m.status], zorder=Z_LABEL, clip_on=False,
                       bbox=dict(boxstyle=f"round,pad={LABEL_PAD_PT / LABEL_FONT.get_size()}",
                                 facecolor=palette.STATUS_COLOUR[m.status], edgecolor="white", linewidth=0.6))
        if m.title:
            text.set_gid(f"mark-{i}")
            titles[f"mark-{i}"] = m.title
    return titles


def status_handles(marks: list[Mark]) -> list:
    """Legend entries for the statuses present; a broken geometric limit (label G…) also counts as fail."""
    present = {m.status for m in marks}
    labels = dict(palette.STATUS_LABEL, fail=palette.STATUS_LABEL["fail"] + (" or limit" if has_geometric(marks) else ""))
    return [Patch(facecolor=palette.STATUS_COLOUR[s], edgecolor="white", label=f"{s}: {labels[s]}")
            for s in ("fail", "warn", "pass") if s in present]


def role_handles() -> list:
    victim = Line2D([], [], color=palette.VICTIM, linewidth=4)
    aggressor = (Line2D([], [], color=palette.AGGRESSOR, linewidth=4),
                 Line2D([], [], color=palette.AGGRESSOR_DASH, linewidth=1, linestyle=(0, (3, 3))))
    return [(victim, "victim trace"), (aggressor, "aggressor trace")]


def side_handles(sides) -> list:
    sides = set(sides)
    return [(Line2D([], [], linestyle="none", marker=SIDE_MARKER[s], markerfacecolor="white",
                    markeredgecolor=palette.INK, markersize=6), f"finding {SIDE_NAME[s]}")
            for s in ("top", "inner", "bottom") if s in sides]


def copper_handles(has_outline: bool) -> list:
    out = [(Patch(facecolor=palette.TRACE, edgecolor="none"), "copper on this layer")]
    if has_outline:
        out.append((Line2D([], [], color=palette.BOARD_EDGE, linewidth=1), "board outline"))
    return out


def legend(canvas: Canvas, entries: list) -> None:
    """A legend under the axes, in as many columns as the width allows; ``entries`` are labelled Patch handles
    or (handle, label) pairs."""
    handles = [e[0] if isinstance(e, tuple) else e for e in entries]
    labels = [e[1] if isinstance(e, tuple) else e.get_label() for e in entries]
    fig_w = canvas.figure.get_figwidth()
    columns = max(1, min(len(handles), int(fig_w / 1.9)))
    canvas.figure.legend(handles, labels, loc="lower center", ncol=columns, frameon=False, fontsize=7.5,
                         bbox_to_anchor=(0.5, 0.0), handlelength=2.2, columnspacing=1.4)


def title(canvas: Canvas, text: str, detail: str = "") -> None:
    """A heading and a line of detail in the top margin, aligned with the axes' left edge."""
    fig_h = canvas.figure.get_figheight()
    left = canvas.ax.get_position().x0
    room_in = canvas.figure.get_figwidth() * (1 - left) - MARGIN_IN["right"]
    canvas.figure.text(left, 1 - 0.2 / fig_h, fit_line(text, room_in, 10), fontsize=10, color=palette.INK,
                       ha="left", va="center")
    if detail:
        canvas.figure.text(left, 1 - 0.38 / fig_h, fit_line(detail, room_in, 7.5), fontsize=7.5, color="#6b6357",
                           ha="left", va="center")


def fit_line(text: str, width_in: float, fontsize_pt: float) -> str:
    """The text, cut with an ellipsis if it would run past ``width_in`` (a generous estimate of glyph widths)."""
    room = int(width_in * 72 / (CHAR_WIDTH_EM * fontsize_pt))
    return text if len(text) <= room else text[:max(room - 1, 1)] + "…"
