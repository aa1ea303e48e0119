"""Green's functions of grounded reference planes and their integrals over flat panels.

All kernels are 4*pi*eps0 times the potential of a unit line charge (vacuum):

- one plane at y = 0 (one image)::

      g = ln(dx^2 + (y + y')^2) - ln(dx^2 + (y - y')^2)

- two planes at y = 0 and y = b (closed form by conformal mapping; it equals the
  alternating image series, see ``image_series_green``)::

      g = ln[(cosh(pi dx/b) - cos(pi (y + y')/b)) / (cosh(pi dx/b) - cos(pi (y - y')/b))]

For panel integrals the logarithmic singularities (the source and, near a
plane, its nearest images) are integrated exactly; what is left of the
two-plane kernel is smooth inside the strip 0 < y < b and is integrated by
two-point Gauss-Legendre quadrature. Collocation points sit at panel
midpoints; the normal derivative on a panel's own midpoint is the principal
value (zero for the panel's own charge).
"""
from __future__ import annotations

import numpy as np

_GAUSS = np.array([0.5 - 0.5 / np.sqrt(3), 0.5 + 0.5 / np.sqrt(3)])
_ON_LINE = 1e-9  # |v| below this fraction of the panel length: the point lies on the panel's line


def green_one_plane(x, y, xs, ys):
    """4*pi*eps0 * potential at (x, y) of a unit line charge at (xs, ys) over a grounded plane y = 0."""
    dx2 = (x - xs) ** 2
    return np.log(dx2 + (y + ys) ** 2) - np.log(dx2 + (y - ys) ** 2)


def green_two_planes(x, y, xs, ys, b):
    """4*pi*eps0 * potential of a unit line charge between grounded planes y = 0 and y = b.

    Written as cosh(a) - cos(c) = 2 (sinh^2(a/2) + sin^2(c/2)) to keep precision near the source.
    """
    half_a = np.pi * (x - xs) / (2 * b)
    sh2 = np.sinh(half_a) ** 2
    return (np.log(sh2 + np.sin(np.pi * (y + ys) / (2 * b)) ** 2)
            - np.log(sh2 + np.sin(np.pi * (y - ys) / (2 * b)) ** 2))


def image_series_green(x, y, xs, ys, b, terms=200):
    """The same two-plane potential summed directly over the images at ys + 2nb (+) and -ys + 2nb (-)."""
    n = np.arange(-terms, terms + 1)
    dx2 = ((np.asarray(x) - xs) ** 2)[..., None]
    y_sum = (np.asarray(y) + ys)[..., None]
    y_diff = (np.asarray(y) - ys)[..., None]
    return np.sum(np.log(dx2 + (y_sum - 2 * n * b) ** 2) - np.log(dx2 + (y_diff - 2 * n * b) ** 2), axis=-1)


def _segment_log(p, a, b, want_grad):
    """Integral over segment a-b of ln|p - q|^2 dq, and optionally its gradient in p.

    p: (m, 1, 2); a, b: (1, n, 2). Exact (closed form in panel coordinates).
    """
    dx, dy = b[..., 0] - a[..., 0], b[..., 1] - a[..., 1]
    length = np.hypot(dx, dy)
    tx, ty = dx / length, dy / length
    rx, ry = a[..., 0] - p[..., 0], a[..., 1] - p[..., 1]
    u1 = rx * tx + ry * ty
    u2 = u1 + length
    v = rx * ty - ry * tx
    v[np.abs(v) < _ON_LINE * length] = 0.0
    v2 = v * v
    # signed angle the panel subtends at p; zero on the panel's own line (principal value on itself)
    angle = np.arctan2(v * length, v2 + u1 * u2)
    angle[v == 0] = 0.0
    log1 = np.log(u1 * u1 + v2)
    log2 = np.log(u2 * u2 + v2)
    value = u2 * log2 - u1 * log1 - 2 * length + 2 * v * angle
    if not want_grad:
        return value, None
    dlog = log2 - log1
    sv = 2 * angle
    return value, (-tx * dlog - ty * sv, -ty * dlog + tx * sv)


def _mirror(points, y0):
    out = points.copy()
    out[..., 1] = 2 * y0 - out[..., 1]
    return out


def _smooth_two_planes(p, q, b, want_grad):
    """The two-plane kernel less the logarithms of the source and its images at -y' and 2b - y'."""
    dx = p[..., 0] - q[..., 0]
    dy = p[..., 1] - q[..., 1]
    sy = p[..., 1] + q[..., 1]
    k = np.pi / (2 * b)
    sh2 = np.sinh(k * dx) ** 2
    num = sh2 + np.sin(k * sy) ** 2
    den = sh2 + np.sin(k * dy) ** 2
    dx2 = dx ** 2
    r_src = dx2 + dy ** 2
    r_low = dx2 + sy ** 2
    r_high = dx2 + (sy - 2 * b) ** 2
    value = np.log(num) - np.log(den) - np.log(r_low) - np.log(r_high) + np.log(r_src)
    if not want_grad:
        return value, None
    sh2a = np.sinh(2 * k * dx)
    gx = k * sh2a * (1 / num - 1 / den) - 2 * dx * (1 / r_low + 1 / r_high - 1 / r_src)
    gy = (k * (np.sin(2 * k * sy) / num - np.sin(2 * k * dy) / den)
          - 2 * sy / r_low - 2 * (sy - 2 * b) / r_high + 2 * dy / r_src)
    return value, (gx, gy)


def panel_integrals(points, start, end, upper_plane_mm=None, normals=None):
    """Integral of the kernel over each source panel, at each observation point.

    Returns (potential, normal_derivative): arrays (m, n); the second only when
    ``normals`` (m, 2) is given, else None. ``upper_plane_mm`` None means one plane.
    """
    want_grad = normals is not None
    p = points[:, None, :]
    a, b = start[None, :, :], end[None, :, :]
    value, grad = _segment_log(p, a, b, want_grad)
    value = -value
    gx, gy = (-grad[0], -grad[1]) if want_grad else (None, None)
    images = [0.0] if upper_plane_mm is None else [0.0, upper_plane_mm]
    for y0 in images:
        v_img, g_img = _segment_log(p, _mirror(a, y0), _mirror(b, y0), want_grad)
        value += v_img
        if want_grad:
            gx += g_img[0]
            gy += g_img[1]
    if upper_plane_mm is not None:
        half_length = 0.5 * np.hypot(*(end - start).T)[None, :]
        for w in _GAUSS:
            q = a + w * (b - a)
            v_s, g_s = _smooth_two_planes(p, q, upper_plane_mm, want_grad)
            value += half_length * v_s
            if want_grad:
                gx += half_length * g_s[0]
                gy += half_length * g_s[1]
    if not want_grad:
        return value, None
    return value, gx * normals[:, 0, None] + gy * normals[:, 1, None]
