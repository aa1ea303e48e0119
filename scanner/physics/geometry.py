"""Cross-section description: conductors, dielectric layers, reference planes, soldermask.

Coordinates are millimetres: x across the board, y up from the lower reference
plane (y = 0). Capacitance per unit length does not depend on the length unit,
so the solver works in millimetres and returns SI per metre.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np

#: heights closer than this (mm) count as equal when cutting interfaces at conductors
TOUCH_MM = 1e-9


@dataclass(frozen=True)
class Dielectric:
    """One dielectric layer of the stack: thickness and relative permittivity."""

    thickness_mm: float
    er: float

    def __post_init__(self):
        if not self.thickness_mm > 0:
            raise ValueError(f"dielectric thickness must be positive, got {self.thickness_mm} mm")
        if not self.er >= 1:
            raise ValueError(f"relative permittivity must be at least 1, got {self.er}")


@dataclass(frozen=True)
class Soldermask:
    """Conformal coating over outer-layer traces.

    Modelled as a layer of ``thickness_mm`` on the bare laminate and
    ``thickness_over_trace_mm`` over and beside each trace (a step outline;
    real coatings are rounded). Gaps narrower than twice the coating fill up.
    """

    thickness_mm: float
    er: float
    thickness_over_trace_mm: float | None = None

    def __post_init__(self):
        if not self.thickness_mm > 0 or not self.er >= 1:
            raise ValueError("soldermask needs a positive thickness and er >= 1")
        if self.thickness_over_trace_mm is not None and not self.thickness_over_trace_mm > 0:
            raise ValueError("soldermask thickness over the trace must be positive")

    @property
    def over_trace_mm(self) -> float:
        return self.thickness_mm if self.thickness_over_trace_mm is None else self.thickness_over_trace_mm


@dataclass(frozen=True)
class Conductor:
    """A conductor outline (convex polygon, counter-clockwise, mm), or a zero-thickness strip (two points).

    ``grounded`` conductors (guard traces, neighbouring pour) are held at 0 V
    and do not appear in the line matrices.
    """

    outline_mm: tuple[tuple[float, float], ...]
    grounded: bool = False

    @classmethod
    def trace(cls, x_mm: float, y_mm: float, width_mm: float, thickness_mm: float = 0.0,
              top_width_mm: float | None = None, grounded: bool = False) -> "Conductor":
        """A trace centred at ``x_mm`` with its base at height ``y_mm``.

        ``top_width_mm`` gives an etched trapezoid (narrower top); zero thickness gives a strip.
        """
        if not width_mm > 0:
            raise ValueError(f"trace width must be positive, got {width_mm} mm")
        if thickness_mm < 0:
            raise ValueError(f"trace thickness must not be negative, got {thickness_mm} mm")
        half = width_mm / 2
        if thickness_mm == 0:
            return cls(((x_mm - half, y_mm), (x_mm + half, y_mm)), grounded)
        top_half = half if top_width_mm is None else top_width_mm / 2
        if not top_half > 0:
            raise ValueError(f"trace top width must be positive, got {top_width_mm} mm")
        top = y_mm + thickness_mm
        pts = ((x_mm - half, y_mm), (x_mm + half, y_mm), (x_mm + top_half, top), (x_mm - top_half, top))
        return cls(pts, grounded)

    @classmethod
    def round_wire(cls, x_mm: float, y_mm: float, radius_mm: float, sides: int = 64,
                   grounded: bool = False) -> "Conductor":
        """A round wire centred at (x_mm, y_mm), as a regular polygon of equal area."""
        if not radius_mm > 0 or sides < 8:
            raise ValueError("round wire needs a positive radius and at least 8 sides")
        # equal-area polygon: r_poly^2 * sides/2 * sin(2 pi/sides) = pi r^2
        r_poly = radius_mm * np.sqrt(2 * np.pi / (sides * np.sin(2 * np.pi / sides)))
        angle = 2 * np.pi * np.arange(sides) / sides
        return cls(tuple((x_mm + r_poly * np.cos(a), y_mm + r_poly * np.sin(a)) for a in angle), grounded)

    @property
    def vertices(self) -> np.ndarray:
        return np.asarray(self.outline_mm, dtype=float)

    @property
    def is_strip(self) -> bool:
        return len(self.outline_mm) == 2

    @property
    def y_range_mm(self) -> tuple[float, float]:
        v = self.vertices
        return float(v[:, 1].min()), float(v[:, 1].max())

    @property
    def x_range_mm(self) -> tuple[float, float]:
        v = self.vertices
        return float(v[:, 0].min()), float(v[:, 0].max())

    def span_at(self, y_mm: float) -> tuple[float, float] | None:
        """The x interval the conductor covers at height y_mm (None when it does not reach it)."""
        v = self.vertices
        if self.is_strip:
            return (float(v[:, 0].min()), float(v[:, 0].max())) if np.all(abs(v[:, 1] - y_mm) < TOUCH_MM) else None
        lo, hi = self.y_range_mm
        if not lo - TOUCH_MM <= y_mm <= hi + TOUCH_MM:
            return None
        y_mm = min(max(y_mm, lo), hi)
        a, b = v, np.roll(v, -1, axis=0)
        dy = b[:, 1] - a[:, 1]
        flat = dy == 0
        crossing = ~flat & (np.minimum(a[:, 1], b[:, 1]) <= y_mm) & (np.maximum(a[:, 1], b[:, 1]) >= y_mm)
        xs = a[crossing, 0] + (y_mm - a[crossing, 1]) / dy[crossing] * (b[crossing, 0] - a[crossing, 0])
        on_flat = flat & (abs(a[:, 1] - y_mm) < TOUCH_MM)
        xs = np.concatenate([xs, a[on_flat, 0], b[on_flat, 0]])
        return float(xs.min()), float(xs.max())


@dataclass(frozen=True)
class CrossSection:
    """Conductors in a stack of dielectric layers over one reference plane or between two.

    ``dielectrics`` run bottom to top from the lower plane at y = 0. With
    ``planes='both'`` the upper plane lies on top of the last layer (stripline);
    with ``planes='below'`` the space above the stack is ``cover_er`` (air),
    optionally with a soldermask over the top surface (microstrip).
    """

    conductors: tuple[Conductor, ...]
    dielectrics: tuple[Dielectric, ...]
    planes: str = "below"
    soldermask: Soldermask | None = None
    cover_er: float = 1.0

    def __post_init__(self):
        object.__setattr__(self, "conductors", tuple(self.conductors))
        object.__setattr__(self, "dielectrics", tuple(self.dielectrics))
        if self.planes not in ("below", "both"):
            raise ValueError(f"planes must be 'below' or 'both', got {self.planes!r}")
        if not self.conductors or not any(not c.grounded for c in self.conductors):
            raise ValueError("a cross-section needs at least one signal conductor")
        if self.planes == "both" and not self.dielectrics:
            raise ValueError("a stripline needs dielectric layers between its planes")
        if self.planes == "both" and self.soldermask is not None:
            raise ValueError("soldermask applies to microstrip only")
        top = self.stack_height_mm
        for c in self.conductors:
            lo, hi = c.y_range_mm
            if lo <= 0 or (self.planes == "both" and hi >= top):
                raise ValueError("conductors must lie strictly between the reference planes")
            if self.soldermask is not None and lo < top - TOUCH_MM:
                raise ValueError("with soldermask every conductor must sit on top of the stack")
        self._check_no_overlap()

    def _check_no_overlap(self):
        boxes = [(c.x_range_mm, c.y_range_mm) for c in self.conductors]
        for i, ((x0, x1), (y0, y1)) in enumerate(boxes):
            for (u0, u1), (w0, w1) in boxes[i + 1:]:
                if x0 < u1 and u0 < x1 and y0 <= w1 and w0 <= y1:
                    raise ValueError("conductors overlap")

    @property
    def stack_height_mm(self) -> float:
        return float(sum(d.thickness_mm for d in self.dielectrics))

    @property
    def boundaries_mm(self) -> np.ndarray:
        """Heights of the tops of the dielectric layers."""
        return np.cumsum([d.thickness_mm for d in self.dielectrics])

    @property
    def signal_indices(self) -> tuple[int, ...]:
        return tuple(i for i, c in enumerate(self.conductors) if not c.grounded)

    def er_at(self, x_mm: np.ndarray, y_mm: np.ndarray) -> np.ndarray:
        """Relative permittivity at points (vectorised)."""
        x_mm = np.asarray(x_mm, dtype=float)
        y_mm = np.asarray(y_mm, dtype=float)
        er_layers = np.array([d.er for d in self.dielectrics] + [self.cover_er])
        layer = np.searchsorted(self.boundaries_mm, y_mm, side="right")
        er = er_layers[np.minimum(layer, len(er_layers) - 1)]
        if self.soldermask is not None:
            er = np.where(y_mm < self.mask_surface_mm(x_mm), np.where(y_mm >= self.stack_height_mm,
                                                                       self.soldermask.er, er), er)
        return er

    def mask_surface_mm(self, x_mm: np.ndarray) -> np.ndarray:
        """Height of the soldermask surface over x (step outline around each trace)."""
        mask = self.soldermask
        top = self.stack_height_mm
        surface = np.full(np.shape(x_mm), top + mask.thickness_mm)
        over = mask.over_trace_mm
        for c in self.conductors:
            x0, x1 = c.x_range_mm
            inside = (x_mm >= x0 - over) & (x_mm <= x1 + over)
            surface = np.where(inside, np.maximum(surface, c.y_range_mm[1] + over), surface)
        return surface

    def mask_outline_mm(self, x_limit_mm: tuple[float, float]) -> np.ndarray:
        """Vertices of the soldermask surface polyline from x_limit_mm[0] to x_limit_mm[1]."""
        mask = self.soldermask
        over = mask.over_trace_mm
        edges = sorted({x for c in self.conductors for x in (c.x_range_mm[0] - over, c.x_range_mm[1] + over)})
        xs = np.array([x_limit_mm[0], *edges, x_limit_mm[1]])
        mids = (xs[:-1] + xs[1:]) / 2
        level = self.mask_surface_mm(mids)
        pts = [(xs[0], level[0])]
        for k in range(1, len(xs) - 1):
            if level[k] != level[k - 1]:
                pts += [(xs[k], level[k - 1]), (xs[k], level[k])]
        pts.append((xs[-1], level[-1]))
        return np.asarray(pts)


def _as_dielectrics(layers: Iterable) -> list[Dielectric]:
    return [d if isinstance(d, Dielectric) else Dielectric(float(d[0]), float(d[1])) for d in layers]


def traces_on_layer(dielectrics_below: Sequence, dielectrics_above: Sequence, planes: str,
                    widths_mm: Sequence[float], spacings_mm: Sequence[float], thickness_mm: float,
                    soldermask: Soldermask | tuple[float, float] | None = None,
                    top_widths_mm: Sequence[float] | None = None) -> CrossSection:
    """Side-by-side traces on one copper layer, built from a stackup.

    ``dielectrics_below``: (thickness_mm, er) or Dielectric from the lower plane up
    to the trace base. ``dielectrics_above``: from the trace base outward, up to
    the upper plane (``planes='both'``) or the board surface (``'below'``; may be
    empty: air or soldermask then sits on the laminate). ``spacings_mm`` are
    edge-to-edge gaps between consecutive traces (len(widths) - 1 of them).
    """
    below = _as_dielectrics(dielectrics_below)
    above = _as_dielectrics(dielectrics_above)
    if not below:
        raise ValueError("a trace needs at least one dielectric layer between it and the plane")
    if len(spacings_mm) != len(widths_mm) - 1:
        raise ValueError("give one spacing fewer than widths")
    if any(s <= 0 for s in spacings_mm):
        raise ValueError("spacings must be positive")
    if isinstance(soldermask, tuple):
        soldermask = Soldermask(*soldermask)
    if planes == "below" and above and soldermask is not None:
        raise ValueError("give the soldermask either as a layer above or as soldermask, not both")
    base = sum(d.thickness_mm for d in below)
    tops = top_widths_mm if top_widths_mm is not None else [None] * len(widths_mm)
    x = 0.0
    centres = []
    for k, w in enumerate(widths_mm):
        if k:
            x += widths_mm[k - 1] / 2 + spacings_mm[k - 1] + w / 2
        centres.append(x)
    mid = (centres[0] + centres[-1]) / 2
    conductors = tuple(Conductor.trace(c - mid, base, w, thickness_mm, t) for c, w, t in zip(centres, widths_mm, tops))
    return CrossSection(conductors, tuple(below + above), planes, soldermask)
