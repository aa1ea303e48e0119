"""Write the report images: per-layer overlays, the all-layer overlay, hotspot crops and waveform plots.

Files (names from ``scanner.report.names``): ``overlay-<layer>.png/.svg`` for each
signal layer with findings shown, ``overlay-all.png/.svg``, and for the first
``top`` ranks ``hotspot-<rank>.png`` and ``wave-<rank>.png``. Which findings are
shown is decided in ``scanner.report.marks``. Every image names the run that drew it.
"""
from __future__ import annotations

import io
from pathlib import Path

import matplotlib
import numpy as np
import shapely
from matplotlib.collections import LineCollection
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle

from scanner.board.model import Board
from scanner.outputs import write_file
from scanner.report import names, overlay, palette
from scanner.report.copper import draw_copper, draw_outline, stroke_bounds
from scanner.report.marks import (Finding, Mark, RoleTraces, composite_marks, has_geometric, layer_marks, layer_roles,
                                  layers_with_findings, role_segments, run_rows_on, shown_findings)
from scanner.report.waveplot import finding_waveforms, wave_figure
from scanner.scoring.results import Hotspot, ScanResult

#: hotspots (by rank) that get a crop and a waveform plot
DETAIL_TOP = 10
OVERLAY_DPI = 150
DETAIL_DPI = 130
BOARD_VIEW_IN = ((11.0, 8.0), (5.0, 3.5))  # largest and smallest axes box (inches)
CROP_VIEW_IN = ((8.5, 5.5), (6.5, 3.2))
#: the worst piece is shaded this many points wider than its pair of traces
WORST_HALO_PT = 5.0


def run_metadata(result: ScanResult, fmt: str) -> dict:
    """What an image says about the run that drew it: the run id (SVG ``dc:identifier``, PNG text ``nearfar-run``)
    and the time."""
    if fmt == "svg":
        return {"Identifier": result.run_id, "Date": result.created}
    return {"nearfar-run": result.run_id, "Creation Time": result.created}


def _save(fig, path: Path, fmt: str, dpi: int, result: ScanResult) -> Path:
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.hashsalt": "nearfar", "svg.fonttype": "path"}):
        fig.savefig(buf, format=fmt, dpi=dpi, facecolor=fig.get_facecolor(), metadata=run_metadata(result, fmt),
                    **({} if fmt == "svg" else {"pil_kwargs": {"compress_level": 1}}))
    return write_file(path, buf.getvalue())


def board_bounds(board: Board) -> tuple[float, float, float, float]:
    """The outline's bounds, else the extent of all copper (mm)."""
    if board.outline is not None and not board.outline.is_empty:
        return tuple(float(v) for v in board.outline.bounds)
    every = np.concatenate([np.zeros((0, 4))] + [stroke_bounds(layer.segments) for layer in board.layers]
                           + [shapely.bounds(layer.shapes.geometry) for layer in board.layers if len(layer.shapes)])
    if not np.isfinite(every).any():
        return (0.0, 0.0, 1.0, 1.0)
    return (float(np.nanmin(every[:, 0])), float(np.nanmin(every[:, 1])),
            float(np.nanmax(every[:, 2])), float(np.nanmax(every[:, 3])))


def _board_canvas(board: Board) -> overlay.Canvas:
    canvas = overlay.canvas_for(overlay.padded(board_bounds(board), 0.05, 1.0), *BOARD_VIEW_IN)
    draw_outline(canvas.ax, board.outline)
    return canvas


def _finish(canvas: overlay.Canvas, marks: list[Mark], entries: list, heading: str, detail: str,
            shaped: bool = False) -> None:
    obstacles = overlay.scale_bar(canvas)
    overlay.draw_marks(canvas, marks, obstacles, shaped=shaped)
    overlay.legend(canvas, overlay.status_handles(marks) + entries)
    overlay.title(canvas, heading, detail)


def _geometric_note(marks: list[Mark]) -> str:
    return " (G: a broken geometric limit)" if has_geometric(marks) else ""


def _count(marks: list[Mark]) -> str:
    findings = sum(len(m.text.split(",")) for m in marks)
    return f"{findings} finding{'s' if findings != 1 else ''} at {len(marks)} place{'s' if len(marks) != 1 else ''}"


def layer_figure(result: ScanResult, board: Board, shown: list[Finding], layer_index: int):
    layer = board.layers[layer_index]
    canvas = _board_canvas(board)
    draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm)
    overlay.draw_roles(canvas, layer_roles(result, board, shown, layer_index))
    marks = layer_marks(result, board, shown, layer_index)
    entries = overlay.role_handles() + overlay.copper_handles(board.outline is not None)
    _finish(canvas, marks, entries, f"{board.name} — layer {layer.name} ({layer.side}, seen from the top)",
            f"{_count(marks)}; labels give the rank in the report table" + _geometric_note(marks))
    return canvas.figure


