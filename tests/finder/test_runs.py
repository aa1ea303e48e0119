"""Coupled runs built from planted pieces; reference values are plane geometry derived in the comments."""
from __future__ import annotations

import numpy as np
import pytest
from finder_planted import arc_rows, segments, transform

from scanner.coupling.finder import find_coupled_pieces
from scanner.coupling.runs import build_runs

W = 0.1


def runs_of(layers, search=0.6, **kw):
    pieces = find_coupled_pieces({k: segments(v) for k, v in layers.items()}, search)
    return build_runs(pieces, **kw)


# A straight on x in [0, 30]; B at centre distance 0.4 for x in [0, 10], a 45° jog, then 0.6 for x in [10.2, 20]:
# edge spacings 0.4 - 0.1 = 0.3 and 0.6 - 0.1 = 0.5 over 10 and 9.8 mm; the jog is diagonal and adds nothing
JOGGED = [(0, 0, 30, 0, W, 0), (0, 0.4, 10, 0.4, W, 1), (10, 0.4, 10.2, 0.6, W, 1), (10.2, 0.6, 20, 0.6, W, 1)]


def test_non_uniform_spacing_profile():
    r = runs_of({0: JOGGED})
    assert len(r) == 1
    assert r.coupled_length_mm[0] == pytest.approx(19.8, rel=0.01)
    offset, length, spacing = r.profile(0)
    assert spacing == pytest.approx([0.3, 0.5], abs=0.005)  # ordered along the run (increasing x here)
    assert length == pytest.approx([10.0, 9.8], rel=0.01)
    assert offset == pytest.approx([0.0, 10.0], rel=0.01)
    assert r.spacing_min_mm[0] == pytest.approx(0.3, abs=0.005)
    # length-weighted mean spacing (0.3 * 10 + 0.5 * 9.8) / 19.8
    assert r.spacing_mean_mm[0] == pytest.approx((0.3 * 10 + 0.5 * 9.8) / 19.8, abs=0.005)
    # the worst piece is the close one (largest length / centre distance): midpoint (5, 0.2)
    assert (r.worst_x_mm[0], r.worst_y_mm[0]) == pytest.approx((5.0, 0.2))
    assert (r.worst_x0_mm[0], r.worst_x1_mm[0]) == pytest.approx((0.0, 10.0))
    assert (r.x_min_mm[0], r.y_min_mm[0], r.x_max_mm[0], r.y_max_mm[0]) == pytest.approx((0, 0.2, 20, 0.3))


def test_profile_order_follows_a_rotated_run():
    # the same run rotated by 120°: still ordered along it, so the spacing profile keeps its two steps in sequence
    r = runs_of({0: transform(JOGGED, np.radians(120), 5, 5)})
    _, _, spacing = r.profile(0)
    assert sorted(spacing.round(3)) == [0.3, 0.5]
    assert spacing[0] != pytest.approx(spacing[1])


def test_run_changing_layers_together_stays_one_run():
    # both nets drop from layer 0 to layer 2 at x = 10 (through vias): one run, 10 mm on each layer
    r = runs_of({0: [(0, 0, 10, 0, W, 4), (0, 0.4, 10, 0.4, W, 9)],
                 2: [(10, 0, 25, 0, W, 4), (10, 0.4, 25, 0.4, W, 9)]})
    assert len(r) == 1
    assert (r.net_a[0], r.net_b[0]) == (4, 9)
    assert r.coupled_length_mm[0] == pytest.approx(25.0, rel=0.01)
    assert r.layers_of(0) == (0, 2)
    assert r.main_layer[0] == 2  # 15 mm on layer 2 against 10 mm on layer 0
    assert list(r.pieces.layer[r.pieces_of(0)]) == [0, 2]


def test_gap_splits_a_pair_into_separate_runs():
    # the same two nets coupled over x in [0, 5] and again over [50, 58]: 45 mm apart
    rows = [(0, 0, 5, 0, W, 0), (0, 0.4, 5, 0.4, W, 1), (50, 0, 58, 0, W, 0), (50, 0.4, 58, 0.4, W, 1)]
    assert len(runs_of({0: rows})) == 1
    r = runs_of({0: rows}, max_gap_mm=5.0)
    assert len(r) == 2
    assert sorted(r.coupled_length_mm) == pytest.approx([5.0, 8.0])
    assert len(runs_of({0: rows}, max_gap_mm=50.0)) == 1


def test_csr_layout_is_consistent_over_many_pairs():
    rng = np.random.default_rng(3)
    rows = []
    for k in range(40):  # 40 buses of three nets each, random places and directions
        bus = [(0, 0, 12, 0, W, 3 * k), (0, 0.35, 12, 0.35, W, 3 * k + 1), (2, 0.7, 9, 0.7, W, 3 * k + 2)]
        rows += transform(bus, rng.uniform(0, 2 * np.pi), rng.uniform(0, 500), rng.uniform(0, 500))
    r = runs_of({0: rows}, search=0.3)
    p = r.pieces
    assert sorted(r.piece_order) == list(range(len(p)))
    assert r.run_start[0] == 0 and r.run_start[-1] == len(p)
    assert len(r) == 80  # pairs (0, 1) and (1, 2) of each bus; (0, 2) is 0.6 apart, edge spacing 0.5 > 0.3
    for i in range(len(r)):
        rows_i = r.pieces_of(i)
        assert set(p.net_a[rows_i]) == {r.net_a[i]} and set(p.net_b[rows_i]) == {r.net_b[i]}
        assert r.coupled_length_mm[i] == pytest.approx(p.length_mm[rows_i].sum())
    assert np.sort(r.coupled_length_mm) == pytest.approx([7.0] * 40 + [12.0] * 40)


def test_arc_run_is_ordered_along_the_arc():
    rows = arc_rows(8.0, 0.2, 2.6, W, 0) + arc_rows(8.4, 0.2, 2.6, W, 1)
    r = runs_of({0: rows})
    p = r.pieces.take(r.pieces_of(0))
    angle = np.arctan2(p.y0_mm + p.y1_mm, p.x0_mm + p.x1_mm)
    diffs = np.diff(angle)
    assert np.all(diffs >= -1e-9) or np.all(diffs <= 1e-9)
    # mean arc 2.4 rad * 8.2 mm (arc length = radius x angle)
    assert r.coupled_length_mm[0] == pytest.approx(2.4 * 8.2, rel=0.01)


def test_no_pieces_give_no_runs():
    r = runs_of({0: [(0, 0, 10, 0, W, 0)]})
    assert len(r) == 0
    assert len(r.run_start) == 1 and len(r.piece_order) == 0
