"""ODB++ features files: units, standard symbols, lines, arcs, pads, surfaces and polarity.

Format facts (record layouts, symbol names, microns/mils for symbol sizes, ``Y`` for a
clockwise arc) are from memory of the ODB++ Design Format Specification. Geometric
reference values are elementary formulas, named beside each check.
"""
import math

import numpy as np
import pytest
import shapely

from scanner.board.model import ARC_CHORD_TOLERANCE_MM
from scanner.errors import InputError
from scanner.importers.apertures import QUAD_SEGS
from scanner.importers.odbpp.copper import layer_artwork
from scanner.importers.odbpp.features import parse_features
from scanner.importers.odbpp.symbols import placed, standard_symbol
from scanner.importers.odbpp.text import JobFile
from scanner.units import MM_PER_INCH, MM_PER_MIL

#: a circle drawn with QUAD_SEGS segments per quarter is an inscribed polygon of this area ratio
#: (n-gon area (n/2) r^2 sin(2 pi/n) over pi r^2, elementary geometry)
N_GON = 4 * QUAD_SEGS
POLYGON_AREA_RATIO = N_GON / (2 * math.pi) * math.sin(2 * math.pi / N_GON)


def _standard(name, size_mm=0.001):
    return standard_symbol(name, size_mm)


def _features(tmp_path, text, units=None, keep_attributes=False):
    path = tmp_path / "features"
    path.write_text(text)

    def resolve(name, size_mm, src, line):
        symbol = standard_symbol(name, size_mm)
        if symbol is None:
            raise InputError(f"unknown symbol {name}", path=src.name, line=line)
        return symbol

    return parse_features(JobFile(path, "job/features"), units, resolve, keep_attributes=keep_attributes)


def _artwork(table):
    return layer_artwork(table, np.full(table.count, None, dtype=object), np.zeros(table.count, dtype=bool))


# ------------------------------------------------------------ units and symbol sizes

def test_metric_symbol_sizes_are_microns(tmp_path):
    art = _artwork(_features(tmp_path, "UNITS=MM\n$0 r150\nL 1 2 11 2 0 P 0\n"))
    # ODB++ (from memory): metric jobs give standard symbol sizes in microns
    assert art.width.tolist() == pytest.approx([0.150])
    assert (art.x0[0], art.y0[0], art.x1[0], art.y1[0]) == (1, 2, 11, 2)


def test_inch_jobs_use_inches_and_mils(tmp_path):
    art = _artwork(_features(tmp_path, "U INCH\n$0 r6\nL 1 2 1.5 2 0 P 0\n"))
    # ODB++ (from memory): inch jobs give coordinates in inches and symbol sizes in mils
    assert art.width.tolist() == pytest.approx([6 * MM_PER_MIL])
    assert art.x1[0] == pytest.approx(1.5 * MM_PER_INCH)


def test_symbol_unit_flag_overrides_file_units(tmp_path):
    art = _artwork(_features(tmp_path, "UNITS=MM\n$0 r6 I\n$1 r150 M\nL 0 0 1 0 0 P 0\nL 0 1 1 1 1 P 0\n"))
    assert art.width.tolist() == pytest.approx([6 * MM_PER_MIL, 0.150])


def test_units_from_job_when_file_has_none(tmp_path):
    art = _artwork(_features(tmp_path, "$0 r6\nL 0 0 1 0 0 P 0\n", units="INCH"))
    assert art.width.tolist() == pytest.approx([6 * MM_PER_MIL])


@pytest.mark.parametrize("text, line", [("UNITS=CM\n", 1), ("# header\nU FEET\n", 2)])
def test_unknown_units_name_file_and_line(tmp_path, text, line):
    with pytest.raises(InputError, match="unknown units") as info:
        _features(tmp_path, text)
    assert (info.value.path, info.value.line) == ("job/features", line)


def test_no_units_anywhere_is_an_error(tmp_path):
    with pytest.raises(InputError, match="no UNITS"):
        _features(tmp_path, "$0 r6\nL 0 0 1 0 0 P 0\n")


# ------------------------------------------------------------ records and their errors

def test_undefined_symbol_names_its_line(tmp_path):
    with pytest.raises(InputError, match=r"symbol \$3") as info:
        _features(tmp_path, "UNITS=MM\n$0 r100\nL 0 0 1 0 0 P 0\nL 0 1 1 1 3 P 0\n")
    assert info.value.line == 4


