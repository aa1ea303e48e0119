"""Aperture macro shapes gerbonara 1.5 gets wrong: thermals (code 7) and rectangles at odd angles."""
import math

import pytest
import shapely
from gerbonara import GerberFile
from scipy.integrate import quad

from scanner.importers.apertures import aperture_outline

HEADER = ["%FSLAX46Y46*%", "%MOMM*%"]


def flashed_aperture(tmp_path, macro: str, name: str):
    path = tmp_path / "macro.gbr"
    path.write_text("\n".join(HEADER + [f"%AM{name}*{macro}*%", f"%ADD20{name}*%", "D20*", "X0Y0D03*", "M02*"]))
    (flash,) = GerberFile.open(path).objects
    return aperture_outline(flash.aperture)


def thermal_area(r_outer, r_inner, gap):
    """Ring area minus the two gap bars (each a strip |y| < gap/2 through the ring), by quadrature."""
    strip = quad(lambda y: math.sqrt(max(r_outer ** 2 - y ** 2, 0)) - math.sqrt(max(r_inner ** 2 - y ** 2, 0)),
                 -gap / 2, gap / 2)[0]
    return math.pi * (r_outer ** 2 - r_inner ** 2) - 2 * 2 * strip


def test_thermal_has_the_specified_shape(tmp_path):
    # Gerber Layer Format Specification, thermal primitive: centre x, centre y, outer diameter, inner
    # diameter, gap, rotation (from memory); four ring segments separated by two perpendicular gaps
    shape = flashed_aperture(tmp_path, "7,0,0,1.0,0.6,0.2,45", "THERM")
    # circles are drawn as 32-gons: about 0.6 % less area than true circles
    assert shape.area == pytest.approx(thermal_area(0.5, 0.3, 0.2), rel=0.015)
    assert sum(g.area > 0.01 * shape.area for g in shape.geoms) == 4  # four ring segments (no more than slivers)
    on_ring_axis = shapely.Point(0.4, 0.0)  # gaps run along the diagonals after the 45° rotation
    on_ring_diagonal = shapely.Point(0.4 / math.sqrt(2), 0.4 / math.sqrt(2))
    assert shape.contains(on_ring_axis) and not shape.contains(on_ring_diagonal)
    assert not shape.contains(shapely.Point(0, 0))  # the hole


def test_rotated_macro_rectangle_keeps_its_area_and_turns_counter_clockwise(tmp_path):
    # centre-line primitive 21: exposure, width, height, centre x, centre y, rotation (degrees, counter-clockwise)
    shape = flashed_aperture(tmp_path, "21,1,2.0,0.2,0,0,30", "BAR")
    assert shape.area == pytest.approx(0.4, rel=1e-9)
    a = math.radians(30)
    assert shape.contains(shapely.Point(0.9 * math.cos(a), 0.9 * math.sin(a)))
    assert not shape.contains(shapely.Point(0.9 * math.cos(a), -0.9 * math.sin(a)))
