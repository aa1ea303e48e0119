"""Limits on what one input may hold, so a damaged or hostile file stops with a clear message, not a full memory.

Each count limit can be raised with an environment variable, read when it is checked. ``RANGES`` is the one
table of physical ranges for every number read from any input (docs/validation.md lists it with the reasons).
"""
from __future__ import annotations

import math
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from scanner.errors import InputError, InternalError

#: (environment variable, default): largest text input file, in MB (2**20 bytes)
FILE_MB = ("NEARFAR_MAX_FILE_MB", 200)
#: graphic objects in one Gerber file, holes in one drill file, records in one netlist
OBJECTS = ("NEARFAR_MAX_OBJECTS", 5_000_000)
#: trace segments on one board; straight pieces and outline points one file expands into once arcs are flattened
SEGMENTS = ("NEARFAR_MAX_SEGMENTS", 20_000_000)

#: no board coordinate or size lies further than this from the origin (mm); beyond it the file is damaged
MAX_COORDINATE_MM = 10_000.0


@dataclass(frozen=True)
class PhysicalRange:
    """The values one kind of number may take, in the unit the inputs give it, and why."""

    low: float
    high: float
    unit: str
    why: str
    low_open: bool = False  # the low end itself is excluded
    high_open: bool = False

    def holds(self, value: float) -> bool:
        above = value > self.low if self.low_open else value >= self.low
        below = value < self.high if self.high_open else value <= self.high
        return math.isfinite(value) and above and below

    def text(self) -> str:
        """The range in words: "from 1 to 100", "more than 0 and at most 10 mm"."""
        unit = f" {self.unit}" if self.unit else ""
        if not self.low_open and not self.high_open:
            return f"from {self.low:g} to {self.high:g}{unit}"
        low = f"more than {self.low:g}" if self.low_open else f"at least {self.low:g}"
        high = f"less than {self.high:g}" if self.high_open else f"at most {self.high:g}"
        return f"{low} and {high}{unit}"


#: every number nearfar reads, by kind: the inputs' unit, and why values outside cannot describe a real board
RANGES: dict[str, PhysicalRange] = {
    "coordinate": PhysicalRange(-MAX_COORDINATE_MM, MAX_COORDINATE_MM, "mm", "far beyond any production panel: "
                                "past it the file is damaged or its number format is wrong"),
    "aperture size": PhysicalRange(0.0, 500.0, "mm",
                                   "no pad or trace is larger than a production panel (about 460 x 610 mm)"),
    "drill diameter": PhysicalRange(0.01, 100.0, "mm",
                                    "from below the smallest laser microvia (about 25 µm) to a large cut-out"),
    "copper thickness": PhysicalRange(0.001, 10.0, "mm", "a micron of plating up to a solid bus bar"),
    "dielectric thickness": PhysicalRange(0.001, 10.0, "mm", "a micron-thin film up to a thick backplane"),
    "soldermask thickness": PhysicalRange(0.001, 1.0, "mm", "coatings are a few to a hundred microns"),
    "relative permittivity": PhysicalRange(1.0, 100.0, "", "vacuum (1) up to filled ceramics"),
    "copper weight": PhysicalRange(0.05, 50.0, "oz/ft²", "a twentieth of an ounce of plating up to the heaviest "
                                   "copper boards, some tens of ounces"),
    "rise time": PhysicalRange(0.001, 100_000.0, "ns", "1 ps (the fastest serial links) to 100 µs"),
    "swing": PhysicalRange(0.001, 5000.0, "V", "a millivolt sense signal up to isolation-barrier voltages"),
    "noise budget": PhysicalRange(0.001, 1e6, "mV", "a microvolt up to a kilovolt"),
    "budget share": PhysicalRange(0.001, 100.0, "% of swing", "noise is a share of the aggressor's swing"),
    "search distance": PhysicalRange(0.0, 10.0, "mm",
                                     "coupling falls with the square of spacing over height: beyond 10 mm it is "
                                     "negligible on any board", low_open=True),
    "coupled length": PhysicalRange(0.0, 10_000.0, "mm", "a length on the board", low_open=True),
    "angle tolerance": PhysicalRange(0.0, 45.0, "degrees", "beyond 45° two traces are crossing, not running "
                                     "side by side", low_open=True, high_open=True),
    "fraction of budget": PhysicalRange(0.0, 1.0, "", "a share of the budget"),
    "impedance": PhysicalRange(0.0, 1000.0, "ohm", "printed-circuit lines lie far below 1000 ohm", low_open=True),
    "impedance tolerance": PhysicalRange(0.0, 100.0, "%", "a share of the target", low_open=True, high_open=True),
    "impedance check length": PhysicalRange(0.0, 1000.0, "mm", "a length on the board"),
    "trace width": PhysicalRange(0.001, 100.0, "mm", "a micron-wide line up to a wide power trace"),
    "edge spacing": PhysicalRange(0.001, 100.0, "mm", "a micron up to the search distance of any board"),
    "pad scale": PhysicalRange(0.001, 1000.0, "", "a symbol resized to a thousandth or a thousand times"),
    "rotation": PhysicalRange(-1e6, 1e6, "degrees", "any angle, written with a sane number of turns"),
}


