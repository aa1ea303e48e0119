"""Coupled-piece finder on planted geometry.

Reference values are plane-geometry facts derived in the comments: for two
parallel straight centre lines the coupled length is the overlap of their
projections and the edge-to-edge spacing is the centre distance minus half of
each width.
"""
from __future__ import annotations

import numpy as np
import pytest
from finder_planted import arc_rows, segments, transform
from hypothesis import given, settings
from hypothesis import strategies as st

from scanner.board.model import NO_NET
from scanner.coupling.finder import find_coupled_pieces

W = 0.15  # trace width (mm)
SEARCH = 0.5


def find(rows, **kw):
    layers = rows if isinstance(rows, dict) else {0: rows}
    return find_coupled_pieces({k: segments(v) for k, v in layers.items()}, kw.pop("search", SEARCH), **kw)


def test_straight_pair_length_and_spacing():
    # centre lines 0.45 apart, widths 0.15: edge spacing 0.45 - 0.15 = 0.30 mm; overlap [2, 10] = 8 mm
    p = find([(0, 0, 10, 0, W, 0), (2, 0.45, 14, 0.45, W, 1)])
    assert len(p) == 1
    assert p.length_mm[0] == pytest.approx(8.0, rel=0.01)  # projection overlap (plane geometry)
    assert p.spacing_min_mm[0] == pytest.approx(0.30, abs=0.005)  # centre distance - (wa + wb)/2
    assert p.spacing_mean_mm[0] == pytest.approx(0.30, abs=0.005)
    # the piece lies on the centre line between the traces, over the overlap
    assert (p.x0_mm[0], p.y0_mm[0], p.x1_mm[0], p.y1_mm[0]) == pytest.approx((2, 0.225, 10, 0.225))
    assert p.angle_deg[0] == pytest.approx(0.0)
    assert (p.net_a[0], p.net_b[0], p.seg_a[0], p.seg_b[0]) == (0, 1, 0, 1)


def test_net_a_is_the_lower_net_whatever_the_row_order():
    p = find([(0, 0.45, 10, 0.45, W, 7), (0, 0, 10, 0, W, 3)])
    assert (p.net_a[0], p.net_b[0], p.seg_a[0], p.seg_b[0]) == (3, 7, 1, 0)


def test_pair_at_45_degrees():
    # the straight pair rotated by 45° about the origin: same length and spacing (rigid motion)
    rows = transform([(0, 0, 10, 0, W, 0), (0, 0.45, 10, 0.45, W, 1)], np.pi / 4, 3.0, -2.0)
    p = find(rows)
    assert p.length_mm.sum() == pytest.approx(10.0, rel=0.01)
    assert p.spacing_min_mm.min() == pytest.approx(0.30, abs=0.005)
    assert p.angle_deg[0] == pytest.approx(0.0, abs=1e-6)


def test_opposite_drawing_directions_couple_the_same():
    p = find([(0, 0, 10, 0, W, 0), (10, 0.45, 0, 0.45, W, 1)])
    assert p.length_mm.sum() == pytest.approx(10.0, rel=1e-9)
    assert p.spacing_min_mm[0] == pytest.approx(0.30, abs=1e-9)


def test_concentric_arcs_give_the_mean_arc_length():
    # quarter arcs of radius 10 and 10.45 (centre distance 0.45 -> spacing 0.30), each flattened
    # independently to chords within 0.002 mm; mean arc = (pi/2) * (10 + 10.45) / 2 = 16.0614 mm
    # (arc length = radius * angle)
    rows = arc_rows(10.0, 0, np.pi / 2, W, 0) + arc_rows(10.45, 0, np.pi / 2, W, 1)
    p = find(rows)
    mean_arc = np.pi / 2 * (10.0 + 10.45) / 2
    assert p.length_mm.sum() == pytest.approx(mean_arc, rel=0.01)
    assert p.spacing_min_mm.min() == pytest.approx(0.30, abs=0.005)
    assert np.all(p.spacing_mean_mm < 0.305)
    # facing chords differ by less than one chord's turning angle, 2 acos(1 - 0.002 / 10) = 2.29°
    assert np.all(p.angle_deg < 2.3)


