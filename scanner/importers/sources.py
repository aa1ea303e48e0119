"""The files of a board folder, each sniffed for its format (by content first, then by name)."""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from scanner.errors import InputError, printable
from scanner.importers.boardfile import BOARD_FILE_NAME
from scanner.importers.layer_names import HeaderNames, header_names

#: bytes read from each file to recognise its format
SNIFF_BYTES = 65536

_FILE_FUNCTION = re.compile(r"TF\.FileFunction,([^*%\r\n]*)")
_GERBER = re.compile(r"%FS[LTD]?[AI]|%MO(?:MM|IN)|^G04 ", re.M)
_EXCELLON = re.compile(r"^M48\s*$|^;\s*DRILL|^T\d+C[\d.]+", re.M)
_IPC356 = re.compile(r"^P\s+(?:UNITS|JOB|CODE)|^3[123]7\S", re.M)
_JOB_SUFFIXES = {".gbrjob"}

#: name endings that say what a file is meant to be, for files whose content is not recognised
_NAMED_KINDS = (
    ("gerber", re.compile(r"\.(?:gbr|ger|pho|art|gdo|cmp|sol|g[tb][lsopm]|gko|gml|gm\d{1,2}|gp?\d{1,2})$", re.I)),
    ("excellon", re.compile(r"\.(?:drl|xln|exc|drd|ncd)$", re.I)),
    ("ipc356", re.compile(r"\.(?:ipc|d356|356)$", re.I)),
)


@dataclass(frozen=True)
class SourceFile:
    """One input file: where it is, how reports name it, what it is."""

    path: Path
    name: str  # how messages name it: folder path or ``archive.zip!member``
    rel: str  # path relative to the board folder, with forward slashes
    kind: str  # "gerber" | "excellon" | "ipc356" | "job" | "board-file" | "other"
    file_function: tuple[str, ...] | None = None  # X2 ``.FileFunction`` from the header, if any
    header: HeaderNames | None = None  # Gerber: layer names and stack position its header states

    @property
    def is_copper_x2(self) -> bool:
        return self.kind == "gerber" and bool(self.file_function) and self.file_function[0] == "Copper"


def sniff(path: Path, name: str, rel: str) -> SourceFile:
    if path.name == BOARD_FILE_NAME:
        return SourceFile(path, name, rel, "board-file")
    try:
        with open(path, "rb") as fh:
            head = fh.read(SNIFF_BYTES).decode("latin-1")
    except OSError:
        return SourceFile(path, name, rel, "other")
    function = None
    if (m := _FILE_FUNCTION.search(head)):
        function = tuple(p.strip() for p in m.group(1).split(","))
    if (path.suffix.lower() in _JOB_SUFFIXES or (head.lstrip().startswith("{") and '"MaterialStackup"' in head)
            or (function and function[0] == "JobInfo" and _GERBER.search(head))):
        return SourceFile(path, name, rel, "job", function)
    if _GERBER.search(head) and "%" in head:
        return SourceFile(path, name, rel, "gerber", function, header_names(head))
    if _EXCELLON.search(head):
        return SourceFile(path, name, rel, "excellon", function)
    if _IPC356.search(head):
        return SourceFile(path, name, rel, "ipc356")
    return SourceFile(path, name, rel, "other")


def named_kind(file_name: str) -> str | None:
    """The format a file's name ending promises ("gerber", "excellon", "ipc356"), whatever its content."""
    return next((kind for kind, pattern in _NAMED_KINDS if pattern.search(file_name)), None)


def folder_name(files: list[SourceFile]) -> str:
    """How messages name the folder or archive ``files`` came from (never a temporary extraction folder)."""
    first = files[0]
    prefix = first.name[: len(first.name) - len(printable(first.rel))]
    return prefix[:-1] if prefix.endswith(("/", "!")) else prefix


def list_sources(root: Path, prefix: str = "") -> list[SourceFile]:
    """All regular files below ``root`` (hidden ones skipped), sorted; ``prefix`` goes in front of display names.

    Symbolic links, devices and pipes are refused: a link may point anywhere, and skipping it
    would quietly drop a file the board needs.
    """
    out = []
    for path in sorted(root.rglob("*")):
        rel = path.relative_to(root)
        if any(part.startswith(".") for part in rel.parts):
            continue
        name = printable(prefix + rel.as_posix())
        if path.is_symlink():
            raise InputError("symbolic link; nearfar reads only regular files in a board folder (copy the file in)",
                             path=name)
        if path.is_file():
            out.append(sniff(path, name, rel.as_posix()))
        elif not path.is_dir():
            raise InputError("not a regular file (a device or pipe)", path=name)
    return out
