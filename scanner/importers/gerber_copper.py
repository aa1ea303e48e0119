"""One copper Gerber file (X1 or X2) mapped to trace segments and copper shapes in millimetres."""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import shapely
from gerbonara import graphic_objects as go
from gerbonara.apertures import CircleAperture
from gerbonara.rs274x import GerberFile, GerberParser
from gerbonara.utils import Inch, MM

from scanner.errors import InputError, printable, reading
from scanner.importers.apertures import (QUAD_SEGS, aperture_outline, aperture_problem, arc_poly_polygon,
                                         swept_width_mm)
from scanner.importers.arcs import flatten_arcs
from scanner.importers.diagnostics import FileWarnings
from scanner.input_limits import OBJECTS, SEGMENTS, check_count, coordinate_problem, limit, read_input
from scanner.memory import check_memory, stage
from scanner.spatial_query import check_index_memory, query_all

#: draws shorter than this (mm) are flashes in disguise and become pads
ZERO_LENGTH_MM = 1e-6
#: zero-width draws beyond this share of a layer's draws refuse the file (its widths are lost, not hairlines)
ZERO_WIDTH_MAX_SHARE = 0.5

#: exceptions gerbonara raises on malformed input
PARSER_ERRORS = (SyntaxError, ValueError, KeyError, IndexError, TypeError, AttributeError,
                 AssertionError, ZeroDivisionError, ArithmeticError)

#: decimal digits a Gerber coordinate format may have: the specification says 4 to 6 (as quoted in the
#: gerber-types documentation); 3 and 7 are read too, as older exporters and gerbonara use them
FS_DECIMALS = (3, 7)

_GERBONARA_WHERE = re.compile(r'^(?:.*?):(\d+)\s+(?:"[^"]*":\s*)?(.*)$', re.S)


@dataclass
class CopperArtwork:
    """Copper from one file. Net names are still strings (None where the file gives none)."""

    path: Path
    file_attributes: dict
    x0: np.ndarray
    y0: np.ndarray
    x1: np.ndarray
    y1: np.ndarray
    width: np.ndarray
    segment_net: np.ndarray  # object array: str or None
    geometry: np.ndarray  # object array of shapely geometries
    shape_net: np.ndarray
    role: np.ndarray
    log: FileWarnings
    #: negative image (``%IPNEG*%`` or X2 ``.FilePolarity,Negative``): what is drawn is where copper is not
    negative: bool = False

    @property
    def has_net_attributes(self) -> bool:
        return any(n is not None for n in self.segment_net) or any(n is not None for n in self.shape_net)


#: gerbonara unit -> mm per file unit
MM_PER_UNIT = {MM: 1.0, Inch: Inch.convert_to(MM, 1.0)}


def extent_mm(obj) -> float:
    """Largest absolute coordinate (mm) of a gerbonara graphic object, arc centres and region vertices included."""
    kind = type(obj)
    if kind is go.Line:
        values = (obj.x1, obj.y1, obj.x2, obj.y2)
    elif kind is go.Flash:
        values = (obj.x, obj.y)
    elif kind is go.Arc:
        values = (obj.x1, obj.y1, obj.x2, obj.y2, obj.x1 + obj.cx, obj.y1 + obj.cy)
    elif kind is go.Region:
        values = [v for point in obj.outline for v in point]
        values += [v for arc in obj.arc_centers if arc and arc[0] is not None for v in arc[1]]
    else:
        return 0.0
    largest = max(map(abs, values), default=0.0)
    return largest * MM_PER_UNIT.get(obj.unit, 1.0)


class CheckedObjects(list):
    """The list a gerbonara parser appends graphic objects to: refuses absurd coordinates and too many objects.

    Refusals are raised as ValueError; the parser reports them with the file name and line.
    """

    def __init__(self, what: str):
        super().__init__()
        self._what = what
        self._most = limit(OBJECTS)

    def append(self, obj):
        if len(self) >= self._most:
            check_count(len(self) + 1, OBJECTS, self._what)
        if len(self) % MEMORY_CHECK_EVERY == MEMORY_CHECK_EVERY - 1:
            check_parse_memory(len(self) + 1, self._what)
        if (problem := coordinate_problem(extent_mm(obj))) is not None:
            raise ValueError(problem)
        super().append(obj)


