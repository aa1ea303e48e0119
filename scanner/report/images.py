"""Write the report images: overlays, close-ups of the top runs and the plots that go with them.

Files (names from ``scanner.report.names``): ``overlay-<layer>.png/.svg`` for each
signal layer with findings shown, ``overlay-all.png/.svg``; for up to ``top``
distinct coupled runs (``scanner.report.view.detail_hotspots``), named by the rank
of the finding shown, ``hotspot-<rank>.png``, ``wave-<rank>.png``,
``section-<rank>.png`` and ``whatif-<rank>.png``; ``budget-used.png`` and
``stackup.png``. Which findings the overlays mark is decided in
``scanner.report.marks``. Every image names the run that drew it (``run_metadata``).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle

from scanner.board.model import Board
from scanner.report import dimensions, names, overlay, palette
from scanner.report.copper import board_bounds, draw_copper, draw_outline
from scanner.report.budgetplot import budget_figure
from scanner.report.figsave import Picture, save
from scanner.report.marks import (Finding, Mark, RoleTraces, composite_marks, has_geometric, hotspot_title,
                                  layer_marks, layer_roles, layers_with_findings, role_segments, run_rows_on,
                                  shown_findings)
from scanner.report.sectionplot import hotspot_section, section_figure
from scanner.report.stackplot import stackup_figure
from scanner.report.view import DETAIL_TOP, detail_hotspots, victims_by_use
from scanner.report.waveplot import finding_waveforms, wave_figure
from scanner.report.whatif import what_if, what_if_figure
from scanner.scoring.results import Hotspot, ScanResult

OVERLAY_DPI = 150
DETAIL_DPI = 110
BOARD_VIEW_IN = ((11.0, 8.0), (5.0, 3.5))  # largest and smallest axes box (inches)
CROP_VIEW_IN = ((8.5, 5.5), (6.5, 3.2))
#: the worst piece is shaded this many points wider than its pair of traces
WORST_HALO_PT = 5.0
#: a run's traces on the layers other than its main one are drawn this opaque
OTHER_LAYER_ALPHA = 0.5


def run_metadata(result: ScanResult, fmt: str) -> dict:
    """What an image says about the run that drew it: the run id (SVG ``dc:identifier``, PNG text ``nearfar-run``)
    and the time."""
    if fmt == "svg":
        return {"Identifier": result.run_id, "Date": result.created}
    return {"nearfar-run": result.run_id, "Creation Time": result.created}


def _board_canvas(board: Board) -> overlay.Canvas:
    canvas = overlay.canvas_for(overlay.padded(board_bounds(board), 0.05, 1.0), *BOARD_VIEW_IN)
    draw_outline(canvas.ax, board.outline)
    return canvas


def _finish(canvas: overlay.Canvas, marks: list[Mark], entries: list, heading: str, detail: str,
            shaped: bool = False) -> dict[str, str]:
    obstacles = overlay.scale_bar(canvas)
    titles = overlay.draw_marks(canvas, marks, obstacles, shaped=shaped)
    overlay.legend(canvas, overlay.status_handles(marks) + entries)
    overlay.title(canvas, heading, detail)
    return titles


def _geometric_note(marks: list[Mark]) -> str:
    return " (G: a broken geometric limit)" if has_geometric(marks) else ""


def _count(marks: list[Mark]) -> str:
    findings = sum(len(m.text.split(",")) for m in marks)
    return f"{findings} finding{'s' if findings != 1 else ''} at {len(marks)} place{'s' if len(marks) != 1 else ''}"


def layer_figure(result: ScanResult, board: Board, shown: list[Finding], layer_index: int) -> Picture:
    layer = board.layers[layer_index]
    canvas = _board_canvas(board)
    draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm)
    overlay.draw_roles(canvas, layer_roles(result, board, shown, layer_index))
    marks = layer_marks(result, board, shown, layer_index)
    entries = overlay.role_handles() + overlay.copper_handles(board.outline is not None)
    titles = _finish(canvas, marks, entries, f"{board.name} — layer {layer.name} ({layer.side}, seen from the top)",
                     f"{_count(marks)}; labels give the rank in the report table" + _geometric_note(marks))
    return Picture(canvas.figure, titles)


def composite_figure(result: ScanResult, board: Board, shown: list[Finding]) -> Picture:
    """Every signal layer's copper, dimmed, under one marker per run."""
    canvas = _board_canvas(board)
    for layer in board.signal_layers:
        draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm, palette.COPPER_DIM)
    entries = [(Patch(facecolor=palette.COPPER_DIM[1], edgecolor="none"), "copper of all signal layers")]
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
    titles = _finish(canvas, marks, entries, f"{board.name} — findings on all layers (seen from the top)",
                     f"{_count(marks)}, each at its worst stretch on its main layer", shaped=True)
    return Picture(canvas.figure, titles)


