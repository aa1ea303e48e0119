"""ODB++ standard symbols as shapely outlines in millimetres, centred on the origin.

Sizes in a symbol name are microns in metric features files and mils in inch ones
(``size_mm`` is the factor). The shapes follow the ODB++ standard symbol list as we
know it; the thermal spoke ends and the corner numbering of rounded and chamfered
rectangles (1 top right, counter-clockwise) are from memory.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

import shapely
from shapely import affinity

from scanner.importers.apertures import QUAD_SEGS
from scanner.input_limits import range_problem

_NUM = r"(\d+(?:\.\d*)?|\.\d+)"
_PATTERNS = {
    "round": re.compile(rf"^r{_NUM}$"),
    "square": re.compile(rf"^s{_NUM}$"),
    "rect": re.compile(rf"^rect{_NUM}x{_NUM}(?:x([rc]){_NUM}(?:x([1-4]{{1,4}}))?)?$"),
    "oval": re.compile(rf"^oval{_NUM}x{_NUM}$"),
    "diamond": re.compile(rf"^di{_NUM}x{_NUM}$"),
    "octagon": re.compile(rf"^oct{_NUM}x{_NUM}x{_NUM}$"),
    "ellipse": re.compile(rf"^el{_NUM}x{_NUM}$"),
    "round_donut": re.compile(rf"^donut_r{_NUM}x{_NUM}$"),
    "square_donut": re.compile(rf"^donut_s{_NUM}x{_NUM}$"),
    "hex_l": re.compile(rf"^hex_l{_NUM}x{_NUM}x{_NUM}$"),
    "hex_s": re.compile(rf"^hex_s{_NUM}x{_NUM}x{_NUM}$"),
    "triangle": re.compile(rf"^tri{_NUM}x{_NUM}$"),
    "thermal": re.compile(rf"^th[rs]{_NUM}x{_NUM}x{_NUM}x(\d+)x{_NUM}$"),
    "null": re.compile(r"^null\d*$"),
}
#: sizes in names we do not model: the leading ``<w>[x<h>]`` gives a stand-in box
_ANY_SIZED = re.compile(rf"^[a-z_]+?{_NUM}(?:x{_NUM})?(?:x.*)?$")
#: spokes of a thermal symbol (real ones have 2 to 8)
MAX_THERMAL_SPOKES = 64


@dataclass(frozen=True)
class Symbol:
    """A symbol ready to place: outline (mm, at the origin) and, for round ones, the diameter."""

    name: str
    outline: shapely.Geometry
    round_mm: float | None = None
    approximate: bool = False  # drawn as a stand-in box (a symbol kind we do not model)


def _box(w, h):
    return shapely.box(-w / 2, -h / 2, w / 2, h / 2)


def _poly(points):
    return shapely.Polygon(points)


def _corner_squares(w, h, r, corners):
    """Squares of side ``r`` at the corners not listed, to restore square corners after rounding all."""
    signs = {"1": (1, 1), "2": (-1, 1), "3": (-1, -1), "4": (1, -1)}
    keep = [signs[c] for c in "1234" if c not in corners]
    return [shapely.box(min(sx * w / 2, sx * (w / 2 - r)), min(sy * h / 2, sy * (h / 2 - r)),
                        max(sx * w / 2, sx * (w / 2 - r)), max(sy * h / 2, sy * (h / 2 - r))) for sx, sy in keep]


def _rect(w, h, style, r, corners):
    if not style or r <= 0:
        return _box(w, h)
    r = min(r, w / 2, h / 2)
    if style == "r":
        shape = _box(w - 2 * r, h - 2 * r).buffer(r, quad_segs=QUAD_SEGS)
    else:
        x, y = w / 2, h / 2
        shape = _poly([(x, y - r), (x - r, y), (-x + r, y), (-x, y - r), (-x, -y + r), (-x + r, -y),
                       (x - r, -y), (x, -y + r)])
    return shapely.union_all([shape, *_corner_squares(w, h, r, corners or "1234")])


def _thermal(od, idd, angle_deg, spokes, gap):
    ring = shapely.Point(0, 0).buffer(od / 2, quad_segs=QUAD_SEGS).difference(
        shapely.Point(0, 0).buffer(idd / 2, quad_segs=QUAD_SEGS))
    if spokes <= 0 or gap <= 0:
        return ring
    cut = shapely.box(0, -gap / 2, od, gap / 2)
    gaps = [affinity.rotate(cut, angle_deg + k * 360.0 / spokes, origin=(0, 0)) for k in range(spokes)]
    return ring.difference(shapely.union_all(gaps))


def standard_symbol(name: str, size_mm: float) -> Symbol | None:
    """The outline of a standard symbol, or None when ``name`` is not one we recognise."""
    low = name.lower()
    for kind, pattern in _PATTERNS.items():
        m = pattern.match(low)
        if m:
            return _build(kind, m.groups(), size_mm, name)
    m = _ANY_SIZED.match(low)
    if m:
        w = _size(m.group(1), size_mm, name)
        h = _size(m.group(2), size_mm, name) if m.group(2) else w
        return Symbol(name, _box(w, h), approximate=True)
    return None


def _size(text: str, k: float, name: str) -> float:
    """A size in a symbol's name, in mm; ValueError when outside the physical range of an aperture."""
    if (problem := range_problem("aperture size", float(text) * k, f"symbol {name!r} size")) is not None:
        raise ValueError(problem)
    return float(text) * k


