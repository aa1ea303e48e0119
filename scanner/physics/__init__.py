"""Cross-section physics: line matrices, crosstalk coefficients and victim noise.

Geometry in millimetres (x across, y up from the lower plane), results in SI.

Build a cross-section from a stackup and solve it::

    from scanner.physics import (CrossSection, Conductor, Dielectric, Soldermask, solve_cross_section,
                                 coupling_coefficients)
    section = CrossSection(
        conductors=(Conductor.trace(x_mm=-0.15, y_mm=0.1, width_mm=0.15, thickness_mm=0.035),
                    Conductor.trace(x_mm=+0.15, y_mm=0.1, width_mm=0.15, thickness_mm=0.035)),
        dielectrics=(Dielectric(thickness_mm=0.1, er=4.2),),   # bottom to top from the lower plane
        planes="below",                                         # "both": upper plane on top of the stack
        soldermask=Soldermask(thickness_mm=0.02, er=3.5))       # microstrip only; None for bare copper
    m = solve_cross_section(section)          # LineMatrices: C, C0, L per metre (cached)
    m.z0(0), m.velocity(0), m.eps_eff(0), m.z_even, m.z_odd
    kb, kf_s_per_m = coupling_coefficients(m, aggressor=0, victim=1)

``traces_on_layer`` builds side-by-side traces from the dielectrics below and
above a copper layer. For a board, ``CouplingTable.for_layer`` solves a trace
pair at a dozen spacings per layer and interpolates Kb and Kf over spacing::

    table = CouplingTable.for_layer(dielectrics_above=[], dielectrics_below=[(0.1, 4.2)], planes="below",
                                    width_mm=0.15, thickness_mm=0.035, soldermask=(0.02, 3.5))
    table.kb(spacings_mm), table.kf(spacings_mm), table.velocity_m_per_s, table.z0_ohm

Victim noise (weak coupling, docs/physics.md §3), for one piece or a chain of pieces::

    near_end_peak(kb, length_m, velocity_m_per_s, rise_time_s, swing_v)
    far_end_peak(kf, length_m, rise_time_s, swing_v)
    piecewise_peaks(kb, kf, length_m, velocity_m_per_s, rise_time_s, swing_v, termination="high-z-receiver")

Impedances of a layer (scanner.physics.impedance): ``trace_impedance(width_mm, **layer)`` (Z0),
``differential_impedance(width_mm, gap_mm, **layer)`` (2 Zo) and ``DifferentialTable`` over the gap.

``simulate_coupled_lines`` (scanner.physics.mtl) solves the full lossless
multiconductor line equations with resistive terminations, as a check on the
weak-coupling figures and for strong coupling (``weak_coupling_holds``).
"""
from scanner.physics.closed_form import (cohn_coupled_stripline, cohn_stripline, hammerstad_jensen,
                                         kirschning_jansen_coupled, wire_over_ground)
from scanner.physics.coupling import (WEAK_COUPLING_LIMIT, CouplingTable, coupling_coefficients,
                                      weak_coupling_holds)
from scanner.physics.crosstalk import (VictimNoise, far_end_peak, far_end_waveform, near_end_peak, near_end_waveform,
                                       piecewise_peaks, ramp_duration_s, saturation_length_m)
from scanner.physics.geometry import Conductor, CrossSection, Dielectric, Soldermask, traces_on_layer
from scanner.physics.impedance import DifferentialTable, differential_impedance, trace_impedance
from scanner.physics.matrices import LineMatrices
from scanner.physics.mesh import DEFAULT_MESH, MeshSettings
from scanner.physics.mtl import CoupledLineResponse, LineSection, simulate_coupled_lines
from scanner.physics.solver import TOLERANCE, solve_cross_section

__all__ = [
    "Conductor", "CrossSection", "Dielectric", "Soldermask", "traces_on_layer",
    "LineMatrices", "solve_cross_section", "MeshSettings", "DEFAULT_MESH", "TOLERANCE",
    "trace_impedance", "differential_impedance", "DifferentialTable",
    "coupling_coefficients", "CouplingTable", "weak_coupling_holds", "WEAK_COUPLING_LIMIT",
    "near_end_peak", "far_end_peak", "piecewise_peaks", "saturation_length_m", "ramp_duration_s", "VictimNoise",
    "near_end_waveform", "far_end_waveform",
    "simulate_coupled_lines", "LineSection", "CoupledLineResponse",
    "hammerstad_jensen", "kirschning_jansen_coupled", "cohn_stripline", "cohn_coupled_stripline",
    "wire_over_ground",
]
