"""The board outline: from the profile Gerber (X2 ``Profile``, job file, name), else from a mechanical layer.

A profile the files declare (X2 or job file) is trusted when its draws close; one found by
its name must also hold the board's evidence (drill hits, else netlist points). Mechanical
and drawing layers mix the outline with dimensions, frames, title blocks and notes, so from
them the outline is the smallest closed shape that holds the evidence.
Nothing here stops an import: the outline is optional, and every failure is a warning.
"""
from __future__ import annotations

import re
import numpy as np
import shapely
from gerbonara import graphic_objects as go
from gerbonara.utils import MM

from scanner.errors import InputError, reading
from scanner.importers.arcs import flatten_arcs
from scanner.importers.board_extent import OUTLINE_FROM, BoardExtent
from scanner.importers.diagnostics import FileWarnings
from scanner.importers.gerber_copper import parse_gerber
from scanner.importers.layer_names import name_words
from scanner.importers.sources import SourceFile
from scanner.input_limits import SEGMENTS, check_count, limit
from scanner.memory import check_memory

_PROFILE_WORDS = {"edge", "edgecuts", "outline", "outlline", "profile", "boundary", "contour", "dimension",
                  "dim", "border", "rout", "route", "keepout"}
_PROFILE_EXT = re.compile(r"\.(?:gko|gml|gm1|dim|mil|outline|bor|oln)$", re.I)
_MECHANICAL = re.compile(r"\.(?:gm\d{1,2}|gd\d{0,2}|fab|drd)$|mech|fab|drawing|board", re.I)

#: outline points are snapped to this grid (mm) so ends that should meet do meet
SNAP_MM = 1e-3
#: when the draws do not close, gaps up to twice this (mm) between their ends are bridged
GAP_MM = 0.1
#: bytes per outline point while the grown draws are merged (an upper estimate; each point grows to about 8)
BYTES_PER_UNION_POINT = 200
#: a candidate outline must hold this share of the board's evidence points ...
EVIDENCE_SHARE = 0.95
#: ... each counted inside when within this distance (mm) of it
EVIDENCE_MARGIN_MM = 0.5


def profile_candidates(gerbers: list[SourceFile], job_functions: dict | None) -> list[tuple[SourceFile, str]]:
    """Non-copper Gerber files that may hold the outline, best first, each with "declared", "named" or
    "mechanical"."""
    job_functions = job_functions or {}
    out = []
    for src in gerbers:
        function = src.file_function or job_functions.get(src.path.name)
        if function and function[0] == "Profile":
            out.append((0, src, "declared"))
        elif function:
            continue  # X2 or the job file says what it is, and it is not the profile
        elif _PROFILE_EXT.search(src.path.name) or _PROFILE_WORDS & set(name_words(src.path.name)):
            out.append((1, src, "named"))
        elif _MECHANICAL.search(src.path.name):
            out.append((2, src, "mechanical"))
    out.sort(key=lambda t: (t[0], t[1].rel))
    return [(src, how) for _, src, how in out]


def find_outline(candidates: list[tuple[SourceFile, str]], evidence: np.ndarray
                 ) -> tuple[BoardExtent | None, list[FileWarnings]]:
    """The first candidate giving an outline that holds the evidence points ((N, 2) mm; may be empty), as the
    board's extent, and the candidates' warnings.

    The outline is the smallest closed shape holding the evidence; a profile the files declare gives its
    largest shape when none holds it (or there is no evidence), one found by name gives none. From a
    profile file, shapes inside the outline are cut-outs. A mechanical file without evidence gives none.
    """
    logs = []
    for src, how in candidates:
        log = FileWarnings(src.name)
        logs.append(log)
        if how == "mechanical" and not len(evidence):
            continue
        with reading(src.name):
            shape = _outline_from(src, how, evidence, log)
        if shape is not None:
            return BoardExtent(shape, f"{OUTLINE_FROM} {src.name}"), logs
        if how == "mechanical":
            logs.pop()  # a drawing without the outline is no news
    return None, logs


