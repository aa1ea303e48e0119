"""Panels for the method of moments: conductor outlines and dielectric interfaces.

Panel size follows a sizing function: small at conductor corners (where the
charge density is singular), growing linearly with the distance from the
nearest corner, and capped. On conductors it is also kept below a fraction of
the distance to the nearest reference plane. Interfaces of the layered stack
are infinite in reality; here they stop ``truncation`` reference heights
beyond the outermost conductor, the panels growing geometrically on the way.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from scanner.physics.geometry import TOUCH_MM, CrossSection


@dataclass(frozen=True)
class MeshSettings:
    """Discretisation controls; :meth:`refined` halves every panel size."""

    corner_panel: float = 0.02  # smallest panel at a corner, fraction of the smallest feature
    growth: float = 0.6  # panel size / distance from the nearest corner
    plane_ratio: float = 0.5  # conductor panel size / distance to the nearest reference plane
    max_panel: float = 3.0  # largest panel, in reference heights
    truncation: float | None = None  # interface half-extent beyond the conductors, in reference heights

    def refined(self, factor: float = 0.5) -> "MeshSettings":
        return replace(self, corner_panel=self.corner_panel * factor, growth=self.growth * factor,
                       plane_ratio=self.plane_ratio * factor, max_panel=self.max_panel * factor)


DEFAULT_MESH = MeshSettings()
#: default interface truncation in reference heights: the field between two planes dies exponentially
TRUNCATION = {"below": 25.0, "both": 8.0}
_CORNER_TURN = np.radians(20.0)  # vertices turning more than this count as singular corners


@dataclass(frozen=True)
class Panels:
    """Flat panels; the normal is the tangent turned clockwise (outward on counter-clockwise outlines).

    ``owner`` is the conductor index, or -1 for a dielectric interface panel; conductor
    panels come first.
    ``er_plus``/``er_minus`` are the permittivities on the normal side and the other side.
    """

    start: np.ndarray  # (n, 2) mm
    end: np.ndarray  # (n, 2) mm
    owner: np.ndarray  # (n,) int
    thin: np.ndarray  # (n,) bool: panel of a zero-thickness strip (charge on both faces)
    er_plus: np.ndarray
    er_minus: np.ndarray

    @property
    def mid(self) -> np.ndarray:
        return (self.start + self.end) / 2

    @property
    def length(self) -> np.ndarray:
        return np.hypot(*(self.end - self.start).T)

    @property
    def tangent(self) -> np.ndarray:
        return (self.end - self.start) / self.length[:, None]

    @property
    def normal(self) -> np.ndarray:
        t = self.tangent
        return np.column_stack([t[:, 1], -t[:, 0]])

    def __len__(self) -> int:
        return len(self.owner)


@dataclass(frozen=True)
class _Sizing:
    corners: np.ndarray  # (m, 2)
    planes_y: tuple[float, ...]
    settings: MeshSettings
    d_min: float
    d_max: float

    def size_at(self, pts: np.ndarray, on_conductor: np.ndarray) -> np.ndarray:
        """Panel size wanted at points (..., 2); ``on_conductor`` broadcasts against pts[..., 0]."""
        x, y = pts[..., 0], pts[..., 1]
        if len(self.corners):
            d = np.min(np.hypot(x[..., None] - self.corners[:, 0], y[..., None] - self.corners[:, 1]), axis=-1)
        else:
            d = np.full(x.shape, np.inf)
        s = np.minimum(self.d_max, self.settings.growth * d)
        plane_d = np.min(np.abs(y[..., None] - np.asarray(self.planes_y)), axis=-1)
        s = np.where(on_conductor, np.minimum(s, self.settings.plane_ratio * plane_d), s)
        return np.maximum(s, self.d_min)

    def nodes(self, p0: np.ndarray, p1: np.ndarray, on_conductor: np.ndarray) -> list[np.ndarray]:
        """Node positions along each segment p0[k]-p1[k] (arrays (S, 2)) following the sizing function."""
        length = np.hypot(*(p1 - p0).T)
        ramp = self.d_min * 1.15 ** np.arange(60)
        near_end = np.minimum(ramp[None, :] / length[:, None], 0.5)
        u = np.sort(np.concatenate([np.broadcast_to(np.linspace(0, 1, 65), (len(length), 65)), near_end,
                                    1 - near_end], axis=1), axis=1)
        pts = p0[:, None, :] + u[..., None] * (p1 - p0)[:, None, :]
        density = length[:, None] / self.size_at(pts, on_conductor[:, None])
        count = np.concatenate([np.zeros((len(length), 1)),
                                np.cumsum((density[:, 1:] + density[:, :-1]) / 2 * np.diff(u, axis=1), axis=1)], axis=1)
        out = []
        for k in range(len(length)):
            n = max(1, int(np.ceil(count[k, -1] - 1e-9)))
            u_nodes = np.interp(np.linspace(0, count[k, -1], n + 1), count[k], u[k])
            out.append(p0[k] + np.outer(u_nodes, p1[k] - p0[k]))
        return out


def _corner_points(section: CrossSection) -> np.ndarray:
    pts = []
    for c in section.conductors:
        v = c.vertices
        if c.is_strip:
            pts.append(v)
            continue
        e_in = v - np.roll(v, 1, axis=0)
        e_out = np.roll(v, -1, axis=0) - v
        cross = e_in[:, 0] * e_out[:, 1] - e_in[:, 1] * e_out[:, 0]
        turn = np.abs(np.arctan2(cross, np.sum(e_in * e_out, axis=1)))
        pts.append(v[turn > _CORNER_TURN])
    return np.concatenate(pts) if pts else np.zeros((0, 2))


def _feature_size(section: CrossSection) -> float:
    """Smallest of: conductor width or thickness, gap between conductors, height over a plane."""
    sizes = []
    top = section.stack_height_mm
    for i, c in enumerate(section.conductors):
        (x0, x1), (y0, y1) = c.x_range_mm, c.y_range_mm
        sizes += [x1 - x0, y0] + ([y1 - y0] if y1 > y0 else []) + ([top - y1] if section.planes == "both" else [])
        for other in section.conductors[i + 1:]:
            (u0, u1), (w0, w1) = other.x_range_mm, other.y_range_mm
            sizes.append(np.hypot(max(u0 - x1, x0 - u1, 0.0), max(w0 - y1, y0 - w1, 0.0)))
    return float(min(s for s in sizes if s > 0))


def reference_height_mm(section: CrossSection) -> float:
    if section.planes == "both":
        return section.stack_height_mm
    return max(c.y_range_mm[1] for c in section.conductors)


def _split_at_heights(p0: np.ndarray, p1: np.ndarray, heights: np.ndarray) -> list[np.ndarray]:
    """Cut the segment where it crosses any of the given heights."""
    lo, hi = sorted((p0[1], p1[1]))
    cuts = heights[(heights > lo + TOUCH_MM) & (heights < hi - TOUCH_MM)]
    fractions = np.sort((cuts - p0[1]) / (p1[1] - p0[1]))
    return [p0 + f * (p1 - p0) for f in np.concatenate([[0.0], fractions, [1.0]])]


def _open_intervals(y_mm: float, x_lo: float, x_hi: float, section: CrossSection) -> list[tuple[float, float]]:
    """Pieces of the line y = y_mm between x_lo and x_hi not covered by a conductor."""
    spans = sorted(s for s in (c.span_at(y_mm) for c in section.conductors) if s is not None)
    pieces, x = [], x_lo
    for a, b in spans:
        if a > x:
            pieces.append((x, a))
        x = max(x, b)
    if x < x_hi:
        pieces.append((x, x_hi))
    return pieces


def build_panels(section: CrossSection, settings: MeshSettings = DEFAULT_MESH) -> Panels:
    """Panels on every conductor outline and on every interface between unequal permittivities."""
    ref = reference_height_mm(section)
    planes_y = (0.0, section.stack_height_mm) if section.planes == "both" else (0.0,)
    corners = _corner_points(section)
    truncation = settings.truncation if settings.truncation is not None else TRUNCATION[section.planes]
    xs = np.array([c.x_range_mm for c in section.conductors])
    x_lo, x_hi = xs.min() - truncation * ref, xs.max() + truncation * ref
    polylines = []
    if section.soldermask is not None:
        polylines.append(section.mask_outline_mm((x_lo, x_hi)))
    sizing = _Sizing(corners, planes_y, settings,
                     d_min=settings.corner_panel * _feature_size(section), d_max=settings.max_panel * ref)

    boundaries = section.boundaries_mm
    segments = []  # (p0, p1, owner, thin)
    for index, c in enumerate(section.conductors):
        v = c.vertices
        if c.is_strip:
            segments.append((v[0], v[1], index, True))
            continue
        for p0, p1 in zip(v, np.roll(v, -1, axis=0)):
            cut = _split_at_heights(p0, p1, boundaries)
            segments += [(q0, q1, index, False) for q0, q1 in zip(cut[:-1], cut[1:])]
    layer_er = [d.er for d in section.dielectrics] + [section.cover_er]
    for k, y in enumerate(boundaries[:-1] if section.planes == "both" else boundaries):
        if layer_er[k] != layer_er[k + 1] or (section.soldermask is not None and k == len(boundaries) - 1):
            segments += [(np.array([a, y]), np.array([b, y]), -1, False)
                         for a, b in _open_intervals(float(y), x_lo, x_hi, section)]
    for line in polylines:
        segments += [(p0, p1, -1, False) for p0, p1 in zip(line[:-1], line[1:])]

    p0 = np.array([seg[0] for seg in segments], dtype=float)
    p1 = np.array([seg[1] for seg in segments], dtype=float)
    seg_owner = np.array([seg[2] for seg in segments])
    seg_thin = np.array([seg[3] for seg in segments])
    nodes = sizing.nodes(p0, p1, seg_owner >= 0)
    counts = np.array([len(n) - 1 for n in nodes])
    start = np.concatenate([n[:-1] for n in nodes])
    end = np.concatenate([n[1:] for n in nodes])
    owner, is_thin = np.repeat(seg_owner, counts), np.repeat(seg_thin, counts)
    mid = (start + end) / 2
    t = (end - start) / np.hypot(*(end - start).T)[:, None]
    normal = np.column_stack([t[:, 1], -t[:, 0]])
    probe = 1e-7 * ref
    er_plus = section.er_at(*(mid + probe * normal).T)
    er_minus = section.er_at(*(mid - probe * normal).T)
    keep = (owner >= 0) | (er_plus != er_minus)
    return Panels(start[keep], end[keep], owner[keep], is_thin[keep], er_plus[keep], er_minus[keep])
