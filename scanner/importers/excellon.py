"""Excellon drill files to holes (mm): position, diameter and plating.

Dialects: the number format and units may sit in the file's header, in leading comments
(gerbonara reads ``;FILE_FORMAT=``, ``;T01 Holesize … MILS`` and others), in a side file
beside it (``nc_param.txt`` style: ``FORMAT``, ``INTEGER-PLACES``, ``DECIMAL-PLACES``,
``UNITS``/``OUTPUT-UNITS``), or nowhere. When nothing gives them, every usual reading (inch
or millimetres, usual number formats, either zero suppression) is tried and the one whose
holes land on copper kept, with a warning saying so.
"""
from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from gerbonara import graphic_objects as go
from gerbonara.cam import FileSettings
from gerbonara.excellon import ExcellonParser, ProgramState, parse_allegro_ncparam
from gerbonara.utils import Inch, MM, RegexMatcher

from scanner.board.model import Holes, NO_NET
from scanner.errors import InputError, reading
from scanner.importers.diagnostics import FileWarnings
from scanner.importers.gerber_copper import PARSER_ERRORS, CheckedObjects, _split_location
from scanner.input_limits import OBJECTS, check_count, limit, range_problem, read_input

_NON_PLATED_NAME = re.compile(r"npth|non[-_ ]?plated|unplated|nplt|np[-_.]", re.I)
_PLATED_NAME = re.compile(r"pth|plated|plt", re.I)
_X2_PLATING = re.compile(r"TF\.FileFunction,(NonPlated|Plated)", re.I)
_SIDE_FILE_KEY = re.compile(r"^\s*(?:FORMAT\s+\d+\.\d+|INTEGER-PLACES\s+\d|DECIMAL-PLACES\s+\d|(?:OUTPUT-)?UNITS\s+\w)",
                            re.M | re.I)
_UNITS_LINE = re.compile(r"^\s*(?:OUTPUT-)?UNITS\s+(\w+)", re.M | re.I)
_FIXED_WIDTH = re.compile(r"^[^;(]*?[XY][+-]?\d+(?![\d.])", re.M)

#: readings tried when a file states neither units nor number format: (unit, integer digits, decimal digits)
READINGS = ((Inch, 2, 4), (Inch, 2, 5), (Inch, 2, 3), (Inch, 3, 3), (MM, 3, 3), (MM, 4, 2), (MM, 3, 2),
            (MM, 4, 3), (MM, 4, 4), (MM, 3, 4))
#: an inferred reading must put at least this share of its holes on copper ...
MIN_LANDING = 0.6
#: ... and this much more than the next best reading
LANDING_MARGIN = 0.2


@dataclass
class DrillFile:
    """Holes from one drill file and where its plating came from."""

    path: Path
    holes: Holes
    plating_source: str  # "file" (attributes or comments), "board-file", "job-file", "file-name", "assumed"
    slot_count: int
    log: FileWarnings
    #: the reading chosen for a file that states no units, in words (for a warning of its own)
    assumed: str | None = None


class _DrillObjects(CheckedObjects):
    """Holes and routes as parsed: the tool diameter is checked with the coordinates."""

    def append(self, obj):
        tool = obj.aperture
        diameter = tool.unit.convert_to(MM, tool.diameter) if tool.unit else tool.diameter
        if (problem := range_problem("drill diameter", diameter, "tool diameter")) is not None:
            raise ValueError(problem)
        super().append(obj)


def _selecting(define_tool):
    """A tool definition that also selects the tool when it stands in the body (header-less dialects
    define each tool right before its holes: ``T1C.015`` then coordinates)."""
    def handler(parser, match):
        define_tool(parser, match)
        if parser.program_state is not ProgramState.HEADER or parser.active_tool is not None:
            parser.active_tool = parser.tools[int(match[1])]
    return handler


