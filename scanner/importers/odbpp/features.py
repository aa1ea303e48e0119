"""One ODB++ ``features`` file (a layer, the step profile or a user symbol) as arrays in millimetres.

Records read: ``UNITS=MM|INCH`` (or ``U MM``), ``F <count>``, the symbol table
``$<n> <name> [I|M]``, attribute names ``@<n> <name>`` (strings ``&<n>`` are skipped),
lines ``L``, arcs ``A`` (last field ``Y`` clockwise), pads ``P`` (plain or resized
``-1 <sym> <factor>`` symbol; orientation 0–7 or ``8|9 <angle>``), surfaces ``S`` …
``SE`` with ``OB``/``OS``/``OC``/``OE`` contours; text ``T`` and barcodes ``B`` are
counted as features (the net links number them) but not drawn. Attributes follow ``;``.
Features are numbered from 0 in file order, as the EDA data's ``FID`` links count them.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import shapely

from scanner.errors import InputError
from scanner.importers.apertures import arc_poly_polygon
from scanner.importers.gerber_copper import MEMORY_CHECK_EVERY, check_parse_memory
from scanner.importers.diagnostics import FileWarnings
from scanner.importers.odbpp.symbols import Symbol
from scanner.importers.odbpp.text import UNITS, JobFile, integer, number, read_lines, units_word
from scanner.input_limits import (MAX_COORDINATE_MM, OBJECTS, SEGMENTS, check_count, check_range, limit,
                                  range_problem)

#: legacy pad orientations 0..7: (clockwise rotation in degrees, mirrored)
LEGACY_ORIENT = {k: (90.0 * (k % 4), k >= 4) for k in range(8)}


@dataclass
class SymbolRef:
    name: str
    units: str | None  # "I" / "M" override of the file units, else None
    line: int


@dataclass
class FeatureTable:
    """Features of one file, numbered in file order; coordinates in mm."""

    src: JobFile
    units: str
    count: int
    positive: np.ndarray  # per feature
    record_line: np.ndarray  # per feature: line number of its record
    attributes: list[str]  # per feature: raw text after ';' (empty when none)
    attribute_names: dict[int, str]
    symbols: dict[int, Symbol]
    lines: dict[str, np.ndarray]  # feature, xs, ys, xe, ye, sym
    arcs: dict[str, np.ndarray]  # feature, xs, ys, xe, ye, xc, yc, sym, cw
    pads: dict[str, np.ndarray]  # feature, x, y, sym, rotation, mirror, scale
    surfaces: list[tuple[int, list[shapely.Geometry]]]  # (feature, island polygons with their holes cut)
    log: FileWarnings = field(repr=False, default=None)

    def attribute(self, feature: int, name: str) -> str | None:
        """Raw value of attribute ``name`` on a feature (``""`` for a set boolean), or None."""
        for item in self.attributes[feature].split(","):
            key, _, value = item.strip().partition("=")
            if key.isdigit() and self.attribute_names.get(int(key)) == name:
                return value.strip()
        return None

_LINE_KEYS = ("feature", "xs", "ys", "xe", "ye", "sym")
_ARC_KEYS = ("feature", "xs", "ys", "xe", "ye", "xc", "yc", "sym", "cw")
_PAD_KEYS = ("feature", "x", "y", "sym", "rotation", "mirror", "scale")


class _Parser:
    def __init__(self, src: JobFile, default_units: str | None, keep_attributes: bool):
        self.src = src
        self.units = None
        self.default_units = default_units
        self.keep_attributes = keep_attributes
        self.declared = None
        self.symbol_refs: dict[int, SymbolRef] = {}
        self.attribute_names: dict[int, str] = {}
        self.positive: list[bool] = []
        self.record_line: list[int] = []
        self.attributes: list[str] = []
        self.lines = {k: [] for k in _LINE_KEYS}
        self.arcs = {k: [] for k in _ARC_KEYS}
        self.pads = {k: [] for k in _PAD_KEYS}
        self.sym_lines: list[tuple[int, int]] = []  # (symbol number, line) of every use
        self.surfaces = []
        self.surface = None  # (feature, line, contours) while inside S ... SE
        self.contour = None  # (kind, line, points, arcs) while inside OB ... OE
        self.log = FileWarnings(src.name)
        self.most_features = limit(OBJECTS)
        self.contour_points = 0
        self.most_points = limit(SEGMENTS)

    def fail(self, message: str, line: int | None):
        raise InputError(message, path=self.src.name, line=line)

    def num(self, token: str, line: int) -> float:
        return number(token, self.src, line, "coordinate")

    def feature(self, positive_token: str, line: int, attrs: str) -> int:
        if positive_token not in ("P", "N"):
            self.fail(f"polarity must be P or N, found {positive_token!r}", line)
        if len(self.positive) >= self.most_features:
            check_count(len(self.positive) + 1, OBJECTS, "features", self.src.name, line)
        if len(self.positive) % MEMORY_CHECK_EVERY == MEMORY_CHECK_EVERY - 1:
            check_parse_memory(len(self.positive) + 1, f"features of {self.src.name}")
        self.positive.append(positive_token == "P")
        self.record_line.append(line)
        self.attributes.append(attrs if self.keep_attributes else "")
        return len(self.positive) - 1

    def symbol(self, token: str, line: int) -> int:
        k = integer(token, self.src, line, "symbol number")
        self.sym_lines.append((k, line))
        return k

    def parse(self, lines: list[str]) -> None:
        for n, raw in enumerate(lines, start=1):
            body, _, attrs = raw.partition(";")
            tokens = body.split()
            if not tokens or tokens[0].startswith("#"):
                continue
            head = tokens[0]
            try:
                self.record(head, tokens, n, attrs.strip())
            except IndexError:
                self.fail(f"record {head!r} has too few fields", n)
        if self.contour is not None or self.surface is not None:
            opened = self.contour[1] if self.contour is not None else self.surface[1]
            self.fail(f"surface contour opened at line {opened} is not closed; the file looks truncated",
                      len(lines))
        if self.declared is not None and len(self.positive) < self.declared:
            self.fail(f"file ends after {len(self.positive)} of the {self.declared} features its F record "
                      "declares; it looks truncated", len(lines))
        if self.declared is not None and len(self.positive) > self.declared:
            self.log.add(f"{len(self.positive)} features, more than the {self.declared} declared by F")

    def record(self, head: str, t: list[str], n: int, attrs: str) -> None:
        if self.surface is not None:
            self.surface_record(head, t, n)
        elif head == "L":
            self.line(t, n, attrs)
        elif head == "P":
            self.pad(t, n, attrs)
        elif head == "A":
            self.arc(t, n, attrs)
        elif head == "S":
            self.surface = (self.feature(t[1], n, attrs), n, [])
        elif head in ("T", "B"):
            self.feature(t[4] if head == "T" else t[5], n, attrs)
            self.log.add(f"{'text' if head == 'T' else 'barcode'} feature not drawn", n)
        else:
            self.header_record(head, t, n)

    def header_record(self, head: str, t: list[str], n: int) -> None:
        if head.upper().startswith("UNITS") and "=" in " ".join(t):
            self.set_units(units_word(" ".join(t).partition("=")[2], self.src, n), n)
        elif head == "U" and len(t) == 2:
            self.set_units(units_word(t[1], self.src, n), n)
        elif head == "F" and len(t) == 2:
            self.declared = integer(t[1], self.src, n, "feature count")
        elif head.startswith("$"):
            k = integer(head[1:], self.src, n, "symbol number")
            flag = t[2].upper() if len(t) > 2 else None
            if flag not in (None, "I", "M"):
                self.fail(f"symbol unit flag must be I or M, found {t[2]!r}", n)
            self.symbol_refs[k] = SymbolRef(t[1], flag, n)
        elif head.startswith("@"):
            self.attribute_names[integer(head[1:], self.src, n, "attribute number")] = t[1] if len(t) > 1 else ""
        elif not (head.startswith("&") or head.upper().startswith("ID=")):
            self.log.add(f"record {head!r} not understood; skipped", n)

    def set_units(self, units: str, n: int) -> None:
        """The file's units; a change after the first feature is refused (one file, one scale)."""
        current = self.units or self.default_units
        if self.positive and current is not None and units != current:
            self.fail(f"units changed from {current} to {units} after features were read; one file may not use "
                      "two scales", n)
        self.units = units

    def line(self, t: list[str], n: int, attrs: str) -> None:
        f = self.feature(t[6], n, attrs)
        for key, value in zip(_LINE_KEYS, (f, *(self.num(v, n) for v in t[1:5]), self.symbol(t[5], n))):
            self.lines[key].append(value)

    def arc(self, t: list[str], n: int, attrs: str) -> None:
        f = self.feature(t[8], n, attrs)
        cw = t[10].upper() if len(t) > 10 else ""
        if cw not in ("Y", "N"):
            self.fail(f"arc direction must be Y (clockwise) or N, found {cw or 'nothing'!r}", n)
        values = (f, *(self.num(v, n) for v in t[1:7]), self.symbol(t[7], n), cw == "Y")
        for key, value in zip(_ARC_KEYS, values):
            self.arcs[key].append(value)

    def pad(self, t: list[str], n: int, attrs: str) -> None:
        x, y = self.num(t[1], n), self.num(t[2], n)
        scale = 1.0
        if t[3] == "-1":
            sym = self.symbol(t[4], n)
            scale = check_range("pad scale", number(t[5], self.src, n, "resize factor"), "resize factor",
                                self.src.name, n)
            rest = t[6:]
            self.log.add("resized symbol: factor taken as a plain scale", n)
        else:
            sym = self.symbol(t[3], n)
            rest = t[4:]
        f = self.feature(rest[0], n, attrs)
        rotation, mirror = 0.0, False
        if len(rest) > 2:
            orient = integer(rest[2], self.src, n, "pad orientation")
            if orient in LEGACY_ORIENT:
                rotation, mirror = LEGACY_ORIENT[orient]
            elif orient in (8, 9):
                rotation = check_range("rotation", number(rest[3], self.src, n, "rotation angle"), "rotation angle",
                                       self.src.name, n)
                mirror = orient == 9
            else:
                self.fail(f"pad orientation must be 0-9, found {orient}", n)
        for key, value in zip(_PAD_KEYS, (f, x, y, sym, rotation, mirror, scale)):
            self.pads[key].append(value)

    def surface_record(self, head: str, t: list[str], n: int) -> None:
        feature, opened, contours = self.surface
        if head == "OB":
            if self.contour is not None:
                self.fail(f"contour opened at line {self.contour[1]} has no OE", n)
            kind = t[3].upper() if len(t) > 3 else "I"
            if kind not in ("I", "H"):
                self.fail(f"contour type must be I (island) or H (hole), found {t[3]!r}", n)
            self.contour = (kind, n, [(self.num(t[1], n), self.num(t[2], n))], [])
        elif head in ("OS", "OC"):
            if self.contour is None:
                self.fail(f"{head} outside a contour (no OB before it)", n)
            _, _, points, arcs = self.contour
            self.contour_points += 1
            if self.contour_points > self.most_points:
                check_count(self.contour_points, SEGMENTS, "surface contour points", self.src.name, n)
            points.append((self.num(t[1], n), self.num(t[2], n)))
            if head == "OS":
                arcs.append(None)
            else:
                cw = t[5].upper() if len(t) > 5 else ""
                if cw not in ("Y", "N"):
                    self.fail(f"contour arc direction must be Y or N, found {cw or 'nothing'!r}", n)
                arcs.append((cw == "Y", (self.num(t[3], n), self.num(t[4], n))))
        elif head == "OE":
            if self.contour is None:
                self.fail("OE without OB", n)
            contours.append(self.contour)
            self.contour = None
        elif head == "SE":
            if self.contour is not None:
                self.fail(f"surface ends with the contour opened at line {self.contour[1]} still open", n)
            self.surfaces.append((feature, opened, contours))
            self.surface = None
        else:
            self.fail(f"record {head!r} inside a surface (opened at line {opened})", n)


