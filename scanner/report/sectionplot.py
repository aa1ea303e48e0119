"""A cross-section drawn to scale: reference planes, dielectric layers with their εr, soldermask, traces,
the gap between neighbouring traces and the height to the plane.

Draws a ``scanner.physics.CrossSection`` exactly as the solver takes it: the one
``nearfar section`` solves, or the one behind a finding (its layer's stackup with
the victim and aggressor widths of its worst stretch at the run's smallest gap).
"""
from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import Polygon, Rectangle

from scanner.board.model import Board
from scanner.coupling.coefficients import section_arguments
from scanner.physics.geometry import CrossSection, traces_on_layer
from scanner.report import palette
from scanner.report.overlay import fit_line
from scanner.scoring.results import Hotspot, ScanResult

WIDTH_IN = 7.5
#: the drawing's height (inches) is kept within these bounds; the x range grows to fit, the scale stays equal
HEIGHT_IN = (2.4, 4.2)
MARGIN_IN = {"left": 0.7, "right": 0.25, "top": 0.62, "bottom": 0.45}
FONT_PT = 7.0
ROLE_COLOUR = {"victim": palette.VICTIM, "aggressor": palette.AGGRESSOR}


def er_colour(er: float) -> str:
    """Paler for lower permittivity: a cream at εr 1 to a sand at εr 6 and above."""
    t = float(np.clip((er - 1.0) / 5.0, 0.0, 1.0))
    low, high = np.array([0xfb, 0xf8, 0xf0]), np.array([0xe6, 0xd8, 0xb4])
    r, g, b = (low + t * (high - low)).round().astype(int)
    return f"#{r:02x}{g:02x}{b:02x}"


def _window(section: CrossSection) -> tuple[float, float, float, float, float]:
    """x0, x1, y0, y1 (mm) of the drawing and the plane thickness drawn."""
    xs = np.concatenate([c.vertices[:, 0] for c in section.conductors])
    top = section.stack_height_mm
    above = top * 0.45 if section.planes == "below" else 0.0
    plane = max(0.035, 0.06 * top)
    margin = max(1.2 * top, 0.35 * (xs.max() - xs.min()), 0.1)
    y0, y1 = -plane * 1.6, top + above + plane * 1.6
    return float(xs.min() - margin), float(xs.max() + margin), y0, y1, plane


def _dimension(ax, a, b, text: str, offset_pt: tuple[float, float], ha: str = "center") -> None:
    ax.annotate("", a, xytext=b, arrowprops=dict(arrowstyle="<|-|>", color=palette.DIMENSION, linewidth=0.8,
                                                  shrinkA=0, shrinkB=0, mutation_scale=6))
    middle = ((a[0] + b[0]) / 2, (a[1] + b[1]) / 2)
    ax.annotate(text, middle, xytext=offset_pt, textcoords="offset points", ha=ha, va="center", fontsize=FONT_PT,
                color=palette.DIMENSION)