def _victim_side(result: ScanResult, board: Board, hotspot: Hotspot, row: int, normal: np.ndarray) -> float:
    """+1 when the victim's trace lies on the normal's side of the piece's centre line, else -1."""
    p = result.runs.pieces
    victim_is_a = p.net_a[row] == board.net_id(hotspot.victim)
    segments = board.layers[int(p.layer[row] if victim_is_a else p.layer_b[row])].segments
    k = int(p.seg_a[row] if victim_is_a else p.seg_b[row])
    middle = np.array([segments.x0[k] + segments.x1[k], segments.y0[k] + segments.y1[k]]) / 2
    centre = np.array([p.x0_mm[row] + p.x1_mm[row], p.y0_mm[row] + p.y1_mm[row]]) / 2
    return 1.0 if float((middle - centre) @ normal) >= 0 else -1.0


def _annotate_run(canvas: overlay.Canvas, result: ScanResult, board: Board, hotspot: Hotspot, rows: np.ndarray) -> None:
    """Net names at the worst stretch, the gap across it and the coupled length beside the run."""
    p = result.runs.pieces
    row = int(result.runs.worst_piece[hotspot.run])
    start = np.array([p.x0_mm[row], p.y0_mm[row]])
    end = np.array([p.x1_mm[row], p.y1_mm[row]])
    direction = (end - start) / max(float(np.hypot(*(end - start))), 1e-9)
    normal = np.array([-direction[1], direction[0]])
    side = _victim_side(result, board, hotspot, row, normal)
    widths = float(max(p.width_a_mm[row], p.width_b_mm[row]))
    at = start + 0.2 * (end - start)
    dimensions.net_label(canvas, at + side * (p.spacing_mean_mm[row] + widths) / 2 * normal, normal, side,
                         f"{hotspot.victim} (victim)", palette.VICTIM)
    dimensions.net_label(canvas, at - side * (p.spacing_mean_mm[row] + widths) / 2 * normal, normal, -side,
                         f"{hotspot.aggressor} (aggressor)", palette.AGGRESSOR)
    reach = p.spacing_min_mm[row] / 2 + widths + 3.0 / canvas.points_per_mm
    dimensions.gap_mark(canvas, start + 0.72 * (end - start), normal, reach, hotspot.min_spacing_mm, side)
    ends = np.column_stack([np.concatenate([p.x0_mm[rows], p.x1_mm[rows]]),
                            np.concatenate([p.y0_mm[rows], p.y1_mm[rows]])])
    dimensions.length_mark(canvas, ends, direction, widths + float(p.spacing_mean_mm[rows].max()),
                           hotspot.coupled_length_mm, -side)