def _build(kind: str, groups: tuple, k: float, name: str) -> Symbol:
    def size(i: int) -> float:
        return _size(groups[i], k, name)

    if kind == "round":
        return Symbol(name, shapely.Point(0, 0).buffer(size(0) / 2, quad_segs=QUAD_SEGS), round_mm=size(0))
    if kind == "square":
        return Symbol(name, _box(size(0), size(0)))
    if kind == "rect":
        radius = size(3) if groups[3] is not None else 0.0
        return Symbol(name, _rect(size(0), size(1), groups[2], radius, groups[4]))
    if kind == "oval":
        w, h = size(0), size(1)
        if math.isclose(w, h):
            return Symbol(name, shapely.Point(0, 0).buffer(w / 2, quad_segs=QUAD_SEGS))
        half = abs(w - h) / 2
        axis = [(-half, 0), (half, 0)] if w > h else [(0, -half), (0, half)]
        return Symbol(name, shapely.LineString(axis).buffer(min(w, h) / 2, quad_segs=QUAD_SEGS))
    if kind == "diamond":
        w, h = size(0), size(1)
        return Symbol(name, _poly([(w / 2, 0), (0, h / 2), (-w / 2, 0), (0, -h / 2)]))
    if kind == "octagon":
        x, y, r = size(0) / 2, size(1) / 2, size(2)
        return Symbol(name, _poly([(x, y - r), (x - r, y), (-x + r, y), (-x, y - r), (-x, -y + r), (-x + r, -y),
                                   (x - r, -y), (x, -y + r)]))
    if kind == "ellipse":
        circle = shapely.Point(0, 0).buffer(0.5, quad_segs=4 * QUAD_SEGS)
        return Symbol(name, affinity.scale(circle, size(0), size(1), origin=(0, 0)))
    if kind == "round_donut":
        return Symbol(name, shapely.Point(0, 0).buffer(size(0) / 2, quad_segs=QUAD_SEGS).difference(
            shapely.Point(0, 0).buffer(size(1) / 2, quad_segs=QUAD_SEGS)))
    if kind == "square_donut":
        return Symbol(name, _box(size(0), size(0)).difference(_box(size(1), size(1))))
    if kind == "hex_l":
        w, h, r = size(0), size(1), size(2)
        return Symbol(name, _poly([(-w / 2, 0), (-w / 2 + r, h / 2), (w / 2 - r, h / 2), (w / 2, 0),
                                   (w / 2 - r, -h / 2), (-w / 2 + r, -h / 2)]))
    if kind == "hex_s":
        w, h, r = size(0), size(1), size(2)
        return Symbol(name, _poly([(0, -h / 2), (w / 2, -h / 2 + r), (w / 2, h / 2 - r), (0, h / 2),
                                   (-w / 2, h / 2 - r), (-w / 2, -h / 2 + r)]))
    if kind == "triangle":
        b, h = size(0), size(1)
        return Symbol(name, _poly([(-b / 2, -h / 2), (b / 2, -h / 2), (0, h / 2)]))
    if kind == "thermal":
        if int(groups[3]) > MAX_THERMAL_SPOKES:
            raise ValueError(f"thermal symbol {name!r} has {int(groups[3])} spokes, more than {MAX_THERMAL_SPOKES}")
        return Symbol(name, _thermal(size(0), size(1), float(groups[2]), int(groups[3]), size(4)))
    return Symbol(name, shapely.Polygon())


def placed(outline: shapely.Geometry, rotation_deg: float, mirror: bool, scale: float) -> shapely.Geometry:
    """The outline mirrored in x (first), rotated clockwise by ``rotation_deg`` and scaled, about the origin."""
    shape = outline
    if scale != 1.0:
        shape = affinity.scale(shape, scale, scale, origin=(0, 0))
    if mirror:
        shape = affinity.scale(shape, -1.0, 1.0, origin=(0, 0))
    if rotation_deg % 360.0:
        shape = affinity.rotate(shape, -rotation_deg, origin=(0, 0))
    return shape