@pytest.mark.parametrize("text, line, message", [
    ("UNITS=MM\n$0 r100\nL 0 0 x 0 0 P 0\n", 3, "coordinate"),
    ("UNITS=MM\n$0 r100\nL 0 0 1 0 0 Q 0\n", 3, "polarity"),
    ("UNITS=MM\n$0 r100\nA 0 0 1 1 0 1 0 P 0\n", 3, "arc direction"),
    ("UNITS=MM\n$0 r100\nL 0 0 1\n", 3, "too few fields"),
    ("UNITS=MM\nS P 0\nOB 0 0 I\nOS 1 0\nOS 1 1\n", 5, "opened at line 3 is not closed"),
    ("UNITS=MM\nF 3\n$0 r100\nL 0 0 1 0 0 P 0\n", 4, "after 1 of the 3 features"),
    ("UNITS=MM\nS P 0\nOS 1 1\n", 3, "outside a contour"),
    ("UNITS=MM\nS P 0\nL 0 0 1 0 0 P 0\n", 3, "inside a surface"),
])
def test_malformed_records(tmp_path, text, line, message):
    with pytest.raises(InputError, match=message) as info:
        _features(tmp_path, text)
    assert (info.value.path, info.value.line) == ("job/features", line)


def test_unknown_record_is_skipped_with_a_warning(tmp_path):
    table = _features(tmp_path, "UNITS=MM\nZZ 1 1\n")
    assert table.count == 0
    assert "line 2: record 'ZZ' not understood" in table.log.summary()


def test_features_are_numbered_in_file_order_including_text(tmp_path):
    table = _features(tmp_path, "UNITS=MM\n$0 r100\nL 0 0 1 0 0 P 0\nT 1 1 standard P 0 1 1 1 'X' 1\n"
                                "S P 0\nOB 0 0 I\nOS 1 0\nOS 1 1\nOE\nSE\nP 5 5 0 N 0 0\n")
    assert table.count == 4
    assert table.lines["feature"].tolist() == [0]
    assert [f for f, _ in table.surfaces] == [2]
    assert table.pads["feature"].tolist() == [3]
    assert table.positive.tolist() == [True, True, True, False]
    assert "text feature not drawn" in table.log.summary()


def test_attributes_after_semicolon(tmp_path):
    table = _features(tmp_path, "UNITS=MM\n$0 r100\n@0 .smd\n@1 .drill\nP 1 1 0 P 0 0;0,1=2\nP 2 2 0 P 0 0\n",
                      keep_attributes=True)
    assert table.attribute(0, ".smd") == "" and table.attribute(0, ".drill") == "2"
    assert table.attribute(1, ".drill") is None


# ------------------------------------------------------------ lines and arcs

def test_zero_length_line_is_a_pad(tmp_path):
    art = _artwork(_features(tmp_path, "UNITS=MM\n$0 r500\nL 3 4 3 4 0 P 0\nL 0 0 2 0 0 P 0\n"))
    assert len(art.x0) == 1
    assert art.role.tolist() == ["pad"]
    # area of a disc, pi d^2 / 4, drawn as an inscribed polygon
    assert art.geometry[0].area == pytest.approx(math.pi * 0.25 ** 2 * POLYGON_AREA_RATIO, rel=1e-9)
    assert art.geometry[0].centroid.coords[0] == pytest.approx((3, 4))


def test_square_symbol_line_width_is_its_extent_across_the_draw(tmp_path):
    table = _features(tmp_path, "UNITS=MM\n$0 s200\nL 0 0 10 0 0 P 0\nL 0 0 10 10 0 P 0\n")
    art = _artwork(table)
    # a square of side s swept along its side is s wide, along its diagonal s*sqrt(2) (elementary geometry)
    assert art.width.tolist() == pytest.approx([0.2, 0.2 * math.sqrt(2)])
    assert "non-round symbol" in table.log.summary()


