"""2D quasi-static method-of-moments solver for C, C0 and L.

Unknowns are piecewise-constant total (free + bound) charge densities on
conductor panels and bound charge densities on dielectric interface panels
(W. T. Weeks, IEEE Trans. MTT-18, 1970). Reference planes are not meshed:
the kernel is their exact Green's function (scanner.physics.kernels).
Equations, collocated at panel midpoints:

- conductor panel: potential = the conductor's voltage;
- interface panel between er+ (normal side) and er-: continuity of the normal
  electric flux density, 2 pi (er+ + er-)/(er+ - er-) s_i - dK/dn s = 0,
  with s the charge density over 4 pi eps0.

A conductor's free charge is er times the total charge on each panel
(the permittivity just outside); on a zero-thickness strip lying on an
interface, the two faces are told apart through the normal field.
The vacuum solve for C0 uses the conductor rows and columns alone.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np

from scanner.errors import InputError
from scanner.memory import check_memory, stage
from scanner.physics.geometry import CrossSection
from scanner.physics.kernels import panel_integrals
from scanner.physics.matrices import LineMatrices
from scanner.physics.mesh import DEFAULT_MESH, MeshSettings, Panels, build_panels
from scanner.units import EPS0

#: relative accuracy the default mesh aims at for C, L, Z0 and coupling (checked in tests/physics)
TOLERANCE = 0.005
#: panels one solve may use; the dense solve grows with their cube in time (about a minute here at this size)
#: and their square in memory. Boards need a few hundred; thousands mean a trace or gap hundreds of times
#: wider than its dielectric.
MAX_PANELS = 3000
#: bytes per (panel x panel) entry at the peak of a solve: kernel integrals, their images and the system
#: (measured: 80 to 120 with the tracemalloc module; rounded up)
BYTES_PER_PANEL_PAIR = 160


def solve_cross_section(section: CrossSection, mesh: MeshSettings = DEFAULT_MESH) -> LineMatrices:
    """C, C0 and L (SI per metre) for the signal conductors of ``section``; cached per geometry."""
    return _solve_cached(section, mesh)


@lru_cache(maxsize=1024)
def _solve_cached(section: CrossSection, mesh: MeshSettings) -> LineMatrices:
    panels = build_panels(section, mesh)
    _check_size(section, len(panels))
    with stage("solving a cross-section", f"{len(panels):,} panels"), np.errstate(all="ignore"):
        C, C0 = _capacitances(section, panels)
    if not (np.isfinite(C).all() and np.isfinite(C0).all()):
        raise InputError(f"{_describe(section)}: the solve gave no finite result (the geometry is degenerate)")
    signals = list(section.signal_indices)
    pick = np.ix_(signals, signals)
    return LineMatrices.from_capacitances(_symmetric(C[pick]), _symmetric(C0[pick]))


def _describe(section: CrossSection) -> str:
    widths = ", ".join(f"{c.x_range_mm[1] - c.x_range_mm[0]:.4g}" for c in section.conductors)
    return (f"cross-section of traces {widths} mm wide, {min(c.y_range_mm[0] for c in section.conductors):.4g} mm "
            "over the plane")


def _check_size(section: CrossSection, panels: int) -> None:
    """Refuse a solve needing more panels, or more memory, than it may use (before any matrix is built)."""
    if panels > MAX_PANELS:
        raise InputError(f"{_describe(section)} needs {panels:,} panels, more than the {MAX_PANELS:,} one solve "
                         "may use (a width or gap far larger than the dielectric under it)")
    check_memory(BYTES_PER_PANEL_PAIR * panels**2, f"solving the {_describe(section)} ({panels:,} panels)")


def panel_count(section: CrossSection, mesh: MeshSettings = DEFAULT_MESH) -> int:
    return len(build_panels(section, mesh))


def _symmetric(m: np.ndarray) -> np.ndarray:
    return (m + m.T) / 2


def _capacitances(section: CrossSection, panels: Panels) -> tuple[np.ndarray, np.ndarray]:
    """Maxwell matrices (all conductors, grounded ones included) with and without dielectrics."""
    upper = section.stack_height_mm if section.planes == "both" else None
    mid, normal, length = panels.mid, panels.normal, panels.length
    on_conductor = panels.owner >= 0
    jump = panels.er_plus - panels.er_minus
    interface = ~on_conductor
    sided = on_conductor & panels.thin & (jump != 0)  # strip faces in different media
    field_rows = interface | sided

    potential, _ = panel_integrals(mid[on_conductor], panels.start, panels.end, upper)
    _, d_normal = panel_integrals(mid[field_rows], panels.start, panels.end, upper, normals=normal[field_rows])

    n_cond = len(section.conductors)
    owner = panels.owner[on_conductor]
    drive = (owner[:, None] == np.arange(n_cond)[None, :]).astype(float)

    # vacuum: conductor panels only
    s0 = np.linalg.solve(potential[:, on_conductor], drive)
    C0 = EPS0 * 4 * np.pi * drive.T @ (length[on_conductor, None] * s0)
    if not np.any(interface):
        return C0 * _uniform_er(panels), C0

    # panels come conductors first, so interface rows and columns share one diagonal block
    is_iface_row = interface[field_rows]
    system = np.vstack([potential, -d_normal[is_iface_row]])
    diag = np.flatnonzero(interface)
    system[diag, diag] += 2 * np.pi * (panels.er_plus + panels.er_minus)[interface] / jump[interface]
    rhs = np.vstack([drive, np.zeros((len(diag), n_cond))])
    s = np.linalg.solve(system, rhs)

    weight = 4 * np.pi * panels.er_plus[on_conductor] * length[on_conductor]
    free = weight[:, None] * s[on_conductor]
    if np.any(sided):
        # strip on an interface: sigma_free = (er+ + er-)/2 sigma + (er+ - er-) eps0 E_n,average
        rows = np.flatnonzero(sided)
        e_sum = (panels.er_plus + panels.er_minus)[rows]
        field = d_normal[~is_iface_row] @ s
        free[rows] = length[rows, None] * (2 * np.pi * e_sum[:, None] * s[rows] - jump[rows, None] * field)
    return EPS0 * drive.T @ free, C0


def _uniform_er(panels: Panels) -> float:
    """The one permittivity around the conductors when there are no interfaces (homogeneous medium)."""
    er = np.concatenate([panels.er_plus, panels.er_minus])
    if np.ptp(er) > 0:
        raise AssertionError("conductors touch different media but no interface panels were built")
    return float(er[0])
