"""Importers, found through the ``nearfar.importers`` entry-point group, and the choice between them.

An importer is a class (or instance) with a ``name``, ``claims(files) -> float`` (0 when the
files are not its format, higher for a better fit) and
``load(root, files, board_file=None) -> Board``.
"""
from __future__ import annotations

from importlib.metadata import entry_points
from pathlib import Path
from typing import Protocol

from scanner.board.model import Board
from scanner.errors import InputError
from scanner.importers.sources import SourceFile

ENTRY_POINT_GROUP = "nearfar.importers"


class Importer(Protocol):
    name: str

    def claims(self, files: list[SourceFile]) -> float: ...

    def load(self, root: Path, files: list[SourceFile], board_file: Path | None = None) -> Board: ...


def discover() -> list[Importer]:
    """All registered importers; the built-in Gerber importer even when the package metadata is missing."""
    found = []
    names = set()
    for ep in sorted(entry_points(group=ENTRY_POINT_GROUP), key=lambda e: e.name):
        target = ep.load()
        found.append(target() if isinstance(target, type) else target)
        names.add(ep.name)
    if "gerber" not in names:
        from scanner.importers.gerber import GerberImporter

        found.append(GerberImporter())
    return found


def choose(importers: list[Importer], files: list[SourceFile], where: str) -> Importer:
    """The importer with the highest claim; ties go to the earlier one."""
    best, best_score = None, 0.0
    for importer in importers:
        score = float(importer.claims(files) or 0.0)
        if score > best_score:
            best, best_score = importer, score
    if best is None:
        kinds = sorted({f.kind for f in files})
        raise InputError(f"no importer recognises these files (found: {', '.join(kinds) or 'no files'})", path=where)
    return best
