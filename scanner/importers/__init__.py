"""Turn a board folder or archive into a :class:`scanner.board.model.Board`.

One module per format; the registry (``registry.py``) picks the importer that claims the
files best. Importers come from the ``nearfar.importers`` entry-point group.
"""
from __future__ import annotations

import os
from pathlib import Path

from scanner.board.model import Board
from scanner.errors import InputError, printable
from scanner.importers.odbpp.archive import TAR_SUFFIXES, extract_job_archive
from scanner.importers.registry import choose, discover
from scanner.importers.sources import list_sources
from scanner.memory import stage
from scanner.workspace import unpack_folder

__all__ = ["load_board"]


def load_board(path, board_file=None, step: str | None = None) -> Board:
    """Read a board folder or archive (``.zip``; ``.tgz``, ``.tar.gz``, ``.tar`` for ODB++ jobs);
    ``board_file`` overrides ``nearfar-board.toml``; ``step`` names the ODB++ step to read."""
    path = Path(path)
    board_file = None if board_file is None else Path(board_file)
    if board_file is not None and not board_file.is_file():
        raise InputError("board file not found", path=board_file)
    if not path.exists():
        raise InputError("board folder or archive not found", path=path)
    if path.is_file():
        if path.suffix.lower() != ".zip" and not path.name.lower().endswith(TAR_SUFFIXES):
            raise InputError("expected a board folder, a .zip archive or a .tgz/.tar.gz/.tar ODB++ job", path=path)
        with unpack_folder() as root:
            try:
                extract_job_archive(path, root)
                return _load_folder(root, board_file, step, where=printable(str(path)), prefix=f"{path.name}!")
            except (InputError, OSError) as exc:
                named = _named_in_archive(exc, root, f"{path.name}!")
                if named is exc:
                    raise
                raise named from exc
    return _load_folder(path, board_file, step, where=printable(str(path)), prefix=f"{path}/")


def _named_in_archive(exc: InputError | OSError, root: Path, prefix: str) -> InputError | OSError:
    """The same error, naming a file in the unpacking folder as ``archive!entry`` (that folder is gone
    by the time anyone reads the message)."""
    inside = printable(str(root))
    if isinstance(exc, InputError):
        if exc.path is None or not exc.path.startswith(inside):
            return exc
        return InputError(exc.message, path=prefix + exc.path[len(inside):].lstrip("/"), line=exc.line)
    name = Path(os.fsdecode(exc.filename)) if exc.filename is not None else None
    if name is None or not name.is_relative_to(root):
        return exc
    return OSError(exc.errno, exc.strerror, prefix + name.relative_to(root).as_posix())


def _load_folder(root: Path, board_file: Path | None, step: str | None, where: str, prefix: str) -> Board:
    files = list_sources(root, prefix)
    if not files:
        raise InputError("no files found", path=where)
    importer = choose(discover(), files, where)
    if step is not None:
        if not hasattr(importer, "step"):
            raise InputError(f"--step names a step of an ODB++ job; these files are read as {importer.name}",
                             path=where)
        importer.step = step
    with stage(f"reading {where}", f"{len(files)} files, {sum(f.path.stat().st_size for f in files):,} bytes"):
        board = importer.load(root, files, board_file=board_file)
    board.source = where
    if not board.name:
        board.name = _archive_stem(Path(where).name) if Path(where).is_file() else Path(where).name
    board.name = printable(board.name)  # the importer may take it from file names or the design's own files
    return board


def _archive_stem(name: str) -> str:
    for suffix in (".zip",) + TAR_SUFFIXES:
        if name.lower().endswith(suffix):
            return name[: -len(suffix)]
    return name
