"""Per-layer coupling tables: interpolation against direct solves, caching, stackup mapping."""
import numpy as np
import pytest

from scanner.physics import CouplingTable, coupling_coefficients, solve_cross_section, traces_on_layer
from scanner.physics.coupling import weak_coupling_holds

MICROSTRIP = dict(dielectrics_above=[], dielectrics_below=[(0.1, 4.2)], planes="below", soldermask=(0.02, 3.5))
STRIPLINE = dict(dielectrics_above=[(0.13, 3.9)], dielectrics_below=[(0.1, 4.3)], planes="both")


@pytest.mark.parametrize("env,thickness", [(MICROSTRIP, 0.035), (STRIPLINE, 0.018)])
def test_interpolated_coefficients_match_direct_solves(env, thickness):
    table = CouplingTable.for_layer(width_mm=0.12, thickness_mm=thickness, **env)
    for spacing in (0.037, 0.11, 0.29, 0.77):
        section = traces_on_layer(env["dielectrics_below"], env["dielectrics_above"], env["planes"], [0.12, 0.12],
                                  [spacing], thickness, env.get("soldermask"))
        kb, kf = coupling_coefficients(solve_cross_section(section), 0, 1)
        assert table.kb(spacing) == pytest.approx(kb, rel=0.01)
        assert table.kf(spacing) == pytest.approx(kf, rel=0.03, abs=0.01 * abs(kb) / table.velocity_m_per_s)


def test_table_is_cached_and_vectorised():
    a = CouplingTable.for_layer(width_mm=0.12, thickness_mm=0.035, **MICROSTRIP)
    b = CouplingTable.for_layer(width_mm=0.12 + 1e-9, thickness_mm=0.035, **MICROSTRIP)
    assert a is b
    spacing = np.array([[0.05, 0.1], [0.2, 0.4]])
    assert a.kb(spacing).shape == (2, 2)
    assert np.all(np.diff(a.kb(np.geomspace(0.01, 20, 50))) < 0)  # monotone, also beyond the table


def test_single_line_figures_and_homogeneous_stripline():
    table = CouplingTable.for_layer([(0.15, 4.0)], [(0.15, 4.0)], "both", 0.1, 0.018)
    assert table.eps_eff == pytest.approx(4.0, rel=1e-9)
    assert table.velocity_m_per_s == pytest.approx(299792458.0 / 2, rel=1e-9)
    assert np.all(table.kf(np.array([0.1, 1.0])) == 0)
    assert 30 < table.z0_ohm < 60


def test_weak_coupling_flag():
    assert list(weak_coupling_holds([0.02, 0.099, 0.15])) == [True, True, False]
