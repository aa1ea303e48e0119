"""Single-ended and differential impedance of a layer, and the interpolated differential table."""
import numpy as np
import pytest

from scanner.physics import (DifferentialTable, cohn_coupled_stripline, cohn_stripline, differential_impedance,
                             trace_impedance)


def stripline(b_mm=0.5, er=4.0):
    """Centred stripline, zero-thickness strips (Cohn's geometry)."""
    return dict(dielectrics_below=[(b_mm / 2, er)], dielectrics_above=[(b_mm / 2, er)], planes="both",
                thickness_mm=0.0)


@pytest.mark.parametrize("w_mm", [0.1, 0.25, 0.5])
def test_single_ended_matches_cohn(w_mm):
    # S. B. Cohn, IRE Trans. MTT-2, 1954 (exact, zero thickness), via scipy.special.ellipk
    assert trace_impedance(w_mm, **stripline()) == pytest.approx(cohn_stripline(w_mm, 0.5, 4.0), rel=0.01)


@pytest.mark.parametrize("w_mm,gap_mm", [(0.1, 0.1), (0.15, 0.3), (0.25, 0.125)])
def test_differential_is_twice_cohn_odd_mode(w_mm, gap_mm):
    _, z_odd = cohn_coupled_stripline(w_mm, gap_mm, 0.5, 4.0)
    # S. B. Cohn, IRE Trans. MTT-3, 1955 (exact): Zdiff = 2 Zo (common practice for edge-coupled pairs)
    assert differential_impedance(w_mm, gap_mm, **stripline()) == pytest.approx(2 * z_odd, rel=0.01)


def test_table_interpolates_between_its_solves():
    layer = dict(dielectrics_below=[(0.1, 4.1)], dielectrics_above=[], planes="below", thickness_mm=0.035,
                 soldermask=(0.02, 3.8))
    table = DifferentialTable.for_layer(0.12, **layer)
    assert np.all(np.diff(table.zdiff_ohm) > 0)  # wider gap, weaker coupling, higher Zdiff
    gaps = np.sqrt(table.gaps_mm[:-1] * table.gaps_mm[1:])  # midway (in log) between solved gaps
    direct = [differential_impedance(0.12, g, **layer) for g in gaps]
    # each solve is good to the solver's 0.5 % (its mesh follows the gap), so two solves may part by 1 %;
    # at gaps a fabricator can etch (50 µm and more) the interpolation holds to 0.5 %
    assert table(gaps) == pytest.approx(direct, rel=0.01)
    wide = gaps >= 0.05
    assert table(gaps[wide]) == pytest.approx(np.array(direct)[wide], rel=0.005)
    # beyond the grid the end values hold (Zdiff is then within a few percent of 2 Z0)
    assert table([1e-4, 100.0]) == pytest.approx(table.zdiff_ohm[[0, -1]])
    assert table.zdiff_ohm[-1] == pytest.approx(2 * trace_impedance(0.12, **layer), rel=0.03)
