"""Turn a board folder or archive into a :class:`scanner.board.model.Board`.

One module per format; the registry (``registry.py``) picks the importer that claims the
files best. Importers come from the ``nearfar.importers`` entry-point group.
"""
from __future__ import annotations

import tempfile
from pathlib import Path

from scanner.board.model import Board
from scanner.errors import InputError, printable
from scanner.importers.odbpp.archive import TAR_SUFFIXES, extract_job_archive
from scanner.importers.registry import choose, discover
from scanner.importers.sources import list_sources

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
        with tempfile.TemporaryDirectory(prefix="nearfar-") as tmp:
            root = Path(tmp)
            extract_job_archive(path, root)
            return _load_folder(root, board_file, step, where=printable(str(path)), prefix=f"{path.name}!")
    return _load_folder(path, board_file, step, where=printable(str(path)), prefix=f"{path}/")


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
