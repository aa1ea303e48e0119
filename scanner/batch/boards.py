"""The boards of a batch: paths from the command line and from list files, each with its report folder name."""
from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass
from pathlib import Path

from scanner.errors import InputError
from scanner.input_limits import read_input

#: an argument starting with this names a text file of board paths (write ``./@name`` for a board called ``@name``)
LIST_PREFIX = "@"
#: hex digits of the path hash in a report folder name
FOLDER_HASH_DIGITS = 10


@dataclass(frozen=True)
class BoardEntry:
    """One board: as shown to the user, where it is, and the name of its report folder under ``--out``."""

    shown: str
    path: Path
    folder: str


def expand_boards(args: list[str]) -> tuple[list[BoardEntry], list[str]]:
    """Boards in the order given, each once; and the notes about entries given more than once.

    In a list file each line is a board path; blank lines and lines starting with ``#`` are skipped,
    relative paths are taken from the list file's folder."""
    entries: list[BoardEntry] = []
    notes: list[str] = []
    seen: dict[Path, str] = {}
    for shown, path in _paths(args):
        resolved = path.resolve()
        if resolved in seen:
            notes.append(f"{shown}: the same board as {seen[resolved]}, scanned once")
            continue
        seen[resolved] = shown
        entries.append(BoardEntry(shown, resolved, folder_name(resolved)))
    if not entries:
        raise InputError("no boards given (the list files are empty)")
    return entries, notes


def folder_name(resolved: Path) -> str:
    """``<base name>-<hash of the full path>``: readable, unique for boards of the same base name,
    the same on every run for the same path."""
    digest = hashlib.sha256(str(resolved).encode("utf-8", "surrogateescape")).hexdigest()[:FOLDER_HASH_DIGITS]
    base = re.sub(r"[^A-Za-z0-9._-]+", "_", resolved.name).strip("._")[:60] or "board"
    return f"{base}-{digest}"


def _paths(args: list[str]):
    for arg in args:
        if not arg.startswith(LIST_PREFIX):
            yield arg, Path(arg)
            continue
        list_file = Path(arg[len(LIST_PREFIX):])
        if not list_file.is_file():
            raise InputError("list of boards not found", path=list_file)
        data = read_input(list_file, str(list_file), "list of boards")
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise InputError(f"list of boards is not UTF-8 text (byte {exc.start})", path=list_file) from None
        for line in text.splitlines():
            entry = line.strip()
            if entry and not entry.startswith("#"):
                path = Path(entry) if Path(entry).is_absolute() else list_file.parent / entry
                yield str(path), path
