"""The board outline from the profile Gerber (X2 ``Profile`` function, job file, or file name)."""
from __future__ import annotations

import re

import numpy as np
import shapely
from gerbonara import graphic_objects as go
from gerbonara.utils import MM

from scanner.errors import InputError
from scanner.importers.arcs import flatten_arcs
from scanner.importers.diagnostics import FileWarnings
from scanner.importers.gerber_copper import parse_gerber
from scanner.importers.sources import SourceFile
from scanner.input_limits import SEGMENTS, check_count, limit

_PROFILE_NAME = re.compile(r"edge[._-]?cuts|outline|profile|board[._-]?edge|\.gko$|\.gm1$", re.I)


def find_profile(gerbers: list[SourceFile], job_functions: dict | None) -> SourceFile | None:
    job_functions = job_functions or {}
    for src in gerbers:
        if src.file_function and src.file_function[0] == "Profile":
            return src
    for src in gerbers:
        if job_functions.get(src.path.name, ("",))[0] == "Profile":
            return src
    named = [s for s in gerbers if not s.file_function and _PROFILE_NAME.search(s.path.name)]
    return named[0] if len(named) == 1 else None


def read_outline(src: SourceFile) -> tuple[shapely.Geometry | None, FileWarnings]:
    """Polygon enclosed by the profile's draws (largest ring, inner rings as cut-outs); None if none closes.

    The outline is optional, so an unreadable profile is a warning, not an error.
    """
    log = FileWarnings(src.name)
    try:
        gerber, log = parse_gerber(src.path, src.name)
        lines = _profile_lines(gerber)
    except InputError as exc:
        log.add(f"profile not used: {exc.message}", exc.line)
        return None, log
    if not lines:
        log.add("profile file draws no outline")
        return None, log
    polygons = shapely.get_parts(shapely.polygonize(shapely.linestrings(lines) if len(lines) > 1
                                                    else [shapely.LineString(lines[0])]))
    if not len(polygons):
        log.add("profile outline does not close; board area taken from the copper extent")
        return None, log
    areas = shapely.area(polygons)
    outer = polygons[int(np.argmax(areas))]
    inner = [p for p in polygons if p is not outer and shapely.contains(outer, p)]
    return (shapely.difference(outer, shapely.union_all(inner)) if inner else outer), log


def _profile_lines(gerber) -> list[np.ndarray]:
    """The profile's draws and region edges as point rows (mm); more points than the segment limit is an error."""
    scale = gerber.unit.convert_to(MM, 1.0)
    lines, points, most = [], 0, limit(SEGMENTS)
    for obj in gerber.objects:
        if isinstance(obj, go.Line):
            lines.append(np.array([(obj.x1, obj.y1), (obj.x2, obj.y2)]) * scale)
        elif isinstance(obj, go.Arc):
            _, px, py = flatten_arcs([obj.x1], [obj.y1], [obj.x2], [obj.y2], [obj.x1 + obj.cx], [obj.y1 + obj.cy],
                                     [obj.clockwise])
            lines.append(np.column_stack([px, py]) * scale)
        elif isinstance(obj, go.Region):
            lines.append(np.vstack([obj.outline, obj.outline[:1]]) * scale)
        else:
            continue
        points += len(lines[-1])
        if points > most:
            check_count(points, SEGMENTS, "outline points")
    return lines
