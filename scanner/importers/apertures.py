"""Gerber apertures as shapely outlines (mm, centred on the origin) and as drawing widths."""
from __future__ import annotations

import dataclasses
import math

import numpy as np
import shapely
import shapely.affinity
from gerbonara import graphic_primitives as gp
from gerbonara.aperture_macros import primitive as macro_primitive
from gerbonara.apertures import ApertureMacroInstance, PolygonAperture
from gerbonara.utils import MM

from scanner.importers import thermal
from scanner.errors import InputError
from scanner.importers.arcs import flatten_arcs, ring_points
from scanner.importers.crossings import self_meetings
from scanner.input_limits import range_problem

thermal.register()

#: circle resolution for pads and drawn ends (segments per quarter turn)
QUAD_SEGS = 8
#: vertices of a polygon aperture or macro polygon (the Gerber specification allows 3 to 12)
POLYGON_VERTICES = (3, 12)
#: rings of a moire macro primitive (a deprecated target mark; real ones have a handful)
MAX_MOIRE_RINGS = 100
#: primitives one aperture macro may draw (real macros have a few; each is merged into the outline)
MAX_MACRO_PRIMITIVES = 1000


def arc_poly_polygon(outline, arc_centers) -> shapely.Geometry:
    """A gerbonara outline (points plus per-edge ``(clockwise, (cx, cy))`` or None) as a valid polygon (mm)."""
    points = np.asarray(outline, dtype=np.float64).reshape(-1, 2)
    if len(points) > 1 and np.array_equal(points[0], points[-1]):
        points = points[:-1]
    n = len(points)
    cw = np.full(n, np.nan)
    cx = np.zeros(n)
    cy = np.zeros(n)
    for i, arc in enumerate(arc_centers[:n]):
        if arc and arc[0] is not None:
            cw[i] = 1.0 if arc[0] else 0.0
            cx[i], cy[i] = arc[1]
    if n < 3 and np.isnan(cw).all():
        return shapely.Polygon()
    ring = ring_points(points, cw, cx, cy)
    if len(ring) < 3:
        return shapely.Polygon()
    _check_repair_cost(ring)
    poly = shapely.Polygon(ring)
    if not shapely.is_valid(poly):
        poly = shapely.make_valid(poly, method="structure", keep_collapsed=False)
    return poly


#: outlines with at most this many vertices are checked and repaired by GEOS directly (cheap at any tangle)
DIRECT_REPAIR_VERTICES = 256
#: an outline may meet itself at most at this many points, or at as many as it has vertices if more: beyond,
#: checking and repairing it (GEOS) would cost far more than linear time
MIN_MEETINGS_REPAIRED = 10_000
#: candidate edge pairs examined per vertex (plus a fixed allowance) before an outline counts as too tangled
PAIRS_PER_VERTEX = 50
PAIRS_ALLOWANCE = 5_000_000


def _check_repair_cost(ring: np.ndarray) -> None:
    """InputError for an outline that meets itself too often to be checked and repaired in about linear time."""
    n = len(ring)
    if n <= DIRECT_REPAIR_VERTICES:
        return
    most = max(MIN_MEETINGS_REPAIRED, n)
    found, complete = self_meetings(ring, most, PAIRS_PER_VERTEX * n + PAIRS_ALLOWANCE)
    where = f"outline of {n:,} points starting at ({ring[0, 0]:.4f}, {ring[0, 1]:.4f}) mm"
    if not complete:
        raise InputError(f"{where} is too tangled to check: its edges overlap in more than "
                         f"{PAIRS_PER_VERTEX * n + PAIRS_ALLOWANCE:,} pairs")
    if found > most:
        raise InputError(f"{where} crosses or touches itself at more than {most:,} points; a real outline "
                         "crosses itself a few times at most (the file is damaged or hostile)")


def primitive_geometry(prim) -> shapely.Geometry:
    """One gerbonara graphic primitive (already in mm) as a polygon."""
    if isinstance(prim, gp.Circle):
        return shapely.Point(prim.x, prim.y).buffer(prim.r, quad_segs=QUAD_SEGS)
    if isinstance(prim, gp.Line):
        line = shapely.LineString([(prim.x1, prim.y1), (prim.x2, prim.y2)])
        return line.buffer(prim.width / 2, quad_segs=QUAD_SEGS)
    if isinstance(prim, gp.Arc):
        counts, px, py = flatten_arcs([prim.x1], [prim.y1], [prim.x2], [prim.y2], [prim.cx], [prim.cy], [prim.clockwise])
        return shapely.LineString(np.column_stack([px, py])).buffer(prim.width / 2, quad_segs=QUAD_SEGS)
    if isinstance(prim, gp.ArcPoly):
        return arc_poly_polygon(prim.outline, prim.arc_centers or [])
    if isinstance(prim, gp.Rectangle):
        # gerbonara 1.5's Rectangle.to_arc_poly gives the axis-aligned bounding box at angles other than
        # multiples of 90°; rotation is counter-clockwise about the centre (as rotate_point(-angle) uses it)
        box = shapely.box(prim.x - prim.w / 2, prim.y - prim.h / 2, prim.x + prim.w / 2, prim.y + prim.h / 2)
        return shapely.affinity.rotate(box, prim.rotation, origin=(prim.x, prim.y), use_radians=True)
    poly = prim.to_arc_poly()
    return arc_poly_polygon(poly.outline, poly.arc_centers or [])


