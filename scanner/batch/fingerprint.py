"""What a board's report depends on, as one hash: its files, the rules, the image setting and nearfar itself."""
from __future__ import annotations

import hashlib
import os
from importlib import metadata
from pathlib import Path

from scanner.errors import InputError
from scanner.scoring.results import SCHEMA

_CHUNK_BYTES = 1 << 20


def nearfar_version() -> str:
    try:
        return metadata.version("nearfar")
    except metadata.PackageNotFoundError:
        return "unknown"


def rules_digest(rules_path: Path | None, stackup_path: Path | None = None) -> str:
    """The bytes of the rules file and of the stackup file (each may be absent: the defaults)."""
    if rules_path is None and stackup_path is None:
        return "defaults"
    h = hashlib.sha256()
    for path in (rules_path, stackup_path):
        if path is None:
            h.update(b"none\0")
        else:
            _add_file(h, path)
    return h.hexdigest()


def inputs_digest(board: Path, rules: str, images: bool) -> str:
    """Hash of every file of the board (names and bytes), the rules digest, the image setting, nearfar's
    version and report schema: equal digests mean a new scan would write the same report."""
    h = hashlib.sha256()
    for part in (nearfar_version(), SCHEMA, rules, "images" if images else "tables"):
        h.update(part.encode() + b"\0")
    for name, path in _board_files(board):
        h.update(name.encode("utf-8", "surrogateescape") + b"\0")
        _add_file(h, path)
    return h.hexdigest()


def _board_files(board: Path):
    """(name, path) of each file of a board folder, sorted; an archive is one file."""
    if board.is_file():
        return [(board.name, board)]
    if not board.is_dir():
        raise InputError("board folder or archive not found", path=board)
    files = []
    for folder, dirs, names in os.walk(board):
        dirs.sort()
        for name in names:
            path = Path(folder) / name
            files.append((path.relative_to(board).as_posix(), path))
    return sorted(files)


def _add_file(h, path: Path) -> None:
    with open(path, "rb") as fh:
        size = 0
        while chunk := fh.read(_CHUNK_BYTES):
            h.update(chunk)
            size += len(chunk)
    h.update(f"\0{size}\0".encode())
