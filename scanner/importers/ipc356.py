"""IPC-D-356 / 356A bare-board netlists: fixed-column test-point and conductor records.

Columns (1-based) of 317/327 records: 1-3 record code, 4-17 net name, 21-26 reference
designator, 28-31 pin, 33 'D' and 34-37 hole diameter, 38 'P'/'U' plating, 39 'A' and
40-41 access (00 through, 01 top, nn copper layer nn), 42 'X' and 43-49 signed x,
50 'Y' and 51-57 signed y. 378 conductor records give net, 'L' and layer in 19-21,
an aperture size and a chain of X/Y coordinates. Continuation lines start with '0'.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from scanner.errors import InputError, printable
from scanner.input_limits import OBJECTS, RANGES, check_count, check_range, coordinate_problem, read_input
from scanner.units import MM_PER_INCH

#: mm per coordinate count for each ``P  UNITS`` value (inch files count 0.0001 in, metric 0.001 mm)
UNIT_STEP_MM = {
    "CUST": MM_PER_INCH * 1e-4,
    "CUST 0": MM_PER_INCH * 1e-4,
    "CUST 1": 1e-3,
    "CUST 2": MM_PER_INCH * 1e-4,
    "ENGLISH": MM_PER_INCH * 1e-4,
    "SI": 1e-3,
}

NOT_CONNECTED = "N/C"

_COORD = re.compile(r"X([+-]?\d+)?(?:Y([+-]?\d+))?|Y([+-]?\d+)")


@dataclass(frozen=True)
class NetlistRecords:
    """Raw netlist points before layer numbers are tied to a copper stack (mm)."""

    path: str
    net_name: np.ndarray  # object array of str
    x: np.ndarray
    y: np.ndarray
    access: np.ndarray  # 0 through, n = copper layer n counted from the top (1 = top)
    hole_mm: np.ndarray
    record: np.ndarray
    line: np.ndarray

    def __len__(self) -> int:
        return len(self.x)


def _field(text: str, start: int, stop: int) -> str:
    return text[start - 1:stop].strip()


def _number(text: str, what: str, path: str, line: int) -> int:
    try:
        return int(text)
    except ValueError:
        raise InputError(f"IPC-D-356 {what} field {text!r} is not a number", path=path, line=line) from None


def read_ipc356(path: Path, display_name: str | None = None) -> NetlistRecords:
    """Parse a netlist; bad units, unknown layouts or malformed numbers raise InputError with the line."""
    name = display_name or str(path)
    lines = read_input(path, name, "netlist").decode("latin-1").splitlines()
    logical: list[tuple[int, str]] = []
    for number, raw in enumerate(lines, start=1):
        if raw[:1] == "0" and logical and logical[-1][1][:3] == "378":
            logical[-1] = (logical[-1][0], logical[-1][1].rstrip() + " " + raw[3:].strip())
        elif raw.strip():
            logical.append((number, raw.rstrip("\r\n")))

    step = None
    aliases: dict[str, str] = {}
    rows: list[tuple] = []
    for number, line in logical:
        code = line[:3]
        if line[0] == "C":
            continue
        if line[0] == "P":
            key, _, value = line[1:].strip().partition(" ")
            value = " ".join(value.split())
            if key == "UNITS":
                if value not in UNIT_STEP_MM:
                    raise InputError(f"IPC-D-356 units {value!r} not known (expected one of "
                                     f"{', '.join(sorted(UNIT_STEP_MM))})", path=name, line=number)
                if rows and UNIT_STEP_MM[value] != step:
                    raise InputError(f"IPC-D-356 units changed to {value!r} after records were read; one file may "
                                     "not use two scales", path=name, line=number)
                step = UNIT_STEP_MM[value]
            elif key.startswith("NNAME"):
                aliases[key] = value
            continue
        if code.startswith("999"):
            break
        if code in ("317", "327", "378") and step is None:
            raise InputError("IPC-D-356 record before any 'P  UNITS' parameter; units unknown",
                             path=name, line=number)
        if code in ("317", "327"):
            rows.append(_test_point(line, code, step, aliases, name, number))
        elif code == "378":
            rows.extend(_conductor(line, step, aliases, name, number))
    rows = [r for r in rows if r is not None]
    if not rows:
        raise InputError("IPC-D-356 netlist holds no 317, 327 or 378 records", path=name)
    check_count(len(rows), OBJECTS, "netlist points", name)
    net, x, y, access, hole, record, where = zip(*rows)
    x, y, hole = np.array(x), np.array(y), np.array(hole)
    largest = np.maximum(np.abs(x), np.abs(y))
    if (problem := coordinate_problem(float(largest.max()))) is not None:
        raise InputError(problem, path=name, line=int(where[int(np.argmax(largest))]))
    drilled = np.flatnonzero(hole > 0)
    low, high = RANGES["drill diameter"].low, RANGES["drill diameter"].high
    if len(odd := drilled[(hole[drilled] < low) | (hole[drilled] > high)]):
        check_range("drill diameter", hole[odd[0]], "hole diameter", name, int(where[odd[0]]))
    return NetlistRecords(name, np.array(net, dtype=object), x, y, np.array(access, dtype=np.int32), hole,
                          np.array(record, dtype=np.int32), np.array(where, dtype=np.int32))


def _net(raw: str, aliases: dict) -> str | None:
    if not raw or raw == NOT_CONNECTED:
        return None
    return printable(aliases.get(raw, raw))


def _test_point(line: str, code: str, step: float, aliases, path, number):
    line = f"{line:<80}"
    net = _net(_field(line, 4, 17), aliases)
    if net is None:
        return None
    if line[41] != "X" or line[49] != "Y":
        raise InputError("IPC-D-356 test record without X/Y in columns 42 and 50", path=path, line=number)
    x = _number(line[42:49].replace(" ", ""), "X", path, number) * step
    y = _number(line[50:57].replace(" ", ""), "Y", path, number) * step
    hole = _number(line[33:37], "hole", path, number) * step if line[32] == "D" and line[33:37].strip() else 0.0
    access = _number(line[39:41], "access", path, number) if line[38] == "A" else (0 if code == "317" else 1)
    return net, x, y, access, hole, int(code), number


def _conductor(line: str, step: float, aliases, path, number):
    line = f"{line:<22}"
    net = _net(_field(line, 4, 17), aliases)
    if net is None:
        return []
    if line[18] != "L":
        raise InputError("IPC-D-356 conductor record without 'L' layer in column 19", path=path, line=number)
    layer = _number(line[19:21], "layer", path, number)
    _size, _, chain = line[22:].strip().partition(" ")
    out = []
    x = y = None
    for token in chain.replace("*", " ").split():
        match = _COORD.fullmatch(token)
        if not match:
            raise InputError(f"IPC-D-356 conductor coordinate {token!r} not understood", path=path, line=number)
        xs, ys, y_only = match.groups()
        if xs is not None:
            x = float(xs) * step  # float: an absurdly long number becomes inf and is refused later, not an overflow
        if ys is not None or y_only is not None:
            y = float(ys if ys is not None else y_only) * step
        if x is None or y is None:
            raise InputError("IPC-D-356 conductor chain starts without both coordinates", path=path, line=number)
        out.append((net, x, y, layer, 0.0, 378, number))
    return out
