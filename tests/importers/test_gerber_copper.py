"""One copper Gerber file to segments and shapes: X2 attributes, arcs, polarity, bad files."""
import numpy as np
import pytest
import shapely

from scanner.board.model import ARC_CHORD_TOLERANCE_MM
from scanner.errors import InputError
from scanner.importers.gerber_copper import read_copper

from artwork import gerber_text


def _write(tmp_path, items, x2=True, name="copper.gbr", function="Copper,L1,Top,Signal"):
    path = tmp_path / name
    path.write_text(gerber_text(items, function, x2))
    return path


def test_x2_nets_roles_and_region_attributes(tmp_path):
    art = read_copper(_write(tmp_path, [
        {"kind": "line", "pts": [(0, 0), (10, 0), (10, 5)], "w": 0.25, "net": "CLK"},
        {"kind": "flash", "at": (10, 5), "d": 0.6, "net": "CLK", "function": "ViaPad"},
        {"kind": "flash", "at": (0, 0), "d": (1.0, 0.5), "shape": "R", "net": "CLK"},
        {"kind": "region", "pts": [(20, 0), (30, 0), (30, 10), (20, 10)], "net": "GND"},
    ]))
    assert art.file_attributes[".FileFunction"][:3] == ("Copper", "L1", "Top")
    assert len(art.x0) == 2 and list(art.segment_net) == ["CLK", "CLK"]
    assert np.allclose(art.width, 0.25)
    assert sorted(zip(art.role, art.shape_net)) == [("pad", "CLK"), ("region", "GND"), ("via", "CLK")]
    region = art.geometry[list(art.role).index("region")]
    assert region.area == pytest.approx(100.0)
    rect = art.geometry[list(art.role).index("pad")]
    assert rect.bounds == pytest.approx((-0.5, -0.25, 0.5, 0.25))


def test_x1_file_has_no_nets(tmp_path):
    art = read_copper(_write(tmp_path, [{"kind": "line", "pts": [(0, 0), (1, 0)], "w": 0.2, "net": "A"}], x2=False))
    assert not art.has_net_attributes and art.segment_net[0] is None


def test_arc_flattened_within_tolerance(tmp_path):
    art = read_copper(_write(tmp_path, [
        {"kind": "arc", "start": (0, 0), "end": (4, 4), "center": (4, 0), "cw": True, "w": 0.2, "net": "A"}]))
    assert len(art.x0) > 10
    assert (art.x0[0], art.y0[0]) == pytest.approx((0, 0)) and (art.x1[-1], art.y1[-1]) == pytest.approx((4, 4))
    # clockwise from (0,0) around (4,0) passes through the upper-left quarter: all points at radius 4
    assert np.allclose(np.hypot(art.x0 - 4, art.y0), 4.0)
    assert art.y0.min() >= -1e-9
    # quarter circle length 2 pi r / 4; a chord of angle t is shorter than its arc by about t^2/24
    # and the sagitta bound r t^2 / 8 <= tol makes that at most tol / (3 r) (series of sin)
    length = np.hypot(art.x1 - art.x0, art.y1 - art.y0).sum()
    assert 2 * np.pi * (1 - ARC_CHORD_TOLERANCE_MM / 12 * 1.01) <= length <= 2 * np.pi


def test_single_quadrant_g74_arc(tmp_path):
    text = "\n".join(["%FSLAX46Y46*%", "%MOMM*%", "%ADD10C,0.2*%", "G74*", "D10*", "X0Y0D02*", "G02*",
                      "X4000000Y4000000I4000000J0D01*", "M02*"])
    (tmp_path / "q.gbr").write_text(text)
    art = read_copper(tmp_path / "q.gbr")
    # single-quadrant mode: unsigned offsets, centre chosen so the arc is at most 90 degrees (Gerber spec, G74)
    assert np.allclose(np.hypot(art.x0 - 4, art.y0), 4.0)
    assert len(art.x0) > 10


def test_zero_length_draw_becomes_pad(tmp_path):
    art = read_copper(_write(tmp_path, [{"kind": "line", "pts": [(5, 5), (5, 5)], "w": 0.8, "net": "P"}]))
    assert len(art.x0) == 0
    assert list(art.role) == ["pad"] and art.shape_net[0] == "P"
    assert art.geometry[0].area == pytest.approx(np.pi * 0.4 ** 2, rel=0.01)


def test_clear_polarity_cuts_earlier_copper_and_warns_for_traces(tmp_path):
    art = read_copper(_write(tmp_path, [
        {"kind": "region", "pts": [(0, 0), (10, 0), (10, 10), (0, 10)], "net": "GND"},
        {"kind": "line", "pts": [(-2, 5), (12, 5)], "w": 0.2, "net": "S"},
        {"kind": "flash", "at": (5, 5), "d": 2.0, "polarity": "C"},
        {"kind": "flash", "at": (5, 5), "d": 0.5, "net": "S"},
    ]))
    region = art.geometry[list(art.role).index("region")]
    assert region.area == pytest.approx(100 - np.pi, rel=1e-3)
    assert not region.contains(shapely.Point(5, 5))
    assert len(art.geometry) == 2  # the later dark pad survives
    assert any("cleared" in text for text in art.log.counts)


def test_rectangle_aperture_draw_width_and_warning(tmp_path):
    art = read_copper(_write(tmp_path, [
        {"kind": "line", "pts": [(0, 0), (10, 0)], "w": (1.0, 0.3), "shape": "R", "net": "A"},
        {"kind": "line", "pts": [(0, 5), (0, 15)], "w": (1.0, 0.3), "shape": "R", "net": "A"}]))
    # a rectangle w x h swept along x leaves a band h wide, along y a band w wide
    assert art.width == pytest.approx([0.3, 1.0])
    assert any("non-circular aperture" in text for text in art.log.counts)


def test_truncated_file_is_input_error(tmp_path):
    path = _write(tmp_path, [{"kind": "line", "pts": [(0, 0), (1, 0)], "w": 0.2}])
    path.write_text(path.read_text().replace("M02*", ""))
    with pytest.raises(InputError, match="truncated") as info:
        read_copper(path)
    assert info.value.path == str(path)


def test_syntax_error_names_file_and_line(tmp_path):
    path = tmp_path / "bad.gbr"
    path.write_text("%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.2*%\nD11*\nX0Y0D02*\nM02*\n")
    with pytest.raises(InputError) as info:
        read_copper(path)
    assert info.value.path == str(path) and info.value.line == 4
    assert "undefined aperture" in info.value.message


def test_missing_unit_is_input_error(tmp_path):
    path = tmp_path / "nounit.gbr"
    path.write_text("%FSLAX46Y46*%\n%ADD10C,0.2*%\nD10*\nM02*\n")
    with pytest.raises(InputError, match="unit"):
        read_copper(path)