@pytest.mark.parametrize("flag, mid_sign", [("N", 1), ("Y", -1)])
def test_arc_flattened_within_chord_tolerance(tmp_path, flag, mid_sign):
    # quarter turn from (5,0) to (0,5) about the origin: counter-clockwise (N) stays in the first quadrant,
    # clockwise (Y) goes the long way round through the third
    art = _artwork(_features(tmp_path, f"UNITS=MM\n$0 r100\nA 5 0 0 5 0 0 0 P 0 {flag}\n"))
    x0, y0, x1, y1 = art.x0, art.y0, art.x1, art.y1
    assert (x0[0], y0[0]) == pytest.approx((5, 0)) and (x1[-1], y1[-1]) == pytest.approx((0, 5))
    assert np.allclose(np.hypot(x0, y0), 5.0) and np.allclose(np.hypot(x1, y1), 5.0)
    chord = np.hypot(x1 - x0, y1 - y0)
    # sagitta of a chord c in a circle of radius r: s = r - sqrt(r^2 - (c/2)^2) (elementary geometry)
    sagitta = 5.0 - np.sqrt(25.0 - (chord / 2) ** 2)
    assert sagitta.max() <= ARC_CHORD_TOLERANCE_MM * (1 + 1e-9)
    sweep = math.pi / 2 if flag == "N" else 3 * math.pi / 2
    n = len(chord)
    # n equal chords spanning a sweep theta: total n * 2 r sin(theta / 2n) (elementary geometry)
    assert chord.sum() == pytest.approx(n * 2 * 5.0 * math.sin(sweep / (2 * n)), rel=1e-9)
    mx, my = (x0 + x1) / 2, (y0 + y1) / 2
    assert np.sign(mx[len(mx) // 2] + my[len(my) // 2]) == mid_sign


def test_full_circle_arc(tmp_path):
    art = _artwork(_features(tmp_path, "UNITS=MM\n$0 r100\nA 2 0 2 0 0 0 0 P 0 Y\n"))
    chord = np.hypot(art.x1 - art.x0, art.y1 - art.y0)
    n = len(chord)
    assert chord.sum() == pytest.approx(n * 2 * 2.0 * math.sin(2 * math.pi / (2 * n)), rel=1e-9)  # n-gon perimeter


# ------------------------------------------------------------ pads

def test_pad_orientations(tmp_path):
    text = ("UNITS=MM\n$0 rect1000x400\n"
            "P 0 0 0 P 0 0\nP 0 0 0 P 0 1\nP 0 0 0 P 0 8 30\nP 0 0 0 P 0 9 30\n")
    art = _artwork(_features(tmp_path, text))
    b = [g.bounds for g in art.geometry]
    assert b[0] == pytest.approx((-0.5, -0.2, 0.5, 0.2))
    assert b[1] == pytest.approx((-0.2, -0.5, 0.2, 0.5))  # 90 degrees
    # corner (0.5, 0.2) turned clockwise by 30 degrees: (x cos a + y sin a, -x sin a + y cos a)
    a = math.radians(30)
    corner = (0.5 * math.cos(a) + 0.2 * math.sin(a), -0.5 * math.sin(a) + 0.2 * math.cos(a))
    coords = shapely.get_coordinates(art.geometry[2])
    assert np.min(np.hypot(coords[:, 0] - corner[0], coords[:, 1] - corner[1])) < 1e-9
    mirrored = shapely.get_coordinates(art.geometry[3])  # mirrored in x first, then turned
    mirror_corner = (-0.5 * math.cos(a) + 0.2 * math.sin(a), 0.5 * math.sin(a) + 0.2 * math.cos(a))
    assert np.min(np.hypot(mirrored[:, 0] - mirror_corner[0], mirrored[:, 1] - mirror_corner[1])) < 1e-9


def test_resized_pad_symbol(tmp_path):
    table = _features(tmp_path, "UNITS=MM\n$0 s1000\nP 1 1 -1 0 2 P 0 0\n")
    assert _artwork(table).geometry[0].area == pytest.approx(4.0)
    assert "resized symbol" in table.log.summary()


# ------------------------------------------------------------ standard symbols against their areas

@pytest.mark.parametrize("name, area_mm2, rel", [
    ("r1000", math.pi / 4 * POLYGON_AREA_RATIO, 1e-9),                 # disc pi d^2/4
    ("s1000", 1.0, 1e-12),
    ("rect2000x1000", 2.0, 1e-12),
    ("rect2000x1000xr200", 2.0 - (4 - math.pi) * 0.04, 2e-3),       # rounded corners: wh - (4 - pi) r^2
    ("rect2000x1000xc200", 2.0 - 2 * 0.04, 1e-12),                  # chamfers: wh - 4 * r^2/2
    ("rect2000x1000xc200x13", 2.0 - 0.04, 1e-12),                   # two corners chamfered
    ("oval2000x1000", math.pi * 0.25 + 1.0 * 1.0, 1e-2),            # stadium: pi r^2 + 2 r L
    ("di2000x1000", 1.0, 1e-12),                                    # rhombus: w h / 2
    ("oct2000x1000x200", 2.0 - 2 * 0.04, 1e-12),                    # octagon: wh - 4 * r^2/2
    ("el2000x1000", math.pi * 0.5, 2e-3),                           # ellipse: pi a b
    ("donut_r1000x600", math.pi / 4 * (1.0 - 0.36), 1e-2),          # annulus: pi (D^2 - d^2) / 4
    ("donut_s1000x600", 1.0 - 0.36, 1e-12),
    ("hex_l2000x1000x300", 2.0 - 0.3 * 1.0, 1e-12),                 # wh - r h (four corner triangles)
    ("hex_s1000x2000x300", 2.0 - 0.3 * 1.0, 1e-12),
    ("tri1000x2000", 1.0, 1e-12),                                   # triangle: b h / 2
    ("thr1000x600x45x4x100", math.pi / 4 * 0.64 - 4 * 0.1 * 0.2, 3e-2),  # annulus less 4 spoke gaps
])
def test_standard_symbol_areas(name, area_mm2, rel):
    symbol = _standard(name)
    assert symbol is not None and not symbol.approximate
    assert symbol.outline.area == pytest.approx(area_mm2, rel=rel)
    x0, y0, x1, y1 = symbol.outline.bounds
    assert ((x0 + x1) / 2, (y0 + y1) / 2) == pytest.approx((0, 0), abs=1e-9)  # centred on its box


def test_round_symbol_reports_its_diameter():
    assert _standard("r152.4").round_mm == pytest.approx(0.1524)
    assert _standard("s100").round_mm is None


def test_unmodelled_symbol_is_a_stand_in_box_and_nonsense_is_none():
    box = _standard("moire200x300x4")
    assert box.approximate and box.outline.bounds == pytest.approx((-0.1, -0.15, 0.1, 0.15))
    assert _standard("not_a_symbol") is None


def test_placed_scales_mirrors_and_turns():
    outline = shapely.box(0, 0, 2, 1)
    moved = placed(outline, 90.0, True, 2.0)
    # scale 2, mirror in x, turn 90 degrees clockwise: (x, y) -> (-2x, 2y) -> (2y, 2x)
    assert moved.bounds == pytest.approx((0, 0, 2, 4))


# ------------------------------------------------------------ surfaces and polarity

def test_surface_island_with_hole_and_arc_edges(tmp_path):
    text = ("UNITS=MM\nS P 0\nOB 0 0 I\nOS 10 0\nOS 10 10\nOS 0 10\nOS 0 0\nOE\n"
            "OB 3 5 H\nOC 7 5 5 5 Y\nOC 3 5 5 5 Y\nOE\n"
            "OB 20 0 I\nOC 20 0 21 0 N\nOE\nSE\n")
    table = _features(tmp_path, text)
    polygons = table.surfaces[0][1]
    assert len(polygons) == 2
    square, circle = sorted(polygons, key=lambda g: -g.area)
    # a 10 mm square less a 4 mm disc, and a 2 mm disc; flattened arcs lose at most
    # perimeter x chord tolerance of area
    assert square.area == pytest.approx(100 - math.pi * 4, abs=2 * math.pi * 2 * ARC_CHORD_TOLERANCE_MM)
    assert circle.area == pytest.approx(math.pi, abs=2 * math.pi * ARC_CHORD_TOLERANCE_MM)
    art = _artwork(table)
    assert art.role.tolist() == ["region", "region"]


def test_negative_features_cut_only_what_came_before(tmp_path):
    text = ("UNITS=MM\n$0 s2000\n"
            "S P 0\nOB 0 0 I\nOS 10 0\nOS 10 10\nOS 0 10\nOS 0 0\nOE\nSE\n"
            "P 5 5 0 N 0 0\n"
            "S P 0\nOB 20 0 I\nOS 30 0\nOS 30 10\nOS 20 10\nOS 20 0\nOE\nSE\n"
            "L 0 20 30 20 0 P 0\n$1 r500\nL 15 -5 15 25 1 N 0\n")
    table = _features(tmp_path, text)
    art = _artwork(table)
    areas = sorted(g.area for g in art.geometry)
    assert areas == pytest.approx([100 - 4, 100])  # the square hole only in the surface drawn before the pad
    assert len(art.x0) == 1  # the positive trace stays whole; the negative line is not a trace
    assert "kept whole" in table.log.summary()
