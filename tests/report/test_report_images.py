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
from scanner.report.images import DETAIL_TOP, composite_figure, layer_figure, write_images
from scanner.report.page import write_page
from scanner.report.marks import composite_marks, layer_marks, layers_with_findings, shown_findings


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


def test_the_command_writes_every_image(report_dir, demo_scan):
    result, board = demo_scan
    shown = shown_findings(result)
    stems = names.layer_stems([layer.name for layer in board.layers])
    expected = {f"{names.COMPOSITE_STEM}.{ext}" for ext in ("png", "svg")}
    expected |= {f"{stems[board.layers[k].name]}.{ext}" for k in layers_with_findings(result, shown)
                 for ext in ("png", "svg")}
    for h in result.hotspots[:DETAIL_TOP]:
        expected |= {names.crop_file(h.rank), names.wave_file(h.rank)}
    written = {p.name for p in report_dir.iterdir() if p.suffix in (".png", ".svg")}
    assert written == expected
    for name in expected:
        if name.endswith(".png"):
            image = matplotlib.image.imread(report_dir / name)
            assert image.shape[0] > 300 and image.shape[1] > 600
        else:
            root = ET.parse(report_dir / name).getroot()
            assert root.tag.endswith("svg")
            assert "http" not in "".join(v for e in root.iter() for k, v in e.attrib.items() if "href" in k)


def test_no_images_flag_writes_only_the_tables(tmp_path, scan_args):
    out = tmp_path / "plain"
    CliRunner().invoke(cli, ["scan", *scan_args, "--out", str(out), "--no-images"])
    assert sorted(p.name for p in out.iterdir()) == ["hotspots.csv", "report.json"]


def test_every_finding_is_marked_where_it_is(demo_scan):
    result, board = demo_scan
    shown = shown_findings(result)
    fig = composite_figure(result, board, shown)
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
    fig = layer_figure(result, board, shown, layer)
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


def test_report_json_and_images_agree_on_ranks(report_dir):
    hotspots = json.loads((report_dir / "report.json").read_text())["hotspots"]
    for h in hotspots[:DETAIL_TOP]:
        assert (report_dir / names.crop_file(h["rank"])).is_file()


def test_a_board_without_findings_still_gets_its_map_and_page(demo_scan, tmp_path):
    result, board = demo_scan
    quiet = replace(result, hotspots=[], geometric=[])
    written = {p.name for p in write_images(quiet, board, tmp_path)}
    assert written == {f"{names.COMPOSITE_STEM}.png", f"{names.COMPOSITE_STEM}.svg"}
    page = write_page(quiet, tmp_path).read_text(encoding="utf-8")
    assert f'src="{names.COMPOSITE_STEM}.png"' in page and "hotspot-" not in page