_STATEMENTS = RegexMatcher()
_STATEMENTS.mapping = {regex: (_selecting(fn) if fn is ExcellonParser.parse_normal_tooldef else fn)
                       for regex, fn in ExcellonParser.exprs.mapping.items()}


#: settings a drill file may not change once coordinates have been read, and how messages call them
_SETTLED = {"unit": "unit", "number_format": "number format", "zeros": "zero rule"}


def _said(name: str, value) -> str:
    if name == "unit":
        return getattr(value, "name", "none")
    if name == "number_format":
        return "none" if value == (None, None) else f"{value[0]}.{value[1]}"
    return str(value)


class _SettledSettings(FileSettings):
    """File settings that refuse a new unit, number format or zero rule once coordinates have been read
    (``INCH`` or ``M72`` after ``METRIC`` holes): gerbonara would read the rest of the file at the new scale."""

    coordinates_read = False

    def __setattr__(self, name, value):
        if self.coordinates_read and name in _SETTLED and value != getattr(self, name):
            raise ValueError(f"{_SETTLED[name]} changed from {_said(name, getattr(self, name))} to "
                             f"{_said(name, value)} after coordinates were read; one file may not use two scales")
        super().__setattr__(name, value)


class _DrillParser(ExcellonParser):
    """gerbonara's Excellon parser, refusing holes it would drop (coordinates before any tool is chosen) and
    a unit or number format changed after the first coordinates."""

    exprs = _STATEMENTS

    def __init__(self, settings: FileSettings | None = None):
        super().__init__()
        given = settings or FileSettings(number_format=(None, None), zeros="leading")
        self.settings = _SettledSettings(unit=given.unit, number_format=given.number_format, zeros=given.zeros,
                                         notation=given.notation)
        self.objects = _DrillObjects("holes and routes")
        self.assumed = None  # how the file was read when it states no units

    def do_move(self, coord_groups):
        moved = super().do_move(coord_groups)
        self.settings.coordinates_read = True
        return moved

    def ensure_active_tool(self):
        if self.active_tool is None and self.program_state is ProgramState.HEADER and self.tools:
            # holes while still "in the header": a header-less file whose tools are defined where they are used
            self.active_tool = list(self.tools.values())[-1]
            self.warn("holes follow tool definitions with no header end; each tool taken as selected where defined")
        if self.active_tool is None:
            raise ValueError("hole or route before any tool is selected")
        return self.active_tool


def plating_from_name(name: str) -> bool | None:
    if _NON_PLATED_NAME.search(name):
        return False
    if _PLATED_NAME.search(name):
        return True
    return None


def side_file_settings(text: str) -> FileSettings | None:
    """Number format, units and zero suppression from an ``nc_param.txt``-style side file; None if it has none."""
    if not _SIDE_FILE_KEY.search(text):
        return None
    words = {"METRIC": "METRIC", "MM": "METRIC", "MILLIMETERS": "METRIC", "ENGLISH": "ENGLISH", "INCH": "INCHES",
             "INCHES": "INCHES"}
    text = _UNITS_LINE.sub(lambda m: f"OUTPUT-UNITS {words.get(m.group(1).upper(), m.group(1).upper())}", text)
    try:
        settings = parse_allegro_ncparam(text)
    except SyntaxError:
        return None
    return settings if settings.unit is not None or settings.number_format != (None, None) else None


def read_drills(path: Path, display_name: str | None = None, plated: bool | None = None,
                plated_source: str | None = None, settings: FileSettings | None = None,
                landing: Callable[[np.ndarray, np.ndarray], float] | None = None) -> DrillFile:
    """Read an Excellon file; ``plated`` (with its source) overrides what the file itself says.

    ``settings`` (from a side file) fill in what the file leaves out. ``landing(x_mm, y_mm)`` gives the
    share of holes that land on copper, used to choose a reading when the file states no units.
    Routed slots are kept as a row of holes of the tool diameter spaced at half a diameter, so
    plated slots still join the layers they pass through.
    """
    name = display_name or str(path)
    with reading(name):
        log = FileWarnings(name)
        text = read_input(path, name, "drill file").decode("utf-8", errors="replace")
        drills = _parse_any(text, name, settings, landing, log)
        drill = _drill_file(path, text, drills, plated, plated_source, log)
        drill.assumed = drills.assumed
        return drill