def aperture_problem(aperture) -> str | None:
    """Why flashing ``aperture`` cannot give real copper (too many vertices, rings or primitives, a size that is
    negative, not a number or beyond the physical range, a shape the parser cannot draw); None if it can.
    Checked when the aperture is defined, counts first so that no huge outline is ever built."""
    counts = []
    if isinstance(aperture, PolygonAperture):
        counts.append(("polygon vertices", aperture.n_vertices, *POLYGON_VERTICES))
    elif isinstance(aperture, ApertureMacroInstance):
        binding = dict(enumerate(aperture.parameters, start=1))
        for prim in aperture.macro.primitives:
            if isinstance(prim, macro_primitive.Polygon):
                counts.append(("polygon vertices", prim.n_vertices.calculate(binding), *POLYGON_VERTICES))
            elif isinstance(prim, macro_primitive.Moire):
                counts.append(("moire rings", prim.num_circles.calculate(binding), 0, MAX_MOIRE_RINGS))
    for what, count, low, high in counts:
        if not low <= count <= high:
            return f"aperture D{aperture.original_number} asks for {count:g} {what}; allowed {low} to {high}"
    try:
        primitives = aperture.flash(0.0, 0.0, MM, True)
    except Exception as exc:  # noqa: BLE001 - gerbonara 1.5 fails on some macro primitives (moire)
        return f"aperture D{aperture.original_number} cannot be drawn ({type(exc).__name__}: {exc})"
    if len(primitives) > MAX_MACRO_PRIMITIVES:
        return (f"aperture D{aperture.original_number} is made of {len(primitives)} primitives, more than "
                f"{MAX_MACRO_PRIMITIVES}")
    what = f"aperture D{aperture.original_number} size"
    for prim in primitives:
        for f in dataclasses.fields(prim):
            values = _numbers(getattr(prim, f.name))
            if values and f.name in _SIZE_FIELDS and (problem := range_problem("aperture size", min(values), what)):
                return problem
    try:
        corners = np.array([prim.bounding_box() for prim in primitives], dtype=np.float64).reshape(-1, 2)
    except (TypeError, ValueError):  # a primitive without points (an empty outline) has no box
        corners = np.array([[math.nan, math.nan]])
    if len(corners):
        extent = max(float(np.ptp(corners[:, 0])), float(np.ptp(corners[:, 1])), float(np.abs(corners).max()))
        return range_problem("aperture size", extent if np.isfinite(corners).all() else math.nan, what)
    return None


#: primitive fields holding a size (radius, width, height), which cannot be negative
_SIZE_FIELDS = {"r", "w", "h", "width"}


def _numbers(value) -> list[float]:
    """The numbers in a primitive's field (nested tuples and lists of points); NaN stays NaN."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return [float(value)]
    if isinstance(value, (list, tuple)):
        return [v for item in value for v in _numbers(item)]
    return []


def aperture_outline(aperture) -> shapely.Geometry:
    """The area a flash of ``aperture`` at (0, 0) covers, in mm (clear primitives cut in drawing order)."""
    shape = shapely.Polygon()
    for prim in aperture.flash(0.0, 0.0, MM, True):
        geom = primitive_geometry(prim)
        shape = shapely.union(shape, geom) if prim.polarity_dark else shapely.difference(shape, geom)
    return shape


def swept_width_mm(outline: shapely.Geometry, dx: np.ndarray, dy: np.ndarray) -> np.ndarray:
    """Width of the band a non-circular aperture sweeps along direction (dx, dy): its extent across the draw."""
    hull = np.asarray(shapely.get_coordinates(shapely.convex_hull(outline)))
    if len(hull) == 0:
        return np.zeros(len(dx))
    length = np.hypot(dx, dy)
    safe = np.where(length > 0, length, 1.0)
    nx, ny = -dy / safe, dx / safe
    proj = hull[:, :1] * nx[None, :] + hull[:, 1:] * ny[None, :]
    return proj.max(axis=0) - proj.min(axis=0)