def crop_figure(result: ScanResult, board: Board, hotspot: Hotspot) -> Picture:
    """A zoomed view of one finding's whole run: its main layer's copper, the run's traces on every layer it
    uses (paler off the main layer), net names, the gap and the coupled length."""
    runs = result.runs
    main = int(runs.main_layer[hotspot.run])
    p = runs.pieces
    rows = runs.pieces_of(hotspot.run)
    bounds = (min(p.x0_mm[rows].min(), p.x1_mm[rows].min()), min(p.y0_mm[rows].min(), p.y1_mm[rows].min()),
              max(p.x0_mm[rows].max(), p.x1_mm[rows].max()), max(p.y0_mm[rows].max(), p.y1_mm[rows].max()))
    canvas = overlay.canvas_for(overlay.padded(bounds, 0.12, 2.5), *CROP_VIEW_IN)
    draw_outline(canvas.ax, board.outline)
    others = [k for k in runs.layers_of(hotspot.run) if k != main]
    for k in others:
        draw_copper(canvas.ax, board.layers[k], canvas.window, canvas.points_per_mm, palette.COPPER_DIM)
    layer = board.layers[main]
    draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm)
    victim, aggressor = role_segments(result, board, hotspot, main)
    overlay.draw_roles(canvas, RoleTraces(layer.segments.select(victim), layer.segments.select(aggressor)))
    entries = overlay.role_handles() + overlay.copper_handles(board.outline is not None)
    for k in others:
        v, a = role_segments(result, board, hotspot, k)
        segments = board.layers[k].segments
        overlay.draw_roles(canvas, RoleTraces(segments.select(v), segments.select(a)), alpha=OTHER_LAYER_ALPHA)
    if others:
        names_other = ", ".join(board.layers[k].name for k in others)
        entries.append(((Line2D([], [], color=palette.VICTIM, linewidth=4, alpha=OTHER_LAYER_ALPHA),
                         Line2D([], [], color=palette.AGGRESSOR, linewidth=2, alpha=OTHER_LAYER_ALPHA)),
                        f"the run on {names_other} (paler, copper there dimmed)"))
    x0, y0, x1, y1 = hotspot.extent_mm
    on_main = run_rows_on(result, hotspot.run, main)
    halo = float((p.width_a_mm[on_main] + p.width_b_mm[on_main] + p.spacing_mean_mm[on_main]).max()) \
        * canvas.points_per_mm + WORST_HALO_PT
    colour = palette.STATUS_COLOUR[hotspot.status]
    canvas.ax.plot([x0, x1], [y0, y1], color=colour, alpha=0.28, linewidth=halo, solid_capstyle="butt",
                   zorder=overlay.Z_WORST)
    entries.append((Line2D([], [], color=colour, alpha=0.28, linewidth=6), "worst stretch"))
    entries.append((Line2D([], [], color=palette.DIMENSION, linewidth=0.9), "gap and coupled length"))
    _annotate_run(canvas, result, board, hotspot, rows)
    mark = Mark(hotspot.x_mm, hotspot.y_mm, str(hotspot.rank), hotspot.status, hotspot.rank, layer.side,
                hotspot_title(hotspot))
    layer_names = " and ".join([layer.name] + [board.layers[k].name for k in others])
    titles = _finish(canvas, [mark], entries, f"#{hotspot.rank}  {hotspot.victim} (victim) ← {hotspot.aggressor} "
                     f"(aggressor) on {layer_names}",
                     f"{board.name}: {hotspot.coupled_length_mm:.4g} mm coupled, ≥ {hotspot.min_spacing_mm:.3g} mm "
                     f"apart; NEXT {hotspot.next_mv:.4g} mV, FEXT {hotspot.fext_mv:.4g} mV; "
                     f"{hotspot.budget_used_pct:.0f} % of budget")
    return Picture(canvas.figure, titles)


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
        picture = make()
        written += [save(picture, out_dir / f"{stem}.{fmt}", OVERLAY_DPI, run_metadata(result, fmt))
                    for fmt in ("png", "svg")]
    png = run_metadata(result, "png")
    for hotspot in detail_hotspots(result, top):
        written.append(save(crop_figure(result, board, hotspot), out_dir / names.crop_file(hotspot.rank), DETAIL_DPI,
                            png))
        waves = finding_waveforms(result, board, hotspot)
        written.append(save(wave_figure(waves, hotspot), out_dir / names.wave_file(hotspot.rank), DETAIL_DPI, png))
        section = hotspot_section(result, board, hotspot)
        if section is not None:
            written.append(save(section_figure(*section), out_dir / names.section_file(hotspot.rank), DETAIL_DPI,
                                png))
        sweeps = what_if(result, hotspot)
        if sweeps is not None:
            written.append(save(what_if_figure(sweeps, hotspot), out_dir / names.whatif_file(hotspot.rank),
                                DETAIL_DPI, png))
    if result.victims:
        bars = budget_figure(victims_by_use(result), result.settings.get("budget_basis", "worst-case"))
        written.append(save(bars, out_dir / names.BUDGET_FILE, DETAIL_DPI, png))
    if result.stackup.get("layers"):
        written.append(save(stackup_figure(result), out_dir / names.STACKUP_FILE, DETAIL_DPI, png))
    return written