def _parse(text: str, name: str, settings: FileSettings | None, log: FileWarnings) -> _DrillParser:
    drills = _DrillParser(settings)
    try:
        with log.capturing():
            drills.do_parse(text, filename=Path(name).name)
    except PARSER_ERRORS as exc:
        line, message = _split_location(exc, None)
        raise InputError(f"unreadable Excellon drill file: {message}", path=name, line=line) from exc
    if drills.program_state is not ProgramState.FINISHED:
        raise InputError("drill file ends without its M30 end of program; it looks truncated", path=name,
                         line=len(text.splitlines()))
    return drills


def _units_known(drills: _DrillParser) -> bool:
    return drills.settings.unit is not None or all(o.unit is not None for o in drills.objects)


def _parse_any(text: str, name: str, settings: FileSettings | None, landing, log: FileWarnings) -> _DrillParser:
    """The file as it states itself (with the side file's settings); else the reading whose holes land on copper."""
    try:
        first_log = FileWarnings(name)
        drills = _parse(text, name, settings, first_log)
        if _units_known(drills) or not drills.objects:
            log.absorb(first_log)
            return drills
        fixed = bool(_FIXED_WIDTH.search(text))
        failure = None
    except InputError as exc:
        if "number format" not in exc.message and "NoneType" not in exc.message:
            raise
        drills, fixed, failure = None, True, exc
    tried = []
    for unit, number_format, zeros in _readings(settings, fixed):
        trial_log = FileWarnings(name)
        try:
            trial = _parse(text, name, FileSettings(unit=unit, number_format=number_format, zeros=zeros), trial_log)
        except InputError:
            continue
        x, y = _hole_centres_mm(trial)
        share = landing(x, y) if landing is not None and len(x) else 0.0
        tried.append((share, _reading_name(unit, number_format, zeros, fixed), trial, trial_log))
    if not tried:
        raise failure or InputError("drill file states no units, and no reading of it parses", path=name)
    tried.sort(key=lambda t: -t[0])
    rival = next((t for t in tried[1:] if _differs(tried[0][2], t[2])), None)
    if tried[0][0] < MIN_LANDING or (rival is not None and tried[0][0] - rival[0] < LANDING_MARGIN):
        raise InputError(f"drill file states no units{' or number format' if fixed else ''}, and no reading of it "
                         f"clearly lands on the copper pads (best: {tried[0][1]}, {tried[0][0]:.0%} of holes on "
                         "copper); give them in a side file (nc_param.txt: FORMAT 2.4, UNITS ENGLISH)", path=name)
    share, label, best, best_log = tried[0]
    log.absorb(best_log)
    runner_up = f"; the next best reading {rival[0]:.0%}" if rival is not None else ""
    best.assumed = (f"no units{' or number format' if fixed else ''} stated: read as {label}, which puts "
                    f"{share:.0%} of the holes on copper pads{runner_up}")
    return best


def _readings(settings: FileSettings | None, fixed: bool):
    """(unit, number format, zero suppression) to try: a stated number format is kept; decimal coordinates
    depend on the unit alone."""
    if not fixed:
        return [(Inch, (2, 4), "leading"), (MM, (3, 3), "leading")]
    stated = settings.number_format if settings is not None and None not in settings.number_format else None
    formats = [(u, (i, d)) for u, i, d in READINGS if stated is None or (i, d) == stated]
    if stated is not None:
        formats += [(u, stated) for u in (Inch, MM) if (u, stated) not in formats]
    return [(u, f, z) for u, f in formats for z in ("leading", "trailing")]