#: objects (and region points) parsed between two checks of the memory still free
MEMORY_CHECK_EVERY = 65_536
#: bytes one parsed object or region point takes, through to the copper built from it (measured: about
#: 400 parsed and 150 to 1,200 built, a placed circular pad the most; rounded up)
BYTES_PER_PARSED_OBJECT = 2_000


def check_parse_memory(count: int, what: str) -> None:
    """Refuse to go on parsing when the next batch of objects, and the copper built from them, would not fit."""
    check_memory(MEMORY_CHECK_EVERY * BYTES_PER_PARSED_OBJECT,
                 f"reading more than {count:,} {what} (about {BYTES_PER_PARSED_OBJECT:,} bytes each)")


class _ObjectList(CheckedObjects):
    """gerbonara drops object attributes on regions; stamp the ones in force when each region closes."""

    def __init__(self, parser: "_CopperParser"):
        super().__init__("graphic objects")
        self._parser = parser

    def append(self, obj):
        if self._parser.eof_found:
            raise ValueError("graphics after the M02 end marker (two files joined into one?)")
        if obj.unit is None:
            raise ValueError("graphics before the unit is set (%MOMM*% or %MOIN*% in the header)")
        if type(obj) is go.Region:
            obj.attrs = {**self._parser.aperture_attrs, **self._parser.graphics_state.object_attrs}
        elif obj.aperture is None:
            raise ValueError("draw or flash before any aperture is selected")
        super().append(obj)


class _CopperParser(GerberParser):
    """gerbonara's parser with our warning log, and refusals where tolerance would give a wrong board."""

    def __init__(self, target, log: FileWarnings):
        super().__init__(target)
        self._log = log
        self.negative = False
        target.objects = _ObjectList(self)

    def warn(self, msg, kls=SyntaxWarning):
        self._log.add(msg, self.lineno or None)

    def _refuse_unit_change(self, unit) -> None:
        if self.file_settings.unit is not None and self.file_settings.unit != unit:
            raise ValueError(f"unit changed from {self.file_settings.unit.name} to {unit.name} within the file "
                             "(the unit may be set once, in the header)")

    def _parse_unit_mode(self, match):
        self._refuse_unit_change(MM if match["unit"] == "MM" else Inch)
        super()._parse_unit_mode(match)

    def _parse_old_unit(self, match):
        self._refuse_unit_change(Inch if match["mode"] == "G70" else MM)
        super()._parse_old_unit(match)

    def _parse_format_spec(self, match):
        integer, decimal = int(match["x"][0]), int(match["x"][1])
        if match["x"] != match["y"]:
            raise ValueError(f"coordinate format differs for X ({match['x']}) and Y ({match['y']})")
        if not (1 <= integer <= 6 and FS_DECIMALS[0] <= decimal <= FS_DECIMALS[1]):
            raise ValueError(f"coordinate format {integer}.{decimal} is not usable: the Gerber specification allows up "
                             f"to 6 integer and {FS_DECIMALS[0]} to {FS_DECIMALS[1]} decimal digits")
        given = self.file_settings.number_format
        if given != (None, None) and given != (integer, decimal):
            raise ValueError(f"coordinate format changed from {given[0]}.{given[1]} to {integer}.{decimal} within the "
                             "file (it may be set once, in the header)")
        super()._parse_format_spec(match)

    def _parse_aperture_definition(self, match):
        if self.file_settings.unit is None:
            raise ValueError("aperture defined before the unit is set (%MOMM*% or %MOIN*% in the header)")
        super()._parse_aperture_definition(match)
        if (problem := aperture_problem(self.aperture_map[int(match["number"])])) is not None:
            raise ValueError(problem)

    def _parse_image_polarity(self, match):
        # objects keep the polarity they are drawn with; the importer inverts the whole image
        self.negative = match["polarity"] == "NEG"

    def _parse_eof(self, match):
        if self.current_region is not None:
            raise ValueError("file ends inside a region (G36 without its G37)")
        super()._parse_eof(match)

    def _parse_coord(self, match):
        if self.current_region is not None and len(self.current_region.outline) % MEMORY_CHECK_EVERY == 0:
            points = len(self.current_region.outline) + 1
            if points > limit(SEGMENTS):
                check_count(points, SEGMENTS, "points in one region", line=self.lineno)
            check_parse_memory(points, "points of one region")
        super()._parse_coord(match)

    def _parse_step_repeat(self, match):
        if match["coords"]:
            check_count(int(match["X"]) * int(match["Y"]), OBJECTS, "step-and-repeat copies")
        super()._parse_step_repeat(match)