def _outline_from(src: SourceFile, how: str, evidence: np.ndarray, log: FileWarnings) -> shapely.Geometry | None:
    try:
        gerber, parse_log = parse_gerber(src.path, src.name)
        lines = _profile_lines(gerber)
        polygons = _closed_shapes(lines)
        if not _holding(polygons, evidence).any():
            polygons = np.concatenate([polygons, _bridged_shapes(lines)])
    except InputError as exc:
        log.add(f"profile not used: {exc.message}", exc.line)
        return None
    except (shapely.errors.ShapelyError, ValueError) as exc:
        log.add(f"profile not used: its draws could not be joined into shapes ({type(exc).__name__})")
        return None
    if how != "mechanical":
        log.absorb(parse_log)
    if not len(polygons):
        if how != "mechanical":
            log.add("profile draws no closed outline; the board's extent is taken from its drill hits and copper")
        return None
    holds = _holding(polygons, evidence)
    if holds.any():
        chosen = int(np.argmin(np.where(holds, shapely.area(polygons), np.inf)))
    elif how == "declared":
        chosen = int(np.argmax(shapely.area(polygons)))
    else:
        if how == "named":
            log.add(f"profile's shapes hold under {EVIDENCE_SHARE:.0%} of the drill hits (or netlist points); "
                    "not used (another board's profile, or other units?)")
        return None
    outer = polygons[chosen]
    if how == "mechanical":
        return outer
    inner = np.delete(polygons, chosen)
    inner = inner[shapely.contains(outer, inner)] if len(inner) else inner
    return shapely.difference(outer, shapely.union_all(inner)) if len(inner) else outer


def _holding(polygons: np.ndarray, evidence: np.ndarray) -> np.ndarray:
    """Per polygon: does it hold at least EVIDENCE_SHARE of the evidence points (within the margin)?"""
    if not len(evidence):
        return np.ones(len(polygons), dtype=bool)
    points = shapely.points(evidence)
    grown = shapely.buffer(polygons, EVIDENCE_MARGIN_MM, quad_segs=2)
    poly_idx, _ = shapely.STRtree(points).query(grown, predicate="contains")
    held = np.bincount(poly_idx, minlength=len(polygons))
    return held >= EVIDENCE_SHARE * len(evidence)


def _closed_shapes(lines: list[np.ndarray]) -> np.ndarray:
    """Every area the lines enclose (polygonize over ends snapped to SNAP_MM; crossing lines noded if needed)."""
    if not lines:
        return np.zeros(0, dtype=object)
    coords = np.round(np.vstack(lines) / SNAP_MM) * SNAP_MM
    index = np.repeat(np.arange(len(lines)), [len(line) for line in lines])
    strings = shapely.linestrings(coords, indices=index)
    strings = strings[shapely.length(strings) > 0]
    polygons = shapely.get_parts(shapely.polygonize(strings))
    if not len(polygons):
        polygons = shapely.get_parts(shapely.polygonize(shapely.get_parts(shapely.node(shapely.multilinestrings(
            strings)))))
    polygons = polygons[~shapely.is_empty(polygons)] if len(polygons) else polygons
    return polygons[shapely.area(polygons) > 0] if len(polygons) else polygons


def _bridged_shapes(lines: list[np.ndarray]) -> np.ndarray:
    """The areas the lines enclose once grown by GAP_MM (bridging small gaps, as sloppy outlines have), each
    grown back to the lines' centre."""
    if not lines:
        return np.zeros(0, dtype=object)
    index = np.repeat(np.arange(len(lines)), [len(line) for line in lines])
    check_memory(len(index) * BYTES_PER_UNION_POINT * 8, f"closing the gaps of {len(lines):,} outline draws")
    grown = shapely.union_all(shapely.buffer(shapely.linestrings(np.vstack(lines), indices=index), GAP_MM,
                                             quad_segs=2))
    holes = [shapely.Polygon(ring) for part in shapely.get_parts(grown) for ring in part.interiors]
    if not holes:
        return np.zeros(0, dtype=object)
    return shapely.buffer(np.asarray(holes, dtype=object), GAP_MM, quad_segs=2, join_style="mitre")


def _profile_lines(gerber) -> list[np.ndarray]:
    """Draws, arcs and region edges as point rows (mm) of any length; more points than the segment limit is
    an error."""
    scale = gerber.unit.convert_to(MM, 1.0)
    lines = [np.array([(o.x1, o.y1), (o.x2, o.y2)]) * scale for o in gerber.objects if type(o) is go.Line]
    arcs = [o for o in gerber.objects if type(o) is go.Arc]
    if arcs:
        a = np.array([(o.x1, o.y1, o.x2, o.y2, o.x1 + o.cx, o.y1 + o.cy) for o in arcs], dtype=float) * scale
        counts, px, py = flatten_arcs(*a.T, [o.clockwise for o in arcs])
        lines += np.split(np.column_stack([px, py]), np.cumsum(counts)[:-1])
    for obj in gerber.objects:
        if type(obj) is go.Region and len(obj.outline) > 2:
            ring = np.asarray(obj.outline, dtype=float) * scale
            lines.append(np.vstack([ring, ring[:1]]))
    points = sum(len(line) for line in lines)
    if points > limit(SEGMENTS):
        check_count(points, SEGMENTS, "outline points")
    return lines
