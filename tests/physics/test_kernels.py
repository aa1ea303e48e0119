"""Green's functions and panel integrals against independent computations."""
import numpy as np
import pytest
from scipy.integrate import quad

from scanner.physics.kernels import green_one_plane, green_two_planes, image_series_green, panel_integrals


def test_two_plane_green_equals_image_series():
    # closed form (docs/physics.md §5, from memory) checked against the direct image sum
    rng = np.random.default_rng(1)
    b = 1.3
    x, xs = rng.uniform(-2, 2, 50), rng.uniform(-2, 2, 50)
    y, ys = rng.uniform(0.01, b - 0.01, 50), rng.uniform(0.01, b - 0.01, 50)
    closed = green_two_planes(x, y, xs, ys, b)
    series = image_series_green(x, y, xs, ys, b, terms=4000)
    assert np.allclose(closed, series, rtol=0, atol=1e-3 * np.abs(closed).max())


def test_two_plane_green_vanishes_on_both_planes():
    b = 0.8
    x = np.linspace(-1, 1, 7)
    assert np.allclose(green_two_planes(x, 0.0, 0.2, 0.3, b), 0, atol=1e-12)
    assert np.allclose(green_two_planes(x, b, 0.2, 0.3, b), 0, atol=1e-12)


def test_two_plane_green_tends_to_one_plane_when_upper_plane_recedes():
    # far upper plane: the field of a charge near the lower plane is the one-image field
    assert green_two_planes(0.3, 0.2, 0.0, 0.1, 200.0) == pytest.approx(green_one_plane(0.3, 0.2, 0.0, 0.1), rel=1e-3)


@pytest.mark.parametrize("upper", [None, 1.0])
def test_panel_integral_matches_numerical_quadrature(upper):
    # exact panel integrals against scipy.integrate.quad of the point Green's function
    start = np.array([[0.1, 0.3], [0.4, 0.2]])
    end = np.array([[0.3, 0.35], [0.4, 0.6]])
    points = np.array([[0.0, 0.5], [0.25, 0.1], [0.41, 0.4]])
    normals = np.array([[0.0, 1.0], [np.sqrt(0.5), np.sqrt(0.5)], [1.0, 0.0]])
    pot, dn = panel_integrals(points, start, end, upper, normals=normals)

    def green(px, py, qx, qy):
        return green_one_plane(px, py, qx, qy) if upper is None else green_two_planes(px, py, qx, qy, upper)

    h = 1e-6
    for i, (p, n) in enumerate(zip(points, normals)):
        for j in range(2):
            a, b = start[j], end[j]
            length = np.hypot(*(b - a))

            def along(t, px=p[0], py=p[1]):
                q = a + t * (b - a)
                return green(px, py, q[0], q[1]) * length

            ref = quad(along, 0, 1, limit=200, points=[0.5])[0]
            # exact for one plane; two planes add a 2-point Gauss rule on the smooth remainder
            assert pot[i, j] == pytest.approx(ref, rel=1e-9 if upper is None else 2e-5, abs=1e-9)
            plus = quad(along, 0, 1, args=(p[0] + h * n[0], p[1] + h * n[1]), limit=200)[0]
            minus = quad(along, 0, 1, args=(p[0] - h * n[0], p[1] - h * n[1]), limit=200)[0]
            assert dn[i, j] == pytest.approx((plus - minus) / (2 * h), rel=1e-4 if upper is None else 2e-4, abs=1e-6)


def test_self_panel_normal_derivative_is_principal_value():
    # a lone charged panel in free space pushes equal and opposite fields to its two sides: average zero
    start, end = np.array([[0.0, 5.0]]), np.array([[0.1, 5.0]])
    _, dn = panel_integrals(np.array([[0.05, 5.0]]), start, end, None, normals=np.array([[0.0, 1.0]]))
    # what remains is the image's field, which a direct evaluation gives
    image_only = (np.log(0.05 ** 2 + (5.0 + 5.0 + 1e-6) ** 2) - np.log(0.05 ** 2 + (10.0 - 1e-6) ** 2)) / 2e-6 * 0.1
    assert dn[0, 0] == pytest.approx(image_only, rel=1e-2)