def parse_features(src: JobFile, default_units: str | None, resolve_symbol, keep_attributes: bool = False,
                   what: str = "features file") -> FeatureTable:
    """Read one features file.

    ``default_units`` applies when the file has no units line (the job's ``misc/info``);
    ``resolve_symbol(name, size_mm, src, line)`` gives a :class:`Symbol` for a name.
    """
    p = _Parser(src, default_units, keep_attributes)
    lines = read_lines(src, what)
    p.parse(lines)
    units = p.units or default_units
    if units is None:
        p.fail("no UNITS line, and the job's misc/info gives none", None)
    scale = UNITS[units][0]

    used = {k for k, _ in p.sym_lines}
    for k, line in p.sym_lines:
        if k not in p.symbol_refs:
            p.fail(f"feature uses symbol ${k}, which the symbol table does not define", line)
    symbols = {}
    for k in sorted(used):
        ref = p.symbol_refs[k]
        size_units = {"I": "INCH", "M": "MM"}.get(ref.units, units)
        symbols[k] = resolve_symbol(ref.name, UNITS[size_units][1], src, ref.line)
        if symbols[k].approximate:
            p.log.add(f"symbol {ref.name!r} is of a kind nearfar does not model; drawn as its bounding box", ref.line)

    def arrays(columns: dict, coords: tuple[str, ...]) -> dict[str, np.ndarray]:
        out = {k: np.asarray(v) for k, v in columns.items()}
        for k in coords:
            out[k] = np.asarray(columns[k], dtype=np.float64) * scale
        out["feature"] = np.asarray(columns["feature"], dtype=np.int64)
        out["sym"] = np.asarray(columns["sym"], dtype=np.int64)
        return out

    lines_ = arrays(p.lines, ("xs", "ys", "xe", "ye"))
    arcs = arrays(p.arcs, ("xs", "ys", "xe", "ye", "xc", "yc"))
    arcs["cw"] = np.asarray(p.arcs["cw"], dtype=bool)
    pads = arrays(p.pads, ("x", "y"))
    pads["rotation"] = np.asarray(p.pads["rotation"], dtype=np.float64)
    pads["mirror"] = np.asarray(p.pads["mirror"], dtype=bool)
    pads["scale"] = np.asarray(p.pads["scale"], dtype=np.float64)
    for table, coords in ((lines_, ("xs", "ys", "xe", "ye")), (arcs, ("xs", "ys", "xe", "ye", "xc", "yc")),
                          (pads, ("x", "y"))):
        _check_coordinates(p, np.column_stack([table[k] for k in coords]), table["feature"])
    surfaces = [(f, _surface_polygons(contours, scale, p)) for f, _, contours in p.surfaces]
    return FeatureTable(src=src, units=units, count=len(p.positive), positive=np.asarray(p.positive, dtype=bool),
                        record_line=np.asarray(p.record_line, dtype=np.int64), attributes=p.attributes,
                        attribute_names=p.attribute_names, symbols=symbols,
                        lines=lines_, arcs=arcs, pads=pads, surfaces=surfaces, log=p.log)