def _reading_name(unit, number_format: tuple[int, int], zeros: str, fixed: bool) -> str:
    unit_name = "inch" if unit is Inch else "mm"
    if not fixed:
        return unit_name
    kept = "leading zeros kept" if zeros == "trailing" else "trailing zeros kept"
    return f"{unit_name} {number_format[0]}.{number_format[1]}, {kept}"


def _differs(a: _DrillParser, b: _DrillParser) -> bool:
    """Do two readings of a file place its holes differently (more than 1 µm apart)?"""
    xa, ya = _hole_centres_mm(a)
    xb, yb = _hole_centres_mm(b)
    return len(xa) != len(xb) or not (np.allclose(xa, xb, atol=1e-3) and np.allclose(ya, yb, atol=1e-3))


def _hole_centres_mm(drills: _DrillParser) -> tuple[np.ndarray, np.ndarray]:
    flashes = [o for o in drills.objects if isinstance(o, go.Flash)]
    scale = np.array([(o.unit or drills.settings.unit or MM).convert_to(MM, 1.0) for o in flashes])
    x = np.array([o.x for o in flashes], dtype=float)
    y = np.array([o.y for o in flashes], dtype=float)
    return x * scale, y * scale


def _drill_file(path: Path, text: str, drills: _DrillParser, plated: bool | None, plated_source: str | None,
                log: FileWarnings) -> DrillFile:
    source = plated_source
    per_tool = False
    if plated is None:
        x2 = _X2_PLATING.search(text[:4096])
        tools = {obj.aperture.plated for obj in drills.objects}
        if x2:
            plated, source = x2.group(1).lower() == "plated", "file"
        elif tools and None not in tools:
            per_tool, source = True, "file"
        elif (guess := plating_from_name(path.name)) is not None:
            plated, source = guess, "file-name"
        else:
            plated, source = True, "assumed"
            log.add("plating not stated in the file or its name; holes taken as plated")

    xs, ys, ds, mixed = [], [], [], []
    slots = 0
    most = limit(OBJECTS)
    for obj in drills.objects:
        unit = obj.unit or drills.settings.unit
        to_mm = unit.convert_to(MM, 1.0) if unit is not None else 1.0
        dia = obj.aperture.unit.convert_to(MM, obj.aperture.diameter) if obj.aperture.unit else obj.aperture.diameter * to_mm
        if isinstance(obj, go.Flash):
            xs.append(obj.x * to_mm)
            ys.append(obj.y * to_mm)
            ds.append(dia)
            mixed.append(obj.aperture.plated)
        else:
            slots += 1
            pieces = obj.approximate(max_error=dia / 20, unit=MM) if isinstance(obj, go.Arc) else [obj]
            for line in pieces:
                x0, y0, x1, y1 = (v * to_mm for v in (line.x1, line.y1, line.x2, line.y2))
                n = int(np.ceil(np.hypot(x1 - x0, y1 - y0) / max(dia / 2, 1e-3))) + 1
                if len(xs) + n > most:
                    check_count(len(xs) + n, OBJECTS, "holes (routed slots counted as rows of holes)", log.name)
                t = np.linspace(0.0, 1.0, n)
                xs.extend(x0 + (x1 - x0) * t)
                ys.extend(y0 + (y1 - y0) * t)
                ds.extend([dia] * n)
                mixed.extend([obj.aperture.plated] * n)
    if slots:
        log.add(f"{slots} routed slot(s) kept as rows of holes")
    plating = np.array(mixed if per_tool else [plated] * len(mixed), dtype=bool)
    holes = Holes(np.asarray(xs), np.asarray(ys), np.asarray(ds), plating,
                  np.full(len(xs), NO_NET, dtype=np.int32))
    return DrillFile(path=path, holes=holes, plating_source=source, slot_count=slots, log=log)
