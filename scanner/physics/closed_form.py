"""Published closed-form line models: references for the solver and a quick estimate.

Lengths may be in any one unit (only ratios enter). Quasi-static, lossless.
"""
from __future__ import annotations

import numpy as np
from scipy.special import ellipk, ellipkm1

from scanner.units import EPS0, MU0

ETA0 = float(np.sqrt(MU0 / EPS0))  # free-space wave impedance, ohm


def _hj_z_air(u):
    """Hammerstad–Jensen impedance of a microstrip of normalised width u in air (ohm)."""
    f = 6 + (2 * np.pi - 6) * np.exp(-((30.666 / u) ** 0.7528))
    return ETA0 / (2 * np.pi) * np.log(f / u + np.sqrt(1 + (2 / u) ** 2))


def _hj_eps_eff(u, er):
    """Hammerstad–Jensen effective permittivity of a zero-thickness microstrip."""
    a = 1 + np.log((u ** 4 + (u / 52) ** 2) / (u ** 4 + 0.432)) / 49 + np.log(1 + (u / 18.1) ** 3) / 18.7
    b = 0.564 * ((er - 0.9) / (er + 3)) ** 0.053
    return (er + 1) / 2 + (er - 1) / 2 * (1 + 10 / u) ** (-a * b)


def hammerstad_jensen(width, height, er, thickness=0.0):
    """Microstrip Z0 (ohm) and effective permittivity, quasi-static.

    E. Hammerstad and Ø. Jensen, "Accurate models for microstrip computer-aided
    design", IEEE MTT-S Int. Microwave Symp. Digest, 1980, pp. 407-409, with
    their strip-thickness correction (widths u1, ur). Stated accuracy about
    0.2 % (Z0, er <= 128, 0.01 <= w/h <= 100) and 0.2 % (eps_eff, w/h >= 0.01)
    for zero thickness; the thickness correction is less exact.
    """
    u = np.asarray(width, dtype=float) / height
    t = np.asarray(thickness, dtype=float) / height
    with np.errstate(divide="ignore", invalid="ignore"):
        du1 = np.where(t > 0, t / np.pi * np.log(1 + 4 * np.e / (t / np.tanh(np.sqrt(6.517 * u)) ** 2)), 0.0)
    dur = du1 * (1 + 1 / np.cosh(np.sqrt(er - 1))) / 2
    u1, ur = u + du1, u + dur
    eps = _hj_eps_eff(ur, er)
    z_r = _hj_z_air(ur)
    return z_r / np.sqrt(eps), eps * (_hj_z_air(u1) / z_r) ** 2


