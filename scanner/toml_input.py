"""TOML input files (rules, waivers): read within the size limit, decoded, parsed; errors name the file and line."""
from __future__ import annotations

import re
import tomllib
from pathlib import Path

from scanner.errors import InputError
from scanner.input_limits import read_input


def read_toml(path: str | Path, what: str) -> dict:
    """The parsed document of a TOML file; a missing, oversized, non-UTF-8 or malformed file is an InputError."""
    path = Path(path)
    if not path.exists():
        raise InputError(f"{what} not found", path)
    try:
        text = read_input(path, str(path), what).decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(f"{what} is not UTF-8 text (byte {exc.start})", path) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        line = getattr(exc, "lineno", None) or _toml_line(str(exc))
        raise InputError(f"not valid TOML: {str(exc).split(' (at')[0]}", path, line) from None


def _toml_line(msg: str):
    m = re.search(r"line (\d+)", msg)
    return int(m.group(1)) if m else None