def test_concentric_arcs_of_small_radius():
    # radius 1 mm: chords are ~0.13 mm long, shorter than the spacing between the arcs
    rows = arc_rows(1.0, 0, np.pi, W, 0) + arc_rows(1.4, 0, np.pi, W, 1)
    p = find(rows)
    assert p.length_mm.sum() == pytest.approx(np.pi * 1.2, rel=0.01)  # half circle at the mean radius 1.2
    assert p.spacing_min_mm.min() == pytest.approx(0.25, abs=0.005)  # 0.4 - 0.15


def test_tapering_pair_is_clipped_at_the_search_distance():
    # B leaves A at 3°: centre distance 0.3 + x tan(3°); within reach while it is <= 0.5 + 0.15
    # -> x <= 0.35 / tan(3°) = 6.678 mm (small-angle: measured normal to the bisector, < 0.1 % off)
    t = np.tan(np.radians(3.0))
    p = find([(0, 0, 20, 0, W, 0), (0, 0.3, 20, 0.3 + 20 * t, W, 1)])
    assert p.length_mm.sum() == pytest.approx(0.35 / t, rel=0.01)
    assert p.spacing_min_mm[0] == pytest.approx(0.15, abs=0.005)
    assert p.angle_deg[0] == pytest.approx(3.0, abs=1e-6)


def test_angle_tolerance_separates_parallel_from_diagonal():
    # 8° is within the default 10° tolerance, 15° is not
    for angle, expected in ((8.0, 1), (15.0, 0)):
        t = np.tan(np.radians(angle))
        p = find([(0, 0, 5, 0, W, 0), (0, 0.25, 5, 0.25 + 5 * t, W, 1)], search=2.0)
        assert len(p) == expected


def test_right_angle_crossing_contributes_nothing():
    p = find([(0, 0, 10, 0, W, 0), (5, -5, 5, 5, W, 1)])
    assert len(p) == 0


def test_t_approach_and_short_diagonal_approach_contribute_nothing():
    # a trace ending 0.1 mm from A at 90° (T) and one arriving at 45° ending 0.1 mm away
    rows = [(0, 0, 10, 0, W, 0), (5, 0.25, 5, 5, W, 1), (8, 0.25, 11, 3.25, W, 2)]
    assert len(find(rows)) == 0


def test_far_apart_pair_is_absent():
    # edge spacing 1.0 - 0.15 = 0.85 > 0.5
    assert len(find([(0, 0, 10, 0, W, 0), (0, 1.0, 10, 1.0, W, 1)])) == 0


def test_collinear_traces_end_to_end_are_not_coupled():
    # facing ranges are empty: round ends near each other add nothing
    assert len(find([(0, 0, 10, 0, W, 0), (10.3, 0, 20, 0, W, 1)])) == 0


def test_inactive_nets_and_no_net_copper_are_absent():
    rows = [(0, 0, 10, 0, W, 0), (0, 0.45, 10, 0.45, W, 1), (0, -0.45, 10, -0.45, W, 2),
            (0, 0.9, 10, 0.9, W, NO_NET)]
    active = np.array([True, True, False])  # net 2 is ground
    p = find(rows, net_active=active)
    assert list(zip(p.net_a, p.net_b)) == [(0, 1)]


def test_differential_partner_is_skipped_but_third_net_found():
    rows = [(0, 0, 10, 0, W, 0), (0, 0.45, 10, 0.45, W, 1), (0, 0.9, 10, 0.9, W, 2)]
    partner = np.array([1, 0, -1])
    p = find(rows, net_partner=partner)
    assert list(zip(p.net_a, p.net_b)) == [(1, 2)]


def test_trace_drawn_twice_is_not_counted_twice():
    a, b = (0, 0, 10, 0, W, 0), (0, 0.45, 10, 0.45, W, 1)
    for rows in ([a, b, b], [a, a, b], [a, a, b, b]):
        p = find(rows)
        assert p.length_mm.sum() == pytest.approx(10.0, rel=1e-9)