def range_problem(kind: str, value, what: str) -> str | None:
    """Why ``value`` cannot be a ``kind`` (``what`` names it: a key or record), or None when it can."""
    allowed = RANGES[kind]
    try:
        number = math.nan if isinstance(value, bool) else float(value)
    except (TypeError, ValueError, OverflowError):
        number = math.nan
    if allowed.holds(number):
        return None
    unit = f" {allowed.unit}" if allowed.unit else ""
    shown = f"{number:.6g}{unit}" if math.isfinite(number) else f"{value!r}, not a finite number,"
    return f"{what} {shown} is outside the {kind} range ({allowed.text()})"


def check_range(kind: str, value, what: str, path: str | Path | None = None, line: int | None = None) -> float:
    """``value`` as a float when it lies in the physical range of ``kind``; otherwise an InputError."""
    if (problem := range_problem(kind, value, what)) is not None:
        raise InputError(problem, path=path, line=line)
    return float(value)


def limit(setting: tuple[str, int | None]) -> int | None:
    """The limit's value: its environment variable when set, else the default."""
    variable, default = setting
    text = os.environ.get(variable)
    if text is None or not text.strip():
        return default
    if not text.strip().isdigit() or int(text) < 1:
        raise InputError(f"environment variable {variable} must be a whole number of at least 1, got {text!r}")
    return int(text)


def read_input(path: Path, name: str, what: str) -> bytes:
    """The bytes of one input file, refused when larger than the file-size limit (never more is read)."""
    most = limit(FILE_MB) * 2**20
    try:
        with open(path, "rb") as fh:
            data = fh.read(most + 1)
    except OSError as exc:
        raise InputError(f"cannot read {what}: {exc.strerror or exc}", path=name) from exc
    if len(data) > most:
        raise InputError(f"{what} is larger than the limit of {most // 2**20} MB "
                         f"(raise it with {FILE_MB[0]})", path=name)
    return data


def check_count(count: int, setting: tuple[str, int], what: str, name: str | None = None,
                line: int | None = None) -> None:
    """Refuse ``count`` items of ``what`` beyond the limit."""
    most = limit(setting)
    if count > most:
        raise InputError(f"more than {most:,} {what} (raise the limit with {setting[0]})", path=name, line=line)


def coordinate_problem(largest_mm: float) -> str | None:
    """Why a coordinate or size of ``largest_mm`` (absolute, mm) cannot be board geometry; None when it can."""
    if largest_mm <= MAX_COORDINATE_MM:
        return None
    return (f"coordinate or size of {largest_mm:.6g} mm is beyond the limit of {MAX_COORDINATE_MM:g} mm; "
            "the file is damaged or its number format is wrong")


def check_finite(values, what: str) -> None:
    """InternalError when any of ``values`` (an array) is not finite: with every input within its physical
    range, a NaN or infinity is a fault of nearfar, reported in one line rather than passed on."""
    bad = ~np.isfinite(np.asarray(values, dtype=np.float64))
    if bad.any():
        raise InternalError(f"{what}: {int(bad.sum()):,} of {bad.size:,} values are not finite numbers")
