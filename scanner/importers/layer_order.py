"""Which Gerber files are copper, in what stack order, and which are planes.

Sources, strongest first: the board file's ``layers``; X2 ``.FileFunction`` in the files; the
job file's ``FilesAttributes``; and last what names say (file name, header names, the stack
position a header states, gerbonara's per-tool name rules as a second opinion). Copper files
that claim the same place and fall into separate sets (sub-folders, design names) are two
boards in one folder: refused with the sets listed, never one picked silently.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from scanner.errors import InputError
from scanner.importers.boardfile import BOARD_FILE_NAME
from scanner.importers.layer_names import (UNKNOWN, VOCABULARY, LayerGuess, decide, gerbonara_guesses,
                                           guess_from_name, name_words)
from scanner.importers.sources import SourceFile

#: highest copper layer number accepted from X2 or job-file attributes
MAX_COPPER_LAYERS = 128


@dataclass(frozen=True)
class CopperFile:
    source: SourceFile
    side: str  # "top" | "inner" | "bottom"
    kind_hint: str | None  # "plane" | "signal" | None
    hint_source: str | None  # where kind_hint came from
    recognised_by: str = ""  # for files placed by names: the evidence, in words


def _side(position: int, count: int) -> str:
    return "top" if position == 0 else ("bottom" if position == count - 1 else "inner")


def _x2_hint(function: tuple[str, ...] | None) -> str | None:
    if function and len(function) > 3:
        return {"Plane": "plane", "Signal": "signal", "Mixed": "signal"}.get(function[3])
    return None


def _with_hint(src: SourceFile, side: str, job_functions: dict, recognised_by: str = "") -> CopperFile:
    """A copper file with the plane/signal hint from its X2 attributes, else from the job file."""
    if (hint := _x2_hint(src.file_function)) is not None:
        return CopperFile(src, side, hint, "gerber-x2", recognised_by)
    if (hint := _x2_hint(job_functions.get(src.path.name))) is not None:
        return CopperFile(src, side, hint, "job-file", recognised_by)
    return CopperFile(src, side, None, None, recognised_by)


def _layer_number(function: tuple[str, ...], name: str) -> int:
    if len(function) < 2 or not re.fullmatch(r"L[1-9]\d*", function[1]):
        raise InputError(f"copper .FileFunction {','.join(function)!r} has no L<n> layer number (n from 1)",
                         path=name)
    return int(function[1][1:])


def guess_layer(src: SourceFile, second_opinion: dict | None = None) -> LayerGuess:
    """What the file's name, header and gerbonara's rules together say it is."""
    header = src.header.guess() if src.header is not None else UNKNOWN
    return decide(guess_from_name(src.path.name), header, (second_opinion or {}).get(src.path))


def _sort_key(guess: LayerGuess) -> tuple[int, int]:
    return {"top": (0, 0), "bottom": (2, 0)}.get(guess.role, (1, guess.number or 0))


def copper_files(gerbers: list[SourceFile], board_layers: list[str] | None, board_file_name: str | None,
                 job_functions: dict[str, tuple[str, ...]] | None, where: str) -> tuple[list[CopperFile], str]:
    """Copper files top to bottom, and which evidence gave the order."""
    job_functions = job_functions or {}
    if board_layers:
        return _from_board_file(gerbers, board_layers, board_file_name, job_functions, where), "board-file"

    x2 = [s for s in gerbers if s.is_copper_x2]
    if x2:
        keyed = [(_layer_number(s.file_function, s.name), s) for s in x2]
        return _numbered(keyed, "X2 .FileFunction", job_functions, where), "gerber-x2"

    job = [(job_functions[s.path.name], s) for s in gerbers if job_functions.get(s.path.name, ("",))[0] == "Copper"]
    if job:
        keyed = [(_layer_number(f, s.name), s) for f, s in job]
        return _numbered(keyed, "job file FilesAttributes", job_functions, where), "job-file"

    return _from_names(gerbers, job_functions, where), "file-names"


def _from_board_file(gerbers, board_layers, board_file_name, job_functions, where) -> list[CopperFile]:
    """The board file's ``layers``: names relative to the board folder, or bare file names when unique."""
    by_name: dict[str, list[SourceFile]] = {}
    for src in gerbers:
        for key in {src.rel, src.path.name, src.name}:
            by_name.setdefault(key, []).append(src)
    missing = [n for n in board_layers if n not in by_name]
    if missing:
        raise InputError(f"'layers' names file(s) not found as Gerber in {where}: {', '.join(missing)}",
                         path=board_file_name)
    ambiguous = [n for n in board_layers if len(by_name[n]) > 1]
    if ambiguous:
        raise InputError(f"'layers' name(s) {', '.join(ambiguous)} match files in several folders; give the path "
                         "relative to the board folder (e.g. 'Gerber/top.gbr')", path=board_file_name)
    chosen = [by_name[n][0] for n in board_layers]
    return [_with_hint(s, _side(i, len(chosen)), job_functions) for i, s in enumerate(chosen)]