def test_both_traces_drawn_twice_in_any_order_and_direction_count_once():
    # copies drawn in opposite directions differ by rounding; every row order must give the same 10 mm
    rows = [(0.1, 0.2, 10.1, 0.2, W, 0), (10.1, 0.2, 0.1, 0.2, W, 0),
            (0.1, 0.65, 10.1, 0.65, W, 1), (10.1, 0.65, 0.1, 0.65, W, 1)]
    rows = transform(rows, 0.3, 11.0, 7.0)
    for perm in ([0, 1, 2, 3], [1, 0, 3, 2], [3, 1, 0, 2], [2, 3, 1, 0], [0, 3, 2, 1]):
        p = find([rows[k] for k in perm])
        assert p.length_mm.sum() == pytest.approx(10.0, abs=1e-6)


def test_overlapping_strokes_at_joints_are_not_counted_twice():
    # B drawn as strokes 0-4, 3.8-7, 6.9-10 (overlaps at the joints): covers 0..10 once
    rows = [(0, 0, 10, 0, W, 0), (0, 0.45, 4, 0.45, W, 1), (3.8, 0.45, 7, 0.45, W, 1), (10, 0.45, 6.9, 0.45, W, 1)]
    assert find(rows).length_mm.sum() == pytest.approx(10.0, rel=1e-9)


def test_many_collinear_pieces_equal_one_piece():
    rng = np.random.default_rng(7)
    cuts_a = np.sort(np.r_[0, rng.uniform(0, 10, 23), 10])
    cuts_b = np.sort(np.r_[1, rng.uniform(1, 12, 31), 12])
    rows = [(u, 0, v, 0, W, 0) for u, v in zip(cuts_a[:-1], cuts_a[1:])]
    rows += [(u, 0.45, v, 0.45, W, 1) for u, v in zip(cuts_b[:-1], cuts_b[1:])]
    p = find(rows)
    assert p.length_mm.sum() == pytest.approx(9.0, abs=1e-6)  # overlap [1, 10]
    assert np.allclose(p.spacing_min_mm, 0.30)


def test_segment_facing_two_neighbours_of_one_net_counts_once_at_the_nearer():
    # B runs on both sides of A over the same stretch; the stretch counts once, at the nearer spacing
    rows = [(0, 0, 10, 0, W, 0), (0, 0.45, 10, 0.45, W, 1), (0, -0.55, 10, -0.55, W, 1)]
    p = find(rows)
    assert p.length_mm.sum() == pytest.approx(10.0, rel=1e-9)
    assert p.spacing_min_mm.min() == pytest.approx(0.30)


def test_min_overlap_drops_short_pieces():
    rows = [(0, 0, 10, 0, W, 0), (9.5, 0.45, 20, 0.45, W, 1), (0, -0.45, 10, -0.45, W, 2)]
    p = find(rows, min_overlap_mm=1.0)
    assert list(zip(p.net_a, p.net_b)) == [(0, 2)]


def test_layers_are_searched_separately():
    p = find({0: [(0, 0, 10, 0, W, 0)], 1: [(0, 0.45, 10, 0.45, W, 1)]})
    assert len(p) == 0


def test_empty_and_single_segment_layers():
    p = find({0: [], 1: [(0, 0, 1, 0, W, 0)]})
    assert len(p) == 0
    assert p.length_mm.dtype == np.float64


@settings(max_examples=60, deadline=None)
@given(angle=st.floats(0, 2 * np.pi), dx=st.floats(-300, 300), dy=st.floats(-300, 300),
       offset=st.floats(-8, 8), gap=st.floats(0.16, 0.6), flip=st.booleans())
def test_rigid_motions_keep_length_and_spacing(angle, dx, dy, offset, gap, flip):
    # A on [0, 10], B on [offset, offset + 6] at centre distance gap: overlap and spacing are
    # invariant under rotation and translation (Euclidean geometry)
    b = (offset + 6, gap, offset, gap) if flip else (offset, gap, offset + 6, gap)
    rows = [(0, 0, 10, 0, W, 0), (*b, W, 1)]
    overlap = min(10.0, offset + 6) - max(0.0, offset)
    p = find(transform(rows, angle, dx, dy), search=1.0)
    if overlap > 1e-3:
        assert p.length_mm.sum() == pytest.approx(overlap, abs=1e-6)
        assert p.spacing_min_mm[0] == pytest.approx(gap - W, abs=1e-6)
    elif overlap < -1e-3:
        assert len(p) == 0