def parse_gerber(path: Path, display_name: str | None = None) -> tuple[GerberFile, FileWarnings]:
    """Parse with gerbonara; warnings counted in a log, failures raised as InputError with file and line.

    A negative image is marked on the result as ``gerber.negative_image``."""
    name = display_name or str(path)
    log = FileWarnings(name)
    data = read_input(path, name, "Gerber file").decode("utf-8", errors="replace")
    gerber = GerberFile()
    parser = _CopperParser(gerber, log)
    try:
        with log.capturing():
            parser.parse(data, filename=Path(name).name)
    except PARSER_ERRORS as exc:
        line, message = _split_location(exc, parser.lineno)
        raise InputError(f"unreadable Gerber: {message}", path=name, line=line) from exc
    except RecursionError as exc:
        raise InputError("unreadable Gerber: nesting too deep", path=name) from exc
    if not parser.eof_found:
        raise InputError("Gerber file ends without its M02 end marker; it looks truncated", path=name,
                         line=data.count("\n") + 1)
    if gerber.unit is None:
        raise InputError("Gerber file declares no unit (no %MO statement)", path=name)
    polarity = dict(gerber.file_attrs).get(".FilePolarity") or ("",)
    gerber.negative_image = parser.negative or str(polarity[0]).lower() == "negative"
    return gerber, log


def _split_location(exc: Exception, fallback_line: int | None) -> tuple[int | None, str]:
    """(line, message) from a gerbonara error; the message names the error type when gerbonara gives no text."""
    text = str(exc)
    match = _GERBONARA_WHERE.match(text)
    line, message = (int(match.group(1)), match.group(2)) if match else (fallback_line or None, text)
    message = " ".join(message.split())
    return line, message or type(exc.__cause__ or exc).__name__


def aperture_function(attrs) -> str | None:
    for key, value in (attrs or ()):
        if key == ".AperFunction" and value:
            return value[0]
    return None


def role_for(function: str | None, default: str) -> str:
    """Shape role from an X2 ``.AperFunction`` value."""
    if not function:
        return default
    if function.startswith("NonConductor") or function == "Profile":
        return "other"
    if function == "ViaPad":
        return "via"
    if function.endswith("Pad") or function in ("FiducialPad", "Fiducial", "TestPad"):
        return "pad"
    return default


#: the X2 ``.N`` value for copper that belongs to no net
NOT_CONNECTED = "N/C"


def net_of(obj) -> str | None:
    """The X2 net name of a graphic object; None for none, empty, and ``N/C`` (not connected)."""
    attrs = obj.attrs if isinstance(obj.attrs, dict) else {}
    value = attrs.get(".N")
    if not value or not value[0] or value[0] == NOT_CONNECTED:
        return None
    return printable(value[0])


class _Outlines:
    """Aperture outlines (mm, at the origin), built once per aperture."""

    def __init__(self):
        self._cache: dict[int, shapely.Geometry] = {}
        self._keep = []

    def __call__(self, aperture) -> shapely.Geometry:
        key = id(aperture)
        if key not in self._cache:
            self._cache[key] = aperture_outline(aperture)
            self._keep.append(aperture)
        return self._cache[key]