def kirschning_jansen_coupled(width, spacing, height, er):
    """Coupled microstrip, quasi-static: (Z_even, Z_odd, eps_eff_even, eps_eff_odd).

    M. Kirschning and R. H. Jansen, "Accurate wide-range design equations for the
    frequency-dependent characteristic of parallel coupled microstrip lines",
    IEEE Trans. MTT-32, 1984, pp. 83-90 (zero-frequency part). Zero strip
    thickness. Valid for 0.1 <= w/h <= 10, 0.1 <= s/h <= 10, 1 <= er <= 18;
    quoted accuracy about 1 % (from memory).
    """
    u = np.asarray(width, dtype=float) / height
    g = np.asarray(spacing, dtype=float) / height
    eps_single = _hj_eps_eff(u, er)
    z_single = _hj_z_air(u) / np.sqrt(eps_single)

    v = u * (20 + g ** 2) / (10 + g ** 2) + g * np.exp(-g)
    eps_even = _hj_eps_eff(v, er)
    a_o = 0.7287 * (eps_single - (er + 1) / 2) * (1 - np.exp(-0.179 * u))
    b_o = 0.747 * er / (0.15 + er)
    c_o = b_o - (b_o - 0.207) * np.exp(-0.414 * u)
    d_o = 0.593 + 0.694 * np.exp(-0.562 * u)
    eps_odd = ((er + 1) / 2 + a_o - eps_single) * np.exp(-c_o * g ** d_o) + eps_single

    q1 = 0.8695 * u ** 0.194
    q2 = 1 + 0.7519 * g + 0.189 * g ** 2.31
    q3 = 0.1975 + (16.6 + (8.4 / g) ** 6) ** -0.387 + np.log(g ** 10 / (1 + (g / 3.4) ** 10)) / 241
    q4 = 2 * q1 / q2 / (np.exp(-g) * u ** q3 + (2 - np.exp(-g)) * u ** -q3)
    q5 = 1.794 + 1.14 * np.log(1 + 0.638 / (g + 0.517 * g ** 2.43))
    q6 = 0.2305 + np.log(g ** 10 / (1 + (g / 5.8) ** 10)) / 281.3 + np.log(1 + 0.598 * g ** 1.154) / 5.1
    q7 = (10 + 190 * g ** 2) / (1 + 82.3 * g ** 3)
    q8 = np.exp(-6.5 - 0.95 * np.log(g) - (g / 0.15) ** 5)
    q9 = np.log(q7) * (q8 + 1 / 16.5)
    q10 = q4 - q5 / q2 * np.exp(q6 * np.log(u) * u ** -q9)

    scale = z_single * np.sqrt(eps_single) / ETA0
    z_even = z_single * np.sqrt(eps_single / eps_even) / (1 - scale * q4)
    z_odd = z_single * np.sqrt(eps_single / eps_odd) / (1 - scale * q10)
    return z_even, z_odd, eps_even, eps_odd


def _k_ratio(k):
    """K(k) / K(k') with K the complete elliptic integral of the first kind (modulus k)."""
    k = np.asarray(k, dtype=float)
    return ellipk(k ** 2) / ellipkm1(k ** 2)


def cohn_stripline(width, plane_spacing, er):
    """Centred zero-thickness stripline Z0 (ohm): 30 pi / sqrt(er) * K(k)/K(k'), k = sech(pi w / 2b).

    S. B. Cohn, "Characteristic impedance of the shielded-strip transmission
    line", IRE Trans. MTT-2, 1954. Exact for any w/b (conformal mapping).
    """
    k = 1 / np.cosh(np.pi * np.asarray(width, dtype=float) / (2 * plane_spacing))
    return ETA0 / 4 / np.sqrt(er) * _k_ratio(k)


def cohn_coupled_stripline(width, spacing, plane_spacing, er):
    """Edge-coupled centred zero-thickness stripline (Z_even, Z_odd), ohm.

    S. B. Cohn, "Shielded coupled-strip transmission line", IRE Trans. MTT-3,
    1955: Z = 30 pi / sqrt(er) * K(k')/K(k), k_e = tanh(pi w/2b) tanh(pi (w+s)/2b),
    k_o = tanh(pi w/2b) coth(pi (w+s)/2b). Exact for any w/b, s/b.
    """
    a = np.pi * np.asarray(width, dtype=float) / (2 * plane_spacing)
    c = np.pi * (np.asarray(width, dtype=float) + spacing) / (2 * plane_spacing)
    k_even = np.tanh(a) * np.tanh(c)
    k_odd = np.tanh(a) / np.tanh(c)
    scale = ETA0 / 4 / np.sqrt(er)
    return scale / _k_ratio(k_even), scale / _k_ratio(k_odd)


def wire_over_ground(radius, height, er=1.0):
    """Round wire, centre at ``height`` over an infinite plane, uniform medium.

    C = 2 pi eps / acosh(h/r) (F/m) and Z0 = eta0 / (2 pi sqrt(er)) acosh(h/r);
    exact for h > r (method of images; any electromagnetics text).
    Returns (capacitance_f_per_m, z0_ohm).
    """
    x = np.arccosh(np.asarray(height, dtype=float) / radius)
    return 2 * np.pi * EPS0 * er / x, ETA0 / (2 * np.pi * np.sqrt(er)) * x