def _check_coordinates(p: _Parser, values: np.ndarray, feature: np.ndarray) -> None:
    """Refuse coordinates (mm, one row per feature) outside the physical range, naming the first one's line."""
    if not len(values):
        return
    largest = np.max(np.abs(values), axis=1)
    bad = np.flatnonzero(~(largest <= MAX_COORDINATE_MM))
    if len(bad):
        row = values[bad[0]]
        worst = row[np.argmax(np.where(np.isfinite(row), np.abs(row), np.inf))]
        p.fail(range_problem("coordinate", worst, "coordinate"), p.record_line[int(feature[bad[0]])])


def _surface_polygons(contours, scale: float, p: _Parser) -> list[shapely.Geometry]:
    """Each island with the holes that follow it cut out (all at once, so many holes cost one difference);
    contours as given (no reliance on winding)."""
    islands: list[tuple[shapely.Geometry, list[shapely.Geometry]]] = []
    for kind, line, points, arcs in contours:
        pts = np.asarray(points, dtype=np.float64) * scale
        centres = [None if a is None else (a[0], (a[1][0] * scale, a[1][1] * scale)) for a in arcs]
        extent = np.abs(np.concatenate([pts.ravel(), [v for c in centres if c is not None for v in c[1]]]))
        if not (extent <= MAX_COORDINATE_MM).all():
            p.fail(range_problem("coordinate", extent[~(extent <= MAX_COORDINATE_MM)][0], "contour coordinate"), line)
        try:
            poly = arc_poly_polygon(pts, centres)
        except InputError as exc:
            p.fail(exc.message, line)
        if poly.is_empty:
            p.log.add("surface contour with no area ignored", line)
        elif kind == "I":
            islands.append((poly, []))
        elif islands:
            islands[-1][1].append(poly)
        else:
            p.log.add("hole contour before any island ignored", line)
    cut = [shapely.difference(island, shapely.union_all(holes)) if holes else island for island, holes in islands]
    return [g for island in cut for g in shapely.get_parts(island) if not g.is_empty]
