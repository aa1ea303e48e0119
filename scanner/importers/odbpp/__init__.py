"""The ODB++ importer: layer matrix, copper features, EDA net links, drill layers and stackup of one job step.

Registered in the ``nearfar.importers`` entry-point group as ``odbpp``; it claims any
folder holding a ``matrix/matrix`` file. :func:`load_odbpp` reads a job folder or a
``.tgz``/``.tar.gz``/``.tar``/``.zip`` archive directly.
"""
from __future__ import annotations

import re
from pathlib import Path

from scanner.board.model import Board
from scanner.errors import InputError, reading
from scanner.importers.boardfile import BOARD_FILE_NAME, read_board_file
from scanner.importers.odbpp.archive import extract_job_archive, is_job_archive
from scanner.importers.odbpp.job import open_job
from scanner.importers.odbpp.reader import FORMAT, KIND_SOURCE, NETTING_METHOD, read_job
from scanner.importers.odbpp.text import JobFile
from scanner.importers.sources import SourceFile, folder_name, list_sources
from scanner.workspace import unpack_folder

__all__ = ["OdbppImporter", "load_odbpp", "FORMAT", "KIND_SOURCE", "NETTING_METHOD"]

_MATRIX = re.compile(r"(?:^|/)matrix/matrix$", re.I)
#: a layer features file of a step, for folders whose matrix is missing
_STEP_FEATURES = re.compile(r"(?:^|/)steps/[^/]+/layers/[^/]+/features(?:\.z)?$", re.I)


def _job_prefixes(files: list[SourceFile]) -> dict[str, SourceFile]:
    """Job folders (as a relative prefix) by a file in each: from matrix files, else from step layer files."""
    found = {}
    for f in files:
        if (m := _MATRIX.search(f.rel)):
            found.setdefault(f.rel[: m.start() + (m.group(0)[0] == "/")], f)
    if not found:
        for f in files:
            if (m := _STEP_FEATURES.search(f.rel)):
                found.setdefault(f.rel[: m.start() + (m.group(0)[0] == "/")], f)
    return found


class OdbppImporter:
    """Claims folders holding an ODB++ job (a ``matrix/matrix`` file), above any Gerber claim.

    Folders with step layer files but no matrix get a low claim, so that the missing
    matrix is reported rather than "no importer recognises these files".
    """

    name = "odbpp"

    def __init__(self, step: str | None = None):
        self.step = step

    def claims(self, files: list[SourceFile]) -> float:
        if any(_MATRIX.search(f.rel) for f in files):
            return 3.0
        return 0.5 if any(_STEP_FEATURES.search(f.rel) for f in files) else 0.0

    def load(self, root: Path, files: list[SourceFile], board_file: Path | None = None) -> Board:
        jobs = _job_prefixes(files)
        if len(jobs) != 1:
            raise InputError(f"expected one ODB++ job, found {len(jobs)}"
                             + (f" ({', '.join(p or '.' for p in jobs)})" if jobs else ""), path=folder_name(files))
        prefix, sample = next(iter(jobs.items()))
        display = sample.name[: len(sample.name) - len(sample.rel)] + prefix
        job_root = JobFile(root / prefix if prefix else root, display)
        with reading(display or "the ODB++ job"):
            return read_job(open_job(job_root, self.step), _board_file_planes(files, board_file))


def load_odbpp(path, step: str | None = None) -> Board:
    """Read an ODB++ job folder (or a folder holding one job) or a job archive, choosing ``step`` if given."""
    path = Path(path)
    if not path.exists():
        raise InputError("ODB++ job folder or archive not found", path=path)
    if path.is_dir():
        board = OdbppImporter(step).load(path, list_sources(path, f"{path}/"))
    elif not is_job_archive(path):
        raise InputError("expected an ODB++ job folder or a .tgz, .tar.gz, .tar or .zip archive", path=path)
    else:
        with unpack_folder() as tmp:
            extract_job_archive(path, tmp)
            board = OdbppImporter(step).load(tmp, list_sources(tmp, f"{path.name}!"))
    board.source = str(path)
    board.name = path.name
    return board


def _board_file_planes(files: list[SourceFile], explicit: Path | None) -> tuple[list[str], str] | None:
    """The board file's ``planes`` and the file's name; its other keys do not apply to ODB++."""
    found = [f for f in files if f.kind == "board-file" and f.rel == BOARD_FILE_NAME]
    if explicit is None and not found:
        return None
    cfg = read_board_file(explicit) if explicit is not None else read_board_file(found[0].path, found[0].name)
    if cfg.layers or cfg.netlist or cfg.drills is not None:
        raise InputError("only 'planes' applies to an ODB++ job (the matrix gives layers and drills, the EDA data "
                         "the nets)", path=cfg.path)
    return (cfg.planes, cfg.path) if cfg.planes else None
