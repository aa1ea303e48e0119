"""The one exception type for bad input, caught once in the CLI."""
from __future__ import annotations

from pathlib import Path


class InputError(Exception):
    """Input that nearfar cannot use: names the file and, where known, the line."""

    def __init__(self, message: str, path: str | Path | None = None, line: int | None = None):
        self.message = " ".join(str(message).split())
        self.path = None if path is None else str(path)
        self.line = line
        super().__init__(self.one_line())

    def one_line(self) -> str:
        where = ""
        if self.path is not None:
            where = self.path if self.line is None else f"{self.path}:{self.line}"
            where += ": "
        return f"{where}{self.message}"
