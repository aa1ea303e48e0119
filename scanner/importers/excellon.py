"""Excellon drill files to holes (mm): position, diameter and plating."""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from gerbonara import graphic_objects as go
from gerbonara.cam import FileSettings
from gerbonara.excellon import ExcellonParser, ProgramState
from gerbonara.utils import MM

from scanner.board.model import Holes, NO_NET
from scanner.errors import InputError
from scanner.importers.diagnostics import FileWarnings
from scanner.importers.gerber_copper import PARSER_ERRORS, CheckedObjects, _split_location
from scanner.input_limits import OBJECTS, check_count, limit, range_problem, read_input

_NON_PLATED_NAME = re.compile(r"npth|non[-_ ]?plated|unplated|nplt|np[-_.]", re.I)
_PLATED_NAME = re.compile(r"pth|plated|plt", re.I)
_X2_PLATING = re.compile(r"TF\.FileFunction,(NonPlated|Plated)", re.I)


@dataclass
class DrillFile:
    """Holes from one drill file and where its plating came from."""

    path: Path
    holes: Holes
    plating_source: str  # "file" (attributes or comments), "board-file", "job-file", "file-name", "assumed"
    slot_count: int
    log: FileWarnings


class _DrillObjects(CheckedObjects):
    """Holes and routes as parsed: the tool diameter is checked with the coordinates."""

    def append(self, obj):
        tool = obj.aperture
        diameter = tool.unit.convert_to(MM, tool.diameter) if tool.unit else tool.diameter
        if (problem := range_problem("drill diameter", diameter, "tool diameter")) is not None:
            raise ValueError(problem)
        super().append(obj)


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

    def __init__(self):
        super().__init__()
        self.settings = _SettledSettings(number_format=(None, None), zeros="leading")
        self.objects = _DrillObjects("holes and routes")

    def do_move(self, coord_groups):
        moved = super().do_move(coord_groups)
        self.settings.coordinates_read = True
        return moved

    def ensure_active_tool(self):
        if self.active_tool is None:
            raise ValueError("hole or route before any tool is selected")
        return self.active_tool


def plating_from_name(name: str) -> bool | None:
    if _NON_PLATED_NAME.search(name):
        return False
    if _PLATED_NAME.search(name):
        return True
    return None


def read_drills(path: Path, display_name: str | None = None, plated: bool | None = None,
                plated_source: str | None = None) -> DrillFile:
    """Read an Excellon file; ``plated`` (with its source) overrides what the file itself says.

    Routed slots are kept as a row of holes of the tool diameter spaced at half a diameter, so
    plated slots still join the layers they pass through.
    """
    name = display_name or str(path)
    log = FileWarnings(name)
    text = read_input(path, name, "drill file").decode("utf-8", errors="replace")
    drills = _DrillParser()
    try:
        with log.capturing():
            drills.do_parse(text, filename=Path(name).name)
    except PARSER_ERRORS as exc:
        line, message = _split_location(exc, None)
        raise InputError(f"unreadable Excellon drill file: {message}", path=name, line=line) from exc
    if drills.program_state is not ProgramState.FINISHED:
        raise InputError("drill file ends without its M30 end of program; it looks truncated", path=name,
                         line=len(text.splitlines()))

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
                    check_count(len(xs) + n, OBJECTS, "holes (routed slots counted as rows of holes)", name)
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