def section_figure(section: CrossSection, heading: str, detail: str, labels: list[str],
                   roles: dict[int, str]) -> Figure:
    """The cross-section to scale; ``labels`` name the conductors, ``roles`` colour them (victim, aggressor)."""
    x0, x1, y0, y1, plane = _window(section)
    scale = (WIDTH_IN - MARGIN_IN["left"] - MARGIN_IN["right"]) / (x1 - x0)  # inches per mm
    ax_h = (y1 - y0) * scale
    if ax_h < HEIGHT_IN[0] - MARGIN_IN["top"] - MARGIN_IN["bottom"]:
        grow = (HEIGHT_IN[0] - MARGIN_IN["top"] - MARGIN_IN["bottom"]) / scale - (y1 - y0)
        y1 += grow
    elif ax_h > HEIGHT_IN[1] - MARGIN_IN["top"] - MARGIN_IN["bottom"]:
        scale = (HEIGHT_IN[1] - MARGIN_IN["top"] - MARGIN_IN["bottom"]) / (y1 - y0)
        middle, half = (x0 + x1) / 2, (WIDTH_IN - MARGIN_IN["left"] - MARGIN_IN["right"]) / scale / 2
        x0, x1 = middle - half, middle + half
    ax_w, ax_h = (x1 - x0) * scale, (y1 - y0) * scale
    fig_h = ax_h + MARGIN_IN["top"] + MARGIN_IN["bottom"]
    fig = Figure(figsize=(WIDTH_IN, fig_h), facecolor=palette.BACKGROUND)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((MARGIN_IN["left"] / WIDTH_IN, MARGIN_IN["bottom"] / fig_h, ax_w / WIDTH_IN, ax_h / fig_h))
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.set_facecolor(palette.BACKGROUND)
    top = section.stack_height_mm
    copper = "#b07a4a"
    ax.add_patch(Rectangle((x0, -plane), x1 - x0, plane, facecolor=copper, edgecolor="none"))
    ax.annotate("reference plane", (x1, -plane / 2), xytext=(-4, 0), textcoords="offset points", ha="right",
                va="center", fontsize=FONT_PT, color="white")
    base = 0.0
    for d in section.dielectrics:
        ax.add_patch(Rectangle((x0, base), x1 - x0, d.thickness_mm, facecolor=er_colour(d.er),
                               edgecolor="#d8ccb0", linewidth=0.5))
        ax.annotate(f"εr {d.er:g}, {d.thickness_mm:.3g} mm", (x0, base + d.thickness_mm / 2), xytext=(4, 0),
                    textcoords="offset points", ha="left", va="center", fontsize=FONT_PT, color=palette.INK)
        base += d.thickness_mm
    if section.planes == "both":
        ax.add_patch(Rectangle((x0, top), x1 - x0, plane, facecolor=copper, edgecolor="none"))
        ax.annotate("reference plane", (x1, top + plane / 2), xytext=(-4, 0), textcoords="offset points",
                    ha="right", va="center", fontsize=FONT_PT, color="white")
    elif section.soldermask is not None:
        outline = section.mask_outline_mm((x0, x1))
        ax.add_patch(Polygon(np.vstack([outline, [[x1, top], [x0, top]]]), closed=True,
                             facecolor="#d5e3d6", edgecolor="#9fb8a2", linewidth=0.6))
        ax.annotate(f"soldermask εr {section.soldermask.er:g}, {section.soldermask.thickness_mm:.3g} mm",
                    (x0, outline[0, 1]), xytext=(4, 3), textcoords="offset points", ha="left", va="bottom",
                    fontsize=FONT_PT, color=palette.INK)
    if section.planes == "below":
        ax.annotate("air", (x1, y1), xytext=(-4, -4), textcoords="offset points", ha="right", va="top",
                    fontsize=FONT_PT, color="#6b6357")
    for i, c in enumerate(section.conductors):
        colour = ROLE_COLOUR.get(roles.get(i, ""), "#8c6a4a")
        v = c.vertices
        if c.is_strip:
            ax.plot(v[:, 0], v[:, 1], color=colour, linewidth=2.0, solid_capstyle="butt")
        else:
            ax.add_patch(Polygon(v, closed=True, facecolor=colour, edgecolor="none"))
        (cx0, cx1), (_, cy1) = c.x_range_mm, c.y_range_mm
        ax.annotate(labels[i] if i < len(labels) else f"trace {i}", ((cx0 + cx1) / 2, cy1), xytext=(0, 9),
                    textcoords="offset points", ha="center", va="bottom", fontsize=FONT_PT, fontweight="bold",
                    color=colour)
        ax.annotate(f"w {cx1 - cx0:.3g}", ((cx0 + cx1) / 2, c.y_range_mm[0]), xytext=(0, -3),
                    textcoords="offset points", ha="center", va="top", fontsize=FONT_PT - 0.5, color=palette.DIMENSION)
    ordered = sorted(section.conductors, key=lambda c: c.x_range_mm[0])
    for left, right in zip(ordered, ordered[1:]):
        y = max(left.y_range_mm[1], right.y_range_mm[1])
        _dimension(ax, (left.x_range_mm[1], y + 0.02 * top), (right.x_range_mm[0], y + 0.02 * top),
                   f"gap {right.x_range_mm[0] - left.x_range_mm[1]:.3g}", (0, 16))
    first = ordered[0]
    h = first.y_range_mm[0]
    hx = first.x_range_mm[0] - 0.05 * (x1 - x0)
    _dimension(ax, (hx, 0.0), (hx, h),
               f"h {h:.3g}", (-4, 0), ha="right")
    ax.set_xlabel("mm across the board (to scale)", fontsize=7.5)
    ax.set_ylabel("mm", fontsize=7.5)
    ax.tick_params(labelsize=6.5)
    for spine in ax.spines.values():
        spine.set_color("#b9b1a3")
    room_in = WIDTH_IN - 0.9
    fig.text(MARGIN_IN["left"] / WIDTH_IN, 1 - 0.22 / fig_h, fit_line(heading, room_in, 10), fontsize=10,
             color=palette.INK, ha="left", va="center")
    fig.text(MARGIN_IN["left"] / WIDTH_IN, 1 - 0.42 / fig_h, fit_line(detail, room_in, 7.5), fontsize=7.5,
             color="#6b6357", ha="left", va="center")
    return fig


def hotspot_section(result: ScanResult, board: Board, hotspot: Hotspot):
    """(section, heading, detail, labels, roles) for ``section_figure``: the finding's main layer with its worst
    stretch's trace widths at the run's smallest gap; None for broadside coupling or a layer without tables."""
    lookup, runs = result.lookup, result.runs
    if lookup is None or runs is None:
        return None
    p = runs.pieces
    row = int(runs.worst_piece[hotspot.run])
    env = lookup.envs.get(int(p.layer[row]))
    if env is None or p.layer[row] != p.layer_b[row]:
        return None
    victim_is_a = p.net_a[row] == board.net_id(hotspot.victim)
    victim_w, aggressor_w = (p.width_a_mm[row], p.width_b_mm[row]) if victim_is_a else (p.width_b_mm[row],
                                                                                       p.width_a_mm[row])
    section = traces_on_layer(widths_mm=[float(aggressor_w), float(victim_w)], spacings_mm=[hotspot.min_spacing_mm],
                              **section_arguments(env))
    layer = board.layers[int(p.layer[row])].name
    heading = f"#{hotspot.rank}  cross-section on {layer} ({env.structure}) at the worst stretch, to scale"
    detail = (f"{hotspot.aggressor} (aggressor) beside {hotspot.victim} (victim): gap {hotspot.min_spacing_mm:.3g} mm, "
              f"{env.height_mm:.3g} mm to the plane, copper {env.trace_thickness_mm:.3g} mm; the scan's own section")
    return section, heading, detail, [hotspot.aggressor, hotspot.victim], {0: "aggressor", 1: "victim"}
