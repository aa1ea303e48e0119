"""Exact lossless multiconductor-line simulation with resistive terminations.

The telegrapher's equations dV/dz = -s L I, dI/dz = -s C V are solved per
section by modal decomposition (C. R. Paul, *Analysis of Multiconductor
Transmission Lines*, Wiley; from memory): with C^(1/2) L C^(1/2) = U diag(1/v^2) U^T
the voltage modes are T = C^(-1/2) U and the chain matrix of a section of
length l is::

    [V(l)]   [ T ch T^-1          -T sh T^-1 Zc      ] [V(0)]
    [I(l)] = [ -Zc^-1 T sh T^-1    Zc^-1 T ch T^-1 Zc ] [I(0)]

with ch = cosh(s l / v), sh = sinh(s l / v) per mode and Zc the characteristic
impedance matrix. Sections cascade by multiplying chain matrices. Every line
has a Thevenin source (resistance ``source_ohm``) at z = 0 and a load
resistance at the far end; one line is driven.

The source is a ramp of duration T (10-90 % rise time / 0.8) with its corners
rounded by a Gaussian of width T/20 (to keep the spectrum band-limited), taken
back to time by inverse FFT. The frequency axis is shifted by sigma into the
right half-plane (numerical Laplace inversion) so that the finite time window
does not wrap ringing responses round: aliasing is below 1e-6 of the swing.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from scanner.physics.crosstalk import ramp_duration_s
from scanner.physics.matrices import LineMatrices

_ALIAS = np.log(1e6)  # sigma * window: wrap-round suppressed to 1e-6
_SMOOTH = 1 / 20  # Gaussian corner rounding, fraction of the ramp duration
_SAMPLES_PER_RAMP = 40


@dataclass(frozen=True)
class LineSection:
    """A uniform stretch of coupled lines."""

    matrices: LineMatrices
    length_m: float


@dataclass(frozen=True)
class CoupledLineResponse:
    """Voltages at the near end (z = 0) and far end of every line, shape (lines, samples).

    ``edge_start_s``: when the source ramp of ``ramp_s`` starts; its corners are
    rounded by a Gaussian of standard deviation ``rounding_s``.
    """

    time_s: np.ndarray
    near_end_v: np.ndarray
    far_end_v: np.ndarray
    edge_start_s: float
    ramp_s: float
    rounding_s: float


def chain_matrix(matrices: LineMatrices, length_m: float, s: np.ndarray) -> np.ndarray:
    """Chain (ABCD) matrices of one section at complex frequencies s: shape (len(s), 2N, 2N)."""
    velocity, modes = matrices.modes()
    modes_inv = np.linalg.inv(modes)
    zc = matrices.characteristic_impedance()
    zc_inv = np.linalg.inv(zc)
    arg = np.asarray(s)[:, None] * (length_m / velocity)[None, :]
    ch = np.einsum("ij,fj,jk->fik", modes, np.cosh(arg), modes_inv)
    sh = np.einsum("ij,fj,jk->fik", modes, np.sinh(arg), modes_inv)
    top = np.concatenate([ch, -sh @ zc], axis=2)
    bottom = np.concatenate([-zc_inv @ sh, zc_inv @ ch @ zc], axis=2)
    return np.concatenate([top, bottom], axis=1)


def _per_line(value, n: int, name: str) -> np.ndarray:
    arr = np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()
    if np.any(arr < 0):
        raise ValueError(f"{name} must not be negative")
    return arr


def simulate_coupled_lines(sections: Sequence[LineSection], source_ohm, load_ohm, driven: int, rise_time_s: float,
                           source_step_v: float, duration_s: float | None = None) -> CoupledLineResponse:
    """Time-domain response of cascaded coupled-line sections to a step on line ``driven``.

    ``source_step_v`` is the open-circuit step of the driven line's source: with
    a source matched to the line (source_ohm = Z0) the wave launched is half of it.
    ``duration_s`` defaults to twice the longest modal round trip plus four ramps.
    """
    if not sections:
        raise ValueError("give at least one line section")
    n = sections[0].matrices.count
    if any(sec.matrices.count != n for sec in sections):
        raise ValueError("every section must have the same number of lines")
    if not 0 <= driven < n:
        raise ValueError(f"driven line {driven} out of range 0..{n - 1}")
    r_source = np.diag(_per_line(source_ohm, n, "source_ohm"))
    r_load = np.diag(_per_line(load_ohm, n, "load_ohm"))
    ramp_s = float(ramp_duration_s(rise_time_s))
    smooth_s = _SMOOTH * ramp_s
    edge_start_s = 5 * smooth_s
    slowest = sum(sec.length_m / sec.matrices.modes()[0].min() for sec in sections)
    if duration_s is None:
        duration_s = 4 * slowest + edge_start_s + 4 * ramp_s
    dt = ramp_s / _SAMPLES_PER_RAMP
    samples = int(2 ** np.ceil(np.log2(duration_s / dt)))
    window = samples * dt
    sigma = _ALIAS / window
    s = sigma + 2j * np.pi * np.fft.rfftfreq(samples, dt)

    chain = np.broadcast_to(np.eye(2 * n), (len(s), 2 * n, 2 * n))
    for sec in sections:
        chain = chain_matrix(sec.matrices, sec.length_m, s) @ chain
    a, b = chain[:, :n, :n], chain[:, :n, n:]
    c, d = chain[:, n:, :n], chain[:, n:, n:]
    far_v_from_v0 = a - r_load @ c  # (a - R_L c) V0 + (b - R_L d) I0 = 0 at the load
    far_v_from_i0 = b - r_load @ d
    drive = np.zeros(n)
    drive[driven] = 1.0
    system = far_v_from_i0 - far_v_from_v0 @ r_source
    i0 = np.linalg.solve(system, -(far_v_from_v0 @ drive)[..., None])[..., 0]
    v0 = drive[None, :] - i0 @ r_source.T
    v_far = np.einsum("fij,fj->fi", a, v0) + np.einsum("fij,fj->fi", b, i0)

    edge = source_step_v * (1 - np.exp(-s * ramp_s)) / (s ** 2 * ramp_s) * np.exp(
        (s * smooth_s) ** 2 / 2 - s * edge_start_s)
    time_s = np.arange(samples) * dt
    growth = np.exp(sigma * time_s)

    def to_time(spectrum):
        return np.fft.irfft(spectrum * edge[:, None], n=samples, axis=0).T / dt * growth

    keep = time_s <= duration_s
    return CoupledLineResponse(time_s[keep], to_time(v0)[:, keep], to_time(v_far)[:, keep], edge_start_s, ramp_s,
                               smooth_s)
