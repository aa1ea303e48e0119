"""A stackup given on its own (``--stackup FILE``): a TOML ``[stackup]`` table, or a CSV table as fabricators publish.

CSV: one row per layer, top to bottom, with a header row. Columns are found by
their header, in any order, case and punctuation ignored; other columns are
left alone:

* layer name (``name``, ``layer``) — optional;
* type (``type``, ``kind``, ``material type``): copper, dielectric (also
  prepreg, core, laminate) or soldermask (also solder mask, solder resist);
* thickness (``thickness``, ``thk``) with its unit in the header: mm, µm
  (``um``, ``micron``) or mil (``mils``, ``thou``);
* dielectric constant (``dielectric constant``, ``dk``, ``er``, ``εr``,
  ``permittivity``) — for dielectric and soldermask rows;
* copper weight in oz (a header naming ``oz`` or ``weight``) — optional; a copper row
  without a thickness takes 1.35 mil per oz.

Commas, semicolons or tabs separate the cells (the header row decides); with
semicolons or tabs a decimal comma is accepted. Blank lines and lines starting
with ``#`` are skipped.
"""
from __future__ import annotations

import csv
import re
import tomllib
from pathlib import Path

from scanner.board.model import Stackup, StackupLayer
from scanner.errors import InputError, printable
from scanner.input_limits import check_range, read_input
from scanner.rules import parse_stackup_table
from scanner.units import MM_PER_MIL, MM_PER_OZ_COPPER

SOURCE = "stackup-file"

#: layer types as fabricators write them -> our three kinds
TYPE_WORDS = {
    "copper": "copper", "cu": "copper", "foil": "copper",
    "dielectric": "dielectric", "prepreg": "dielectric", "pp": "dielectric", "core": "dielectric",
    "laminate": "dielectric",
    "soldermask": "soldermask", "solder mask": "soldermask", "solder resist": "soldermask", "mask": "soldermask",
}
#: thickness units in a header -> mm per unit
THICKNESS_UNITS = {"mm": 1.0, "um": 1e-3, "µm": 1e-3, "μm": 1e-3, "micron": 1e-3, "microns": 1e-3,
                   "mil": MM_PER_MIL, "mils": MM_PER_MIL, "thou": MM_PER_MIL}
_NAME_HEADERS = {"name", "layer", "layer name"}
_TYPE_HEADERS = {"type", "kind", "material type", "layer type"}
_ER_WORDS = {"dk", "er", "εr", "epsilonr"}
_ER_PREFIXES = ("dielectric constant", "relative permittivity", "permittivity", "epsilon r")


def read_stackup_file(path: str | Path) -> Stackup:
    """The stackup in ``path`` (TOML ``[stackup]`` table or CSV), checked; errors name the file and line."""
    path = Path(path)
    name = printable(str(path))
    if not path.is_file():
        raise InputError("stackup file not found", name)
    data = read_input(path, name, "stackup file")
    text = _decode(data)
    if path.suffix.lower() == ".toml" or _first_content(text).startswith("["):
        return _from_toml(text, name)
    return _from_csv(text, name)


def _decode(data: bytes) -> str:
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("cp1252", errors="replace")  # spreadsheet exports (µ is 0xB5 there)


def _first_content(text: str) -> str:
    for line in text.splitlines():
        stripped = line.strip()
        if stripped and not stripped.startswith("#"):
            return stripped
    return ""


def _from_toml(text: str, name: str) -> Stackup:
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        line = getattr(exc, "lineno", None)
        raise InputError(f"not valid TOML: {str(exc).split(' (at')[0]}", name, line) from None
    if set(doc) != {"stackup"}:
        others = ", ".join(sorted(set(doc) - {"stackup"})) or "nothing"
        raise InputError(f"a stackup file holds the [stackup] table alone (found: {others}); "
                         "give other rules with --rules", name)
    stackup = parse_stackup_table(doc["stackup"], name)
    return Stackup(stackup.layers, SOURCE, name)


def _header_key(cell: str) -> str:
    """Header text lower-cased, with brackets, units separators and repeated blanks folded to single spaces."""
    return " ".join(re.sub(r"[()\[\]{}_/:,.\-]", " ", cell.strip().lower()).split())


