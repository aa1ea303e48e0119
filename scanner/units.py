"""The one place for unit conversions. Geometry is in millimetres, physics in SI."""
from __future__ import annotations

MM_PER_INCH = 25.4
MM_PER_MIL = 0.0254
M_PER_MM = 1e-3
S_PER_NS = 1e-9
S_PER_PS = 1e-12
MU0 = 1.25663706212e-6  # H/m, CODATA 2018
EPS0 = 8.8541878128e-12  # F/m, CODATA 2018
C0 = 299_792_458.0  # m/s, exact
#: copper thickness per oz/ft² of copper weight: 1.35 mil, the figure fabrication tools commonly use
#: to turn a copper weight into a thickness (common practice; pure copper would give 1.34 mil)
MM_PER_OZ_COPPER = 1.35 * MM_PER_MIL


def mm_to_m(value_mm):
    return value_mm * M_PER_MM


def m_to_mm(value_m):
    return value_m / M_PER_MM


def inch_to_mm(value_in):
    return value_in * MM_PER_INCH


def mil_to_mm(value_mil):
    return value_mil * MM_PER_MIL


def ns_to_s(value_ns):
    return value_ns * S_PER_NS


def ps_to_s(value_ps):
    return value_ps * S_PER_PS
