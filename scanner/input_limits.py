"""Limits on what one input may hold, so a damaged or hostile file stops with a clear message, not a full memory.

Each count limit can be raised with an environment variable, read when it is checked.
"""
from __future__ import annotations

import os
from pathlib import Path

from scanner.errors import InputError

#: (environment variable, default): largest text input file, in MB (2**20 bytes)
FILE_MB = ("NEARFAR_MAX_FILE_MB", 200)
#: graphic objects in one Gerber file, holes in one drill file, records in one netlist
OBJECTS = ("NEARFAR_MAX_OBJECTS", 5_000_000)
#: trace segments on one board; straight pieces and outline points one file expands into once arcs are flattened
SEGMENTS = ("NEARFAR_MAX_SEGMENTS", 20_000_000)

#: no board coordinate or size lies further than this from the origin (mm); beyond it the file is damaged
MAX_COORDINATE_MM = 10_000.0


def limit(setting: tuple[str, int]) -> int:
    """The limit's value: its environment variable when set, else the default."""
    variable, default = setting
    text = os.environ.get(variable)
    if text is None or not text.strip():
        return default
    if not text.strip().isdigit() or int(text) < 1:
        raise InputError(f"environment variable {variable} must be a whole number of at least 1, got {text!r}")
    return int(text)


def read_input(path: Path, name: str, what: str) -> bytes:
    """The bytes of one input file, refused when larger than the file-size limit (never more is read)."""
    most = limit(FILE_MB) * 2**20
    try:
        with open(path, "rb") as fh:
            data = fh.read(most + 1)
    except OSError as exc:
        raise InputError(f"cannot read {what}: {exc.strerror or exc}", path=name) from exc
    if len(data) > most:
        raise InputError(f"{what} is larger than the limit of {most // 2**20} MB "
                         f"(raise it with {FILE_MB[0]})", path=name)
    return data


def check_count(count: int, setting: tuple[str, int], what: str, name: str | None = None,
                line: int | None = None) -> None:
    """Refuse ``count`` items of ``what`` beyond the limit."""
    most = limit(setting)
    if count > most:
        raise InputError(f"more than {most:,} {what} (raise the limit with {setting[0]})", path=name, line=line)


def coordinate_problem(largest_mm: float) -> str | None:
    """Why a coordinate or size of ``largest_mm`` (absolute, mm) cannot be board geometry; None when it can."""
    if largest_mm <= MAX_COORDINATE_MM:
        return None
    return (f"coordinate or size of {largest_mm:.6g} mm is beyond the limit of {MAX_COORDINATE_MM:g} mm; "
            "the file is damaged or its number format is wrong")