def _translated(template: shapely.Geometry, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Copies of ``template`` moved to each (x, y), in one vectorised call."""
    copies = np.empty(len(x), dtype=object)
    copies[:] = [template] * len(x)
    n_coords = len(shapely.get_coordinates(template))
    offsets = np.repeat(np.column_stack([x, y]), n_coords, axis=0)
    return shapely.transform(copies, lambda coords: coords + offsets)


def read_copper(path: Path, display_name: str | None = None) -> CopperArtwork:
    """Read one copper file into segments and shapes with net names (X2) where present."""
    with reading(display_name or path), stage(f"reading {display_name or path}", f"{path.stat().st_size:,} bytes"):
        gerber, log = parse_gerber(path, display_name)
        try:
            art = artwork_from_gerber(path, gerber, log)
        except InputError as exc:
            if exc.path is not None:
                raise
            raise InputError(exc.message, path=log.name, line=exc.line) from exc
        art.negative = gerber.negative_image
        return art


def artwork_from_gerber(path: Path, gerber: GerberFile, log: FileWarnings) -> CopperArtwork:
    scale = gerber.unit.convert_to(MM, 1.0)
    outlines = _Outlines()
    objects = list(gerber.objects)
    draws, flashes, regions = [], [], []
    for order, obj in enumerate(objects):
        kind = type(obj)
        if kind is go.Line or kind is go.Arc:
            draws.append(order)
        elif kind is go.Flash:
            flashes.append(order)
        elif kind is go.Region:
            regions.append(order)
    builder = _ShapeBuilder(log)

    seg = _draws_to_segments([objects[i] for i in draws], np.asarray(draws, dtype=np.int64), scale, log, outlines)
    # zero-length draws and non-conductor draws become shapes; clear draws become cut-outs
    for g, net, role, order, dark in seg.pop("as_shapes"):
        builder.add(g, net, role, order, dark)
    _flashes_to_shapes([objects[i] for i in flashes], np.asarray(flashes, dtype=np.int64), scale, outlines, builder, log)
    points, most = len(seg["x0"]), limit(SEGMENTS)
    for i in regions:
        obj = objects[i]
        outline = np.asarray(obj.outline, dtype=np.float64) * scale
        if len(outline) > 2 and np.hypot(*(outline[-1] - outline[0])) > ZERO_LENGTH_MM:
            log.add("region contour not closed (its last point is not its first); closed with a straight edge")
        poly = arc_poly_polygon(outline, [None if not a or a[0] is None else (a[0], (a[1][0] * scale, a[1][1] * scale))
                                          for a in obj.arc_centers])
        points += shapely.get_num_coordinates(poly)
        if points > most:
            check_count(points, SEGMENTS, "trace pieces and region outline points", log.name)
        if poly.is_empty:
            log.add("region with no area ignored", None)
            continue
        attrs = obj.attrs if isinstance(obj.attrs, dict) else {}
        function = attrs.get(".AperFunction", (None,))[0]
        builder.add(poly, net_of(obj), role_for(function, "region"), i, obj.polarity_dark)

    geometry, shape_net, role = builder.finish(seg, log)
    keep = seg["dark"]
    return CopperArtwork(
        path=path, file_attributes=dict(gerber.file_attrs),
        x0=seg["x0"][keep], y0=seg["y0"][keep], x1=seg["x1"][keep], y1=seg["y1"][keep],
        width=seg["width"][keep], segment_net=seg["net"][keep],
        geometry=geometry, shape_net=shape_net, role=role, log=log)


def _draws_to_segments(draws, order, scale, log, outlines) -> dict:
    """Lines and flattened arcs as segment arrays; arcs keep the order of the draw they came from."""
    lines = [o for o in draws if type(o) is go.Line]
    line_order = order[[type(o) is go.Line for o in draws]] if len(draws) else order
    coords = np.array([(o.x1, o.y1, o.x2, o.y2) for o in lines], dtype=np.float64).reshape(-1, 4) * scale
    apert = [o.aperture for o in lines]
    nets = [net_of(o) for o in lines]
    dark = [o.polarity_dark for o in lines]
    ords = list(line_order)
    arcs = [o for o in draws if type(o) is go.Arc]
    if arcs:
        arc_order = order[[type(o) is go.Arc for o in draws]]
        a = np.array([(o.x1, o.y1, o.x2, o.y2, o.x1 + o.cx, o.y1 + o.cy, o.clockwise) for o in arcs],
                     dtype=np.float64) * np.array([scale] * 6 + [1.0])
        counts, px, py = flatten_arcs(a[:, 0], a[:, 1], a[:, 2], a[:, 3], a[:, 4], a[:, 5], a[:, 6] > 0.5)
        last = np.cumsum(counts) - 1
        starts = np.setdiff1d(np.arange(len(px)), last)
        owner = np.repeat(np.arange(len(arcs)), counts - 1)
        coords = np.vstack([coords, np.column_stack([px[starts], py[starts], px[starts + 1], py[starts + 1]])])
        apert += [arcs[k].aperture for k in owner]
        nets += [net_of(arcs[k]) for k in owner]
        dark += [arcs[k].polarity_dark for k in owner]
        ords += list(arc_order[owner])
    n = len(coords)
    x0, y0, x1, y1 = coords.T if n else (np.zeros(0),) * 4
    width = np.zeros(n)
    conductor = np.ones(n, dtype=bool)
    by_aperture: dict[int, list[int]] = {}
    for i, ap in enumerate(apert):
        by_aperture.setdefault(id(ap), []).append(i)
    for idx in by_aperture.values():
        idx = np.asarray(idx)
        ap = apert[idx[0]]
        if ap is None:
            continue
        if role_for(aperture_function(ap.attrs), "conductor") == "other":
            conductor[idx] = False
        if isinstance(ap, CircleAperture):
            width[idx] = ap.unit.convert_to(MM, ap.diameter)
        else:
            width[idx] = swept_width_mm(outlines(ap), x1[idx] - x0[idx], y1[idx] - y0[idx])
            log.add(f"line drawn with non-circular aperture D{ap.original_number}: "
                    "width taken as the aperture's extent across the draw")
    zero = np.hypot(x1 - x0, y1 - y0) < ZERO_LENGTH_MM
    thin = np.flatnonzero((width <= 0) & conductor & np.asarray(dark, dtype=bool) & ~zero)
    if len(thin):
        ap = apert[thin[0]]
        said = (f"{len(thin):,} conductor draw(s) with zero-size aperture D{ap.original_number}, the first from "
                f"({x0[thin[0]]:.4f}, {y0[thin[0]]:.4f}) mm")
        drawn = int((conductor & np.asarray(dark, dtype=bool) & ~zero).sum())
        if len(thin) > ZERO_WIDTH_MAX_SHARE * drawn:
            raise InputError(f"{said}: a draw needs a width (a zero-size aperture draws nothing)")
        # a few hairlines (outline or marks drawn on the copper film by some writers) draw no copper
        log.add(f"{said}: zero-width draws make no copper; left out")
        conductor[thin] = False
    nets_arr = np.empty(n, dtype=object)
    nets_arr[:] = nets
    dark = np.asarray(dark, dtype=bool)
    ords = np.asarray(ords, dtype=np.int64)
    as_shapes = []
    special = np.flatnonzero(zero | ~conductor | ~dark)
    for i in special:
        ap = apert[i]
        if zero[i] and ap is not None:
            geom = shapely.transform(outlines(ap), lambda c, dx=x0[i], dy=y0[i]: c + (dx, dy))
            role = role_for(aperture_function(ap.attrs), "pad") if conductor[i] else "other"
        else:
            geom = shapely.LineString([(x0[i], y0[i]), (x1[i], y1[i])]).buffer(width[i] / 2, quad_segs=QUAD_SEGS)
            role = "other"
        as_shapes.append((geom, nets_arr[i], role, ords[i], dark[i]))
    keep_dark = dark & conductor & ~zero
    return {"x0": x0, "y0": y0, "x1": x1, "y1": y1, "width": width, "net": nets_arr,
            "order": ords, "dark": keep_dark, "as_shapes": as_shapes}


#: bytes per placed copy of an outline: its points three times over (template offsets, moved points, the
#: geometry) and the geometry object itself
BYTES_PER_PLACED_POINT = 48
BYTES_PER_PLACED_SHAPE = 500


def placing_bytes(copies: int, points: int) -> int:
    """Memory to place ``copies`` copies of an outline of ``points`` points."""
    return copies * (points * BYTES_PER_PLACED_POINT + BYTES_PER_PLACED_SHAPE)


def _flashes_to_shapes(flashes, order, scale, outlines, builder, log):
    groups: dict[int, list[int]] = {}
    for i, f in enumerate(flashes):
        groups.setdefault(id(f.aperture), []).append(i)
    needed = sum(placing_bytes(len(idx), shapely.get_num_coordinates(outlines(flashes[idx[0]].aperture)))
                 for idx in groups.values())
    check_memory(needed, f"placing {len(flashes):,} flashes of {len(groups):,} apertures")
    for idx in groups.values():
        ap = flashes[idx[0]].aperture
        template = outlines(ap)
        if template.is_empty:
            log.add(f"flash of aperture D{ap.original_number} with no area ignored")
            continue
        xy = np.array([(flashes[i].x, flashes[i].y) for i in idx], dtype=np.float64) * scale
        geoms = _translated(template, xy[:, 0], xy[:, 1])
        role = role_for(aperture_function(ap.attrs), "pad")
        for k, i in enumerate(idx):
            f = flashes[i]
            builder.add(geoms[k], net_of(f), role, int(order[i]), f.polarity_dark)


class _ShapeBuilder:
    """Collects shapes in drawing order and cuts clear-polarity objects out of earlier dark copper."""

    def __init__(self, log: FileWarnings):
        self.log = log
        self.geoms, self.nets, self.roles, self.orders = [], [], [], []
        self.clear_geoms, self.clear_orders = [], []

    def add(self, geom, net, role, order, dark):
        if dark:
            self.geoms.append(geom)
            self.nets.append(net)
            self.roles.append(role)
            self.orders.append(order)
        else:
            self.clear_geoms.append(geom)
            self.clear_orders.append(order)

    def finish(self, seg: dict, log: FileWarnings):
        geometry = np.empty(len(self.geoms), dtype=object)
        geometry[:] = self.geoms
        nets = np.empty(len(self.nets), dtype=object)
        nets[:] = self.nets
        roles = np.empty(len(self.roles), dtype=object)
        roles[:] = self.roles
        if self.clear_geoms:
            clear = np.empty(len(self.clear_geoms), dtype=object)
            clear[:] = self.clear_geoms
            clear_order = np.asarray(self.clear_orders)
            geometry = _cut_clear(geometry, np.asarray(self.orders), clear, clear_order)
            _warn_cleared_traces(seg, clear, clear_order, log)
        keep = ~shapely.is_empty(geometry) if len(geometry) else np.zeros(0, dtype=bool)
        return geometry[keep], nets[keep], roles[keep]


def _cut_clear(geometry, orders, clear, clear_order):
    """Subtract each clear object from the dark shapes drawn before it."""
    if not len(geometry):
        return geometry
    tree = shapely.STRtree(geometry)
    clear_idx, dark_idx = query_all(tree, clear, f"{len(clear):,} clear objects over {len(geometry):,} shapes",
                                    keep=lambda q, t: shapely.intersects(clear[q], geometry[t]))
    earlier = orders[dark_idx] < clear_order[clear_idx]
    clear_idx, dark_idx = clear_idx[earlier], dark_idx[earlier]
    if not len(dark_idx):
        return geometry
    out = geometry.copy()
    sort = np.argsort(dark_idx, kind="stable")
    dark_idx, clear_idx = dark_idx[sort], clear_idx[sort]
    bounds = np.flatnonzero(np.diff(dark_idx)) + 1
    for d, cuts in zip(np.split(dark_idx, bounds), np.split(clear_idx, bounds)):
        out[d[0]] = shapely.difference(out[d[0]], shapely.union_all(clear[cuts]))
    return out


def _warn_cleared_traces(seg, clear, clear_order, log):
    dark = seg["dark"]
    if not dark.any():
        return
    check_index_memory(int(dark.sum()), BYTES_PER_PLACED_SHAPE, "traces under clear objects")
    lines = shapely.buffer(shapely.linestrings(
        np.stack([np.column_stack([seg["x0"][dark], seg["y0"][dark]]),
                  np.column_stack([seg["x1"][dark], seg["y1"][dark]])], axis=1)), seg["width"][dark] / 2, quad_segs=2)
    tree = shapely.STRtree(lines)
    clear_idx, line_idx = query_all(tree, clear, f"{len(clear):,} clear objects over {len(lines):,} traces",
                                    keep=lambda q, t: shapely.intersects(clear[q], lines[t]))
    hit = np.unique(line_idx[seg["order"][dark][line_idx] < clear_order[clear_idx]])
    if len(hit):
        log.add(f"{len(hit)} trace segment(s) drawn dark and later partly cleared by clear-polarity objects; "
                "kept whole as traces")
