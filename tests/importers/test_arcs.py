"""Arc flattening: chord error, end points, sweep direction."""
import numpy as np
import pytest
import shapely

from scanner.board.model import ARC_CHORD_TOLERANCE_MM
from scanner.importers.arcs import arc_sweep, flatten_arcs, ring_points


def _max_sagitta(px, py, cx, cy, r):
    # distance from each chord midpoint to the circle: the sagitta r - sqrt(r^2 - (c/2)^2) (circle geometry)
    mx, my = (px[:-1] + px[1:]) / 2, (py[:-1] + py[1:]) / 2
    return float(np.max(r - np.hypot(mx - cx, my - cy)))


@pytest.mark.parametrize("radius", [0.05, 0.5, 5.0, 50.0])
def test_chord_error_within_tolerance(radius):
    counts, px, py = flatten_arcs([radius], [0.0], [0.0], [radius], [0.0], [0.0], [False])
    assert counts[0] == len(px)
    assert _max_sagitta(px, py, 0.0, 0.0, radius) <= ARC_CHORD_TOLERANCE_MM + 1e-12
    # every point on the circle: flattening must not move vertices off the arc
    assert np.allclose(np.hypot(px, py), radius)


def test_piece_count_matches_sagitta_formula():
    # pieces needed for a quarter circle: ceil((pi/2) / (2 acos(1 - t/r))) (sagitta s = r(1 - cos(theta/2)))
    r, t = 10.0, ARC_CHORD_TOLERANCE_MM
    expected = int(np.ceil((np.pi / 2) / (2 * np.arccos(1 - t / r))))
    counts, _, _ = flatten_arcs([r], [0.0], [0.0], [r], [0.0], [0.0], [False])
    assert counts[0] - 1 == expected


def test_direction_and_exact_end_points():
    counts, px, py = flatten_arcs([1.0, 1.0], [0.0, 0.0], [0.0, 0.0], [1.0, 1.0], [0, 0], [0, 0], [False, True])
    first = slice(0, counts[0])
    second = slice(counts[0], counts[0] + counts[1])
    assert (px[first][0], py[first][0]) == (1.0, 0.0) and (px[first][-1], py[first][-1]) == (0.0, 1.0)
    # counter-clockwise quarter stays in the first quadrant, clockwise three-quarter visits y < 0
    assert py[first].min() >= -1e-12 and py[second].min() < -0.99
    assert counts[1] > counts[0]


def test_full_circle_when_ends_coincide():
    sweep = arc_sweep(np.array([1.0]), np.array([0.0]), np.array([1.0]), np.array([0.0]), np.array([0.0]),
                      np.array([0.0]), np.array([True]))
    assert sweep[0] == pytest.approx(-2 * np.pi)


def test_ring_with_arc_edge_is_closed_half_disk():
    points = np.array([[-1.0, 0.0], [1.0, 0.0]])
    cw = np.array([np.nan, 0.0])  # straight base, then counter-clockwise arc back over the top
    ring = ring_points(points, cw, np.array([0.0, 0.0]), np.array([0.0, 0.0]))
    poly = shapely.Polygon(ring)
    assert poly.is_valid
    # half-disk area pi r^2 / 2 (elementary geometry); chords inside the arc lose at most
    # tolerance x arc length (pi r) of area
    assert np.pi / 2 - ARC_CHORD_TOLERANCE_MM * np.pi <= poly.area < np.pi / 2
    assert poly.bounds == pytest.approx((-1, 0, 1, 1), abs=ARC_CHORD_TOLERANCE_MM)