def _numbered(keyed: list[tuple[int, SourceFile]], evidence: str, job_functions, where) -> list[CopperFile]:
    keyed.sort(key=lambda t: (t[0], t[1].rel))
    _one_board([((k, 0), s) for k, s in keyed], evidence, where)
    _no_gaps([k for k, _ in keyed], evidence, where)
    return [_with_hint(s, _side(i, len(keyed)), job_functions) for i, (_, s) in enumerate(keyed)]


def _from_names(gerbers: list[SourceFile], job_functions, where) -> list[CopperFile]:
    """Copper placed by names; a header's stated stack position orders the files when all of them give one."""
    opinion = gerbonara_guesses([s.path for s in gerbers])
    guesses = {s: guess_layer(s, opinion) for s in gerbers}
    copper = [s for s in gerbers if guesses[s].is_copper]
    if not copper:
        return []
    unplaced = [s for s in copper if guesses[s].role == "copper"]
    orders = [s.header.physical_order if s.header else None for s in copper]
    if None not in orders and len(set(orders)) == len(orders):
        keyed = sorted(zip(orders, copper), key=lambda t: t[0])
        return [_with_hint(s, _side(i, len(keyed)), job_functions, f"header Layer_Physical_Order={k}")
                for i, (k, s) in enumerate(keyed)]
    if unplaced:
        raise InputError(f"copper file(s) whose place in the stack nothing says: {', '.join(s.rel for s in unplaced)}; "
                         f"list the copper files in stack order in {BOARD_FILE_NAME}", path=where)
    keyed = sorted(((_sort_key(guesses[s]), s) for s in copper), key=lambda t: (t[0], t[1].rel))
    _one_board(keyed, "file names", where)
    return [_with_hint(s, _side(i, len(keyed)), job_functions, guesses[s].evidence)
            for i, (_, s) in enumerate(keyed)]


def design_set(src: SourceFile) -> str:
    """The set a copper file belongs to: its folder and the words of its name that are not layer words."""
    folder = src.rel.rpartition("/")[0]
    words = name_words(src.path.name.rpartition(".")[0] or src.path.name)
    pairs = list(zip(words, words[1:] + [""]))
    kept = [w for w, nxt in pairs if w not in VOCABULARY and not w.isdigit() and not (w in ("f", "b") and nxt == "cu")]
    return f"{folder}/" + " ".join(kept) if folder else " ".join(kept)


def _one_board(keyed: list[tuple[tuple, SourceFile]], evidence: str, where: str) -> None:
    """Refuse copper files claiming one place: as two boards (with the sets) when they fall into sets."""
    seen: dict[tuple, SourceFile] = {}
    clash = None
    for key, src in keyed:
        if key in seen:
            clash = (seen[key], src)
            break
        seen[key] = src
    if clash is None:
        return
    sets: dict[str, list[SourceFile]] = {}
    for _, src in keyed:
        sets.setdefault(design_set(src), []).append(src)
    tidy = len(sets) > 1 and all(len(files) > 1 and len({k for k, s in keyed if s in files}) == len(files)
                                 for files in sets.values())
    if tidy:
        listed = "; ".join(f"set {i}: {', '.join(s.rel for s in files)}" for i, files in enumerate(sets.values(), 1))
        raise InputError(f"{len(sets)} boards in one folder? The copper files form {len(sets)} sets ({listed}). "
                         f"Give one set's folder, or list one set's copper files in {BOARD_FILE_NAME} "
                         "(layers = [...], paths relative to the board folder)", path=where)
    raise InputError(f"{clash[0].rel} and {clash[1].rel} claim the same copper layer by {evidence}; "
                     f"list the copper order in {BOARD_FILE_NAME}", path=where)


def _no_gaps(numbers: list[int], evidence: str, where: str) -> None:
    """Copper layers numbered L1..Ln with none missing: a missing layer would change every net through it."""
    if max(numbers) > MAX_COPPER_LAYERS:
        raise InputError(f"copper layer number L{max(numbers)} by {evidence} is beyond L{MAX_COPPER_LAYERS}",
                         path=where)
    missing = sorted(set(range(1, max(numbers) + 1)) - set(numbers))
    if missing:
        raise InputError(f"copper layer(s) {', '.join(f'L{n}' for n in missing)} missing: the copper files are "
                         f"numbered {', '.join(f'L{n}' for n in numbers)} by {evidence}", path=where)