class _Columns:
    """Which column holds what, read from the header row."""

    def __init__(self, header: list[str], name: str, line: int):
        self.name = self.kind = self.thickness = self.er = self.weight = None
        self.mm_per_unit = 1.0
        for i, cell in enumerate(header):
            key = _header_key(cell)
            words = key.split()
            if key in _NAME_HEADERS and self.name is None:
                self.name = i
            elif key in _TYPE_HEADERS and self.kind is None:
                self.kind = i
            elif {"thickness", "thk"} & set(words) and self.thickness is None:
                units = [w for w in words[1:] if w in THICKNESS_UNITS]
                if not units:
                    raise InputError(f"the thickness column ({cell.strip()!r}) needs its unit in the header: "
                                     "mm, µm or mil", name, line)
                self.thickness, self.mm_per_unit = i, THICKNESS_UNITS[units[0]]
            elif words and (words[0] in _ER_WORDS or key.startswith(_ER_PREFIXES)) and self.er is None:
                self.er = i
            elif ("oz" in words or "weight" in words) and self.weight is None:
                if "oz" not in words and any(w in THICKNESS_UNITS or w in ("g", "gsm") for w in words):
                    raise InputError(f"copper weight column ({cell.strip()!r}) must be in oz", name, line)
                self.weight = i
        missing = [what for what, col in (("type", self.kind), ("thickness", self.thickness),
                                          ("dielectric constant", self.er)) if col is None]
        if missing:
            raise InputError(f"stackup table header lacks a column for {' and '.join(missing)} "
                             "(see docs/rules.md for the columns)", name, line)


def _header_row(lines: list[tuple[int, str]]) -> int:
    """The first line naming a type column (title lines above the table are passed over); else the first line."""
    for i, (_, line) in enumerate(lines):
        cells = re.split(r"[,;\t]", line)
        if any(_header_key(c) in _TYPE_HEADERS for c in cells):
            return i
    return 0


def _sniff_delimiter(header_line: str) -> str:
    counts = {d: header_line.count(d) for d in (",", ";", "\t")}
    return max(counts, key=counts.get)


def _from_csv(text: str, name: str) -> Stackup:
    lines = [(number, line) for number, line in enumerate(text.splitlines(), start=1)
             if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise InputError("stackup file is empty", name)
    first = _header_row(lines)
    delimiter = _sniff_delimiter(lines[first][1])
    rows = list(zip((n for n, _ in lines), csv.reader((line for _, line in lines), delimiter=delimiter)))
    header_line, header = rows[first]
    columns = _Columns(header, name, header_line)
    layers = []
    copper = 0
    for number, cells in rows[first + 1:]:
        layer = _layer(cells, columns, delimiter, name, number, copper)
        copper += layer.kind == "copper"
        layers.append(layer)
    if copper == 0:
        raise InputError("stackup table has no copper rows", name)
    return Stackup(tuple(layers), SOURCE, name)


def _cell(cells: list[str], column: int | None) -> str:
    return cells[column].strip() if column is not None and column < len(cells) else ""


def _number(text: str, delimiter: str, what: str, name: str, line: int) -> float | None:
    if not text:
        return None
    if delimiter != ",":
        text = text.replace(",", ".")
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{what} {text!r} is not a number", name, line) from None
    if value != value or value in (float("inf"), float("-inf")):
        raise InputError(f"{what} {text!r} is not a finite number", name, line)
    return value


def _kind(text: str, name: str, line: int) -> str:
    """copper / dielectric / soldermask from the type cell, read by its first word or two ("Prepreg 2116")."""
    words = text.lower().replace("_", " ").replace("-", " ").split()
    if not words:
        raise InputError("row has no layer type (copper, dielectric or soldermask)", name, line)
    for n in (len(words), 2, 1):
        kind = TYPE_WORDS.get(" ".join(words[:n]))
        if kind is not None:
            return kind
    raise InputError(f"layer type {printable(text)!r} is not copper, dielectric (prepreg, core) or soldermask",
                     name, line)


def _layer(cells: list[str], columns: _Columns, delimiter: str, name: str, line: int, copper: int) -> StackupLayer:
    kind = _kind(_cell(cells, columns.kind), name, line)
    label = printable(_cell(cells, columns.name)) or f"{kind} {line}"
    thickness = _number(_cell(cells, columns.thickness), delimiter, "thickness", name, line)
    weight = _number(_cell(cells, columns.weight), delimiter, "copper weight", name, line)
    if thickness is not None:
        thickness *= columns.mm_per_unit
    elif kind == "copper" and weight is not None:
        thickness = check_range("copper weight", weight, f"copper weight of {label!r}", name, line) * MM_PER_OZ_COPPER
    else:
        raise InputError(f"{kind} row {label!r} has no thickness"
                         + (" or copper weight" if kind == "copper" else ""), name, line)
    check_range(f"{kind} thickness", thickness, f"thickness of {label!r}", name, line)
    if kind == "copper":
        return StackupLayer("copper", label, thickness, None, copper)
    er = _number(_cell(cells, columns.er), delimiter, "dielectric constant", name, line)
    if er is None:
        raise InputError(f"{kind} row {label!r} has no dielectric constant", name, line)
    check_range("relative permittivity", er, f"dielectric constant of {label!r}", name, line)
    return StackupLayer(kind, label, thickness, er)