def composite_figure(result: ScanResult, board: Board, shown: list[Finding]):
    canvas = _board_canvas(board)
    entries = []
    if board.outline is None:
        x0, y0, x1, y1 = board_bounds(board)
        canvas.ax.add_patch(Rectangle((x0, y0), x1 - x0, y1 - y0, fill=False, edgecolor=palette.BOARD_EDGE,
                                      linestyle=(0, (4, 3)), linewidth=0.8))
        entries.append((Line2D([], [], color=palette.BOARD_EDGE, linestyle=(0, (4, 3))),
                        "extent of the copper (no outline in the files)"))
    else:
        entries.append((Line2D([], [], color=palette.BOARD_EDGE), "board outline"))
    marks = composite_marks(result, board, shown)
    entries = overlay.side_handles(m.side for m in marks) + entries
    _finish(canvas, marks, entries, f"{board.name} — findings on all layers (seen from the top)",
            f"{_count(marks)}, each at its worst stretch on its main layer", shaped=True)
    return canvas.figure


def crop_figure(result: ScanResult, board: Board, hotspot: Hotspot):
    """A zoomed view of one finding's run on its main layer; its pieces on other layers dotted."""
    main = int(result.runs.main_layer[hotspot.run])
    p = result.runs.pieces
    rows = run_rows_on(result, hotspot.run, main)
    bounds = (min(p.x0_mm[rows].min(), p.x1_mm[rows].min()), min(p.y0_mm[rows].min(), p.y1_mm[rows].min()),
              max(p.x0_mm[rows].max(), p.x1_mm[rows].max()), max(p.y0_mm[rows].max(), p.y1_mm[rows].max()))
    canvas = overlay.canvas_for(overlay.padded(bounds, 0.12, 1.5), *CROP_VIEW_IN)
    draw_outline(canvas.ax, board.outline)
    layer = board.layers[main]
    draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm)
    victim, aggressor = role_segments(result, board, hotspot, main)
    overlay.draw_roles(canvas, RoleTraces(layer.segments.select(victim), layer.segments.select(aggressor)))
    entries = overlay.role_handles() + overlay.copper_handles(board.outline is not None)
    others = [k for k in result.runs.layers_of(hotspot.run) if k != main]
    for k in others:
        v, a = role_segments(result, board, hotspot, k)
        for idx, colour in ((a, palette.AGGRESSOR), (v, palette.VICTIM)):
            s = board.layers[k].segments.select(idx)
            canvas.ax.add_collection(LineCollection(
                np.stack([np.column_stack([s.x0, s.y0]), np.column_stack([s.x1, s.y1])], axis=1),
                colors=colour, linewidths=1.1, linestyles=(0, (1, 2)), zorder=overlay.Z_HIGHLIGHT))
    if others:
        entries.append((Line2D([], [], color=palette.INK, linewidth=1.1, linestyle=(0, (1, 2))),
                        "run on " + ", ".join(board.layers[k].name for k in others)))
    x0, y0, x1, y1 = hotspot.extent_mm
    halo = float((p.width_a_mm[rows] + p.width_b_mm[rows] + p.spacing_mean_mm[rows]).max()) * canvas.points_per_mm \
        + WORST_HALO_PT
    colour = palette.STATUS_COLOUR[hotspot.status]
    canvas.ax.plot([x0, x1], [y0, y1], color=colour, alpha=0.28, linewidth=halo, solid_capstyle="butt",
                   zorder=overlay.Z_WORST)
    entries.append((Line2D([], [], color=colour, alpha=0.28, linewidth=6), "worst stretch"))
    mark = Mark(hotspot.x_mm, hotspot.y_mm, str(hotspot.rank), hotspot.status, hotspot.rank, layer.side)
    _finish(canvas, [mark], entries, f"#{hotspot.rank}  {hotspot.victim} (victim) ← {hotspot.aggressor} "
            f"(aggressor) on {layer.name}",
            f"{board.name}: {hotspot.coupled_length_mm:.4g} mm coupled, ≥ {hotspot.min_spacing_mm:.3g} mm apart; "
            f"NEXT {hotspot.next_mv:.4g} mV, FEXT {hotspot.fext_mv:.4g} mV; {100 * hotspot.budget_used:.0f} % of budget")
    return canvas.figure


def write_images(result: ScanResult, board: Board, out_dir: str | Path, top: int = DETAIL_TOP) -> list[Path]:
    """Write every image of the report into ``out_dir``; returns the paths written."""
    out_dir = Path(out_dir)
    shown = shown_findings(result)
    stems = names.layer_stems([layer.name for layer in board.layers])
    written = []
    overlays = [(stems[board.layers[k].name], lambda k=k: layer_figure(result, board, shown, k))
                for k in layers_with_findings(result, shown)]
    overlays.append((names.COMPOSITE_STEM, lambda: composite_figure(result, board, shown)))
    for stem, make in overlays:
        fig = make()
        written += [_save(fig, out_dir / f"{stem}.{fmt}", fmt, OVERLAY_DPI, result) for fmt in ("png", "svg")]
    for hotspot in result.hotspots[:top]:
        written.append(_save(crop_figure(result, board, hotspot), out_dir / names.crop_file(hotspot.rank), "png",
                             DETAIL_DPI, result))
        waves = finding_waveforms(result, board, hotspot)
        written.append(_save(wave_figure(waves, hotspot), out_dir / names.wave_file(hotspot.rank), "png", DETAIL_DPI,
                             result))
    return written
