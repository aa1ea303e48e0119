"""Report images: the files the command writes, markers where the findings are, copper at its true width."""
import json
import xml.etree.ElementTree as ET
from dataclasses import replace

import matplotlib.image
import numpy as np
import shapely
from click.testing import CliRunner

from scanner.board.model import CopperLayer, CopperShapes, TraceSegments
from scanner.cli import cli
from scanner.report import names, overlay, palette
from scanner.report.copper import draw_copper
from scanner.report.images import composite_figure, crop_figure, layer_figure, write_images
from scanner.report.marks import composite_marks, layer_marks, layers_with_findings, shown_findings
from scanner.report.page import write_page
from scanner.report.sectionplot import hotspot_section
from scanner.report.view import DETAIL_TOP, detail_hotspots, fix_first
from scanner.report.whatif import what_if


def rgb(hex_colour):
    return np.array([int(hex_colour[i:i + 2], 16) for i in (1, 3, 5)]) / 255


def pixels_of(fig):
    fig.canvas.draw()
    return np.asarray(fig.canvas.buffer_rgba())[..., :3] / 255


def colour_near(image, ax, x_mm, y_mm, colour, reach_px):
    """Whether some pixel within reach_px of the board point has the colour."""
    px, py = ax.transData.transform((x_mm, y_mm))
    row, col = image.shape[0] - py, px
    r0, c0 = int(max(row - reach_px, 0)), int(max(col - reach_px, 0))
    patch = image[r0:int(row + reach_px) + 1, c0:int(col + reach_px) + 1]
    return bool((np.abs(patch - rgb(colour)).max(axis=-1) < 0.04).any())


def expected_images(result, board):
    shown = shown_findings(result)
    stems = names.layer_stems([layer.name for layer in board.layers])
    expected = {f"{names.COMPOSITE_STEM}.{ext}" for ext in ("png", "svg")}
    expected |= {f"{stems[board.layers[k].name]}.{ext}" for k in layers_with_findings(result, shown)
                 for ext in ("png", "svg")}
    for h in detail_hotspots(result):
        expected |= {names.crop_file(h.rank), names.wave_file(h.rank)}
        expected |= {names.section_file(h.rank)} if hotspot_section(result, board, h) is not None else set()
        expected |= {names.whatif_file(h.rank)} if what_if(result, h) is not None else set()
    expected |= {names.BUDGET_FILE} if result.victims else set()
    expected |= {names.STACKUP_FILE} if result.stackup.get("layers") else set()
    return expected


def test_the_command_writes_every_image(report_dir, demo_scan):
    result, board = demo_scan
    expected = expected_images(result, board)
    written = {p.name for p in report_dir.iterdir() if p.suffix in (".png", ".svg")
               and not p.name.startswith("screenshot-")}
    assert written == expected
    for name in expected:
        if name.endswith(".png"):
            image = matplotlib.image.imread(report_dir / name)
            assert image.shape[0] > 250 and image.shape[1] > 600
        else:
            root = ET.parse(report_dir / name).getroot()
            assert root.tag.endswith("svg")
            assert "http" not in "".join(v for e in root.iter() for k, v in e.attrib.items() if "href" in k)


def test_svg_keeps_text_as_text_with_hover_titles(report_dir, demo_scan):
    result, _ = demo_scan
    svg = ET.parse(report_dir / f"{names.COMPOSITE_STEM}.svg").getroot()
    texts = " ".join("".join(e.itertext()) for e in svg.iter() if e.tag.endswith("}text"))
    titles = [e.text for e in svg.iter() if e.tag.endswith("}title")]
    assert "findings on all layers" in texts and "x (mm)" in texts  # searchable, not glyph paths
    first = result.hotspots[0]
    assert any(first.victim in t and first.aggressor in t and "% of budget" in t for t in titles)


def test_close_ups_go_to_distinct_runs(demo_scan):
    result, _ = demo_scan
    chosen = detail_hotspots(result)
    runs = {h.run for h in result.hotspots}
    assert len(chosen) == min(DETAIL_TOP, len(runs))
    assert len({h.run for h in chosen}) == len(chosen)
    # every failing victim's worst run comes first (the page links its row to that close-up)
    worst = [item.hotspot.run for item in fix_first(result) if item.hotspot is not None]
    assert [h.run for h in chosen][:len(set(worst))] == list(dict.fromkeys(worst))[:len(chosen)]


def test_close_up_names_the_nets_and_marks_gap_and_length(demo_scan):
    result, board = demo_scan
    h = next(h for h in detail_hotspots(result) if len(h.layers) > 1)  # the data bus changes layer
    fig = crop_figure(result, board, h).figure
    texts = [t.get_text() for t in fig.axes[0].texts] + [t.get_text() for t in fig.texts]
    assert f"{h.victim} (victim)" in texts and f"{h.aggressor} (aggressor)" in texts
    assert f"{h.coupled_length_mm:.4g} mm coupled" in texts
    assert f"gap {h.min_spacing_mm:.3g} mm" in texts
    assert any(" and ".join(h.layers) in t for t in texts)  # both layers of the run, named in the title
    # the run's pieces on its second layer are in the window and drawn in the victim colour (paler)
    ax = fig.axes[0]
    p = result.runs.pieces
    rows = result.runs.pieces_of(h.run)
    x0, x1 = ax.get_xlim()
    assert x0 <= min(p.x0_mm[rows].min(), p.x1_mm[rows].min()) and x1 >= max(p.x0_mm[rows].max(), p.x1_mm[rows].max())


