"""Gerber apertures as shapely outlines (mm, centred on the origin) and as drawing widths."""
from __future__ import annotations

import numpy as np
import shapely
from gerbonara import graphic_primitives as gp
from gerbonara.utils import MM

from scanner.importers.arcs import flatten_arcs, ring_points

#: circle resolution for pads and drawn ends (segments per quarter turn)
QUAD_SEGS = 8


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
    poly = shapely.Polygon(ring)
    if not shapely.is_valid(poly):
        poly = shapely.make_valid(poly, method="structure", keep_collapsed=False)
    return poly


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
    poly = prim.to_arc_poly()
    return arc_poly_polygon(poly.outline, poly.arc_centers or [])


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
