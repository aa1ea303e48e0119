"""Which Gerber files are copper, in what stack order, and which are planes.

Sources, strongest first: the board file's ``layers``, X2 ``.FileFunction`` in the files,
the job file's ``FilesAttributes``, and last the file names.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from scanner.errors import InputError
from scanner.importers.sources import SourceFile

_NOT_COPPER = re.compile(
    r"mask|silk|paste|legend|overlay|outline|profile|edge|keep.?out|courtyard|fab|assy|assembly|drill|"
    r"mech|dimension|stencil|contour|rout|comment|drawing|notes")
_NOT_COPPER_EXT = {".gts", ".gbs", ".gto", ".gbo", ".gtp", ".gbp", ".gko", ".gm1", ".gml", ".gtm", ".gbm"}
_TOP = re.compile(r"(?:^|[^a-z])(?:top|front|f[._]cu|primary|comp(?:onent)?side)(?:[^a-z]|$)")
_BOTTOM = re.compile(r"(?:^|[^a-z])(?:bot|bottom|back|b[._]cu|secondary|solderside)(?:[^a-z]|$)")
_NUMBERED = re.compile(r"(?:^|[^a-z])(?:l|layer|lyr|inner|in|int|art|copper|cu|sig|signal|plane|gnd|pwr)"
                       r"[-_ .]?0*(\d{1,2})(?:[^0-9]|$)")
_EXT_SIDE = {".gtl": "top", ".cmp": "top", ".gbl": "bottom", ".sol": "bottom"}
_EXT_INNER = re.compile(r"^\.g(p?)(\d{1,2})$")
#: highest copper layer number accepted from X2 or job-file attributes
MAX_COPPER_LAYERS = 128


@dataclass(frozen=True)
class CopperFile:
    source: SourceFile
    side: str  # "top" | "inner" | "bottom"
    kind_hint: str | None  # "plane" | "signal" | None
    hint_source: str | None  # where kind_hint came from


def _side(position: int, count: int) -> str:
    return "top" if position == 0 else ("bottom" if position == count - 1 else "inner")


def _x2_hint(function: tuple[str, ...] | None) -> str | None:
    if function and len(function) > 3:
        return {"Plane": "plane", "Signal": "signal", "Mixed": "signal"}.get(function[3])
    return None


def _with_hint(src: SourceFile, side: str, job_functions: dict) -> CopperFile:
    """A copper file with the plane/signal hint from its X2 attributes, else from the job file."""
    if (hint := _x2_hint(src.file_function)) is not None:
        return CopperFile(src, side, hint, "gerber-x2")
    if (hint := _x2_hint(job_functions.get(src.path.name))) is not None:
        return CopperFile(src, side, hint, "job-file")
    return CopperFile(src, side, None, None)


def _layer_number(function: tuple[str, ...], name: str) -> int:
    if len(function) < 2 or not re.fullmatch(r"L[1-9]\d*", function[1]):
        raise InputError(f"copper .FileFunction {','.join(function)!r} has no L<n> layer number (n from 1)",
                         path=name)
    return int(function[1][1:])


def guess_from_name(file_name: str) -> tuple[int, int] | None:
    """Sort key for a copper file from its name: (0, 0) top, (1, n) inner n, (2, 0) bottom; None if not copper."""
    low = file_name.lower()
    dot = low.rfind(".")
    stem, ext = (low[:dot], low[dot:]) if dot > 0 else (low, "")
    if ext in _NOT_COPPER_EXT or _NOT_COPPER.search(stem):
        return None
    if ext in _EXT_SIDE:
        return (0, 0) if _EXT_SIDE[ext] == "top" else (2, 0)
    if (m := _EXT_INNER.match(ext)):
        return (1, int(m.group(2)))
    if _TOP.search(stem):
        return (0, 0)
    if _BOTTOM.search(stem):
        return (2, 0)
    if (m := re.search(r"(?:^|[^a-z])in(\d{1,2})[._]cu", stem)) or (m := _NUMBERED.search(stem)):
        return (1, int(m.group(1)))
    return None


def copper_files(gerbers: list[SourceFile], board_layers: list[str] | None, board_file_name: str | None,
                 job_functions: dict[str, tuple[str, ...]] | None, where: str) -> tuple[list[CopperFile], str]:
    """Copper files top to bottom, and which evidence gave the order."""
    by_name = {}
    for src in gerbers:
        by_name.setdefault(src.path.name, src)
        by_name.setdefault(src.name, src)
    job_functions = job_functions or {}

    if board_layers:
        missing = [n for n in board_layers if n not in by_name]
        if missing:
            raise InputError(f"'layers' names file(s) not found as Gerber in {where}: {', '.join(missing)}",
                             path=board_file_name)
        chosen = [by_name[n] for n in board_layers]
        return [_with_hint(s, _side(i, len(chosen)), job_functions) for i, s in enumerate(chosen)], "board-file"

    x2 = [s for s in gerbers if s.is_copper_x2]
    if x2:
        keyed = sorted(((_layer_number(s.file_function, s.name), s) for s in x2), key=lambda t: t[0])
        _no_duplicates([(k, s.name) for k, s in keyed], "X2 .FileFunction", where)
        _no_gaps([k for k, _ in keyed], "X2 .FileFunction", where)
        return [_with_hint(s, _side(i, len(keyed)), job_functions) for i, (_, s) in enumerate(keyed)], "gerber-x2"

    job = [(job_functions[s.path.name], s) for s in gerbers
           if job_functions.get(s.path.name, ("",))[0] == "Copper"]
    if job:
        keyed = sorted(((_layer_number(f, s.name), f, s) for f, s in job), key=lambda t: t[0])
        _no_duplicates([(k, s.name) for k, _, s in keyed], "job file FilesAttributes", where)
        _no_gaps([k for k, _, _ in keyed], "job file FilesAttributes", where)
        return [_with_hint(s, _side(i, len(keyed)), job_functions) for i, (_, f, s) in enumerate(keyed)], "job-file"

    guessed = [(key, s) for s in gerbers if (key := guess_from_name(s.path.name)) is not None]
    guessed.sort(key=lambda t: (t[0], t[1].name))
    _no_duplicates([(k, s.name) for k, s in guessed], "file names", where)
    return [_with_hint(s, _side(i, len(guessed)), job_functions) for i, (_, s) in enumerate(guessed)], "file-names"


def _no_duplicates(keyed: list[tuple], evidence: str, where: str) -> None:
    seen = {}
    for key, name in keyed:
        if key in seen:
            raise InputError(f"{seen[key]} and {name} claim the same copper layer by {evidence}; "
                             "list the copper order in nearfar-board.toml", path=where)
        seen[key] = name


def _no_gaps(numbers: list[int], evidence: str, where: str) -> None:
    """Copper layers numbered L1..Ln with none missing: a missing layer would change every net through it."""
    if max(numbers) > MAX_COPPER_LAYERS:
        raise InputError(f"copper layer number L{max(numbers)} by {evidence} is beyond L{MAX_COPPER_LAYERS}",
                         path=where)
    missing = sorted(set(range(1, max(numbers) + 1)) - set(numbers))
    if missing:
        raise InputError(f"copper layer(s) {', '.join(f'L{n}' for n in missing)} missing: the copper files are "
                         f"numbered {', '.join(f'L{n}' for n in numbers)} by {evidence}", path=where)