def test_all_layer_map_shows_the_copper_dimmed(demo_scan):
    result, board = demo_scan
    fig = composite_figure(result, board, shown_findings(result)).figure
    image = pixels_of(fig)
    dimmed = (np.abs(image - rgb(palette.COPPER_DIM[0])).max(axis=-1) < 0.03).sum()
    assert dimmed > 2000


def test_no_images_flag_writes_only_the_tables(tmp_path, scan_args):
    out = tmp_path / "plain"
    CliRunner().invoke(cli, ["scan", *scan_args, "--out", str(out), "--no-images"])
    assert sorted(p.name for p in out.iterdir()) == ["hotspots.csv", "report.json"]


def test_every_finding_is_marked_where_it_is(demo_scan):
    result, board = demo_scan
    shown = shown_findings(result)
    fig = composite_figure(result, board, shown).figure
    image, ax = pixels_of(fig), fig.axes[0]
    reach = overlay.MARKER_RADIUS_PT * fig.dpi / 72 + 2
    for mark in composite_marks(result, board, shown):
        assert colour_near(image, ax, mark.x_mm, mark.y_mm, palette.STATUS_COLOUR[mark.status], reach)
    # the marked places are the findings' own coordinates
    placed = {(m.x_mm, m.y_mm) for m in composite_marks(result, board, shown)}
    assert all((f.x_mm, f.y_mm) in placed for f in shown)


def test_layer_overlay_marks_and_highlights_the_runs(demo_scan):
    result, board = demo_scan
    shown = shown_findings(result)
    layer = layers_with_findings(result, shown)[0]
    fig = layer_figure(result, board, shown, layer).figure
    image, ax = pixels_of(fig), fig.axes[0]
    marks = layer_marks(result, board, shown, layer)
    assert marks
    for mark in marks:
        assert colour_near(image, ax, mark.x_mm, mark.y_mm, palette.STATUS_COLOUR[mark.status], 8)
    assert (np.abs(image - rgb(palette.VICTIM)).max(axis=-1) < 0.04).sum() > 100
    assert (np.abs(image - rgb(palette.AGGRESSOR)).max(axis=-1) < 0.04).sum() > 100
    # labels do not cover each other
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    boxes = [t.get_bbox_patch().get_window_extent(renderer) for t in ax.texts if t.get_bbox_patch()]
    assert len(boxes) == len(marks)
    for i, a in enumerate(boxes):
        assert not any(a.overlaps(b) for b in boxes[i + 1:])


def test_traces_are_drawn_at_their_true_width():
    segments = TraceSegments([10.0], [20.0], [30.0], [20.0], [1.0], [0])
    layer = CopperLayer("L1", 0, "top", "signal", "test", None, segments, CopperShapes.empty())
    canvas = overlay.canvas_for((0.0, 0.0, 40.0, 40.0), (6.0, 6.0), (2.0, 2.0))
    draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm)
    image = pixels_of(canvas.figure)
    px, _ = canvas.ax.transData.transform((20.0, 20.0))
    column = image[:, int(px)]
    copper = np.flatnonzero(np.abs(column - rgb(palette.TRACE)).max(axis=-1) < 0.06)
    expected_px = 1.0 * canvas.points_per_mm * canvas.figure.dpi / 72
    assert abs(len(copper) - expected_px) <= 2


def test_pads_with_holes_are_drawn_as_rings():
    ring = shapely.Point(20, 20).buffer(5).difference(shapely.Point(20, 20).buffer(2))
    shapes = CopperShapes(np.array([ring], dtype=object), np.array([0]), np.array(["pad"], dtype=object))
    layer = CopperLayer("L1", 0, "top", "signal", "test", None, TraceSegments.empty(), shapes)
    canvas = overlay.canvas_for((0.0, 0.0, 40.0, 40.0), (6.0, 6.0), (2.0, 2.0))
    draw_copper(canvas.ax, layer, canvas.window, canvas.points_per_mm)
    image = pixels_of(canvas.figure)
    ax = canvas.ax
    assert colour_near(image, ax, 23.5, 20.0, palette.PAD, 1)
    assert not colour_near(image, ax, 20.0, 20.0, palette.PAD, 3)


def test_report_json_and_images_agree_on_ranks(report_dir, demo_scan):
    hotspots = {h["rank"]: h for h in json.loads((report_dir / "report.json").read_text())["hotspots"]}
    for h in detail_hotspots(demo_scan[0]):
        assert (report_dir / names.crop_file(h.rank)).is_file()
        worse = hotspots[h.rank]["directions"][0]  # one entry per run; the picture may show either direction
        assert {worse["victim"], worse["aggressor"]} == {h.victim, h.aggressor}


def test_a_board_without_findings_still_gets_its_map_and_page(demo_scan, tmp_path):
    result, board = demo_scan
    quiet = replace(result, hotspots=[], geometric=[])
    quiet = replace(quiet, victims=[])
    written = {p.name for p in write_images(quiet, board, tmp_path)}
    assert written == {f"{names.COMPOSITE_STEM}.png", f"{names.COMPOSITE_STEM}.svg", names.STACKUP_FILE}
    page = write_page(quiet, tmp_path, board).read_text(encoding="utf-8")
    assert f'src="{names.COMPOSITE_STEM}.png"' in page and "hotspot-" not in page
