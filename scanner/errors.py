"""The one exception type for bad input, caught once in the CLI."""
from __future__ import annotations

from pathlib import Path

#: surrogates Python uses for file-name bytes that are not valid UTF-8 (PEP 383)
_UNDECODED = range(0xDC80, 0xDD00)


def printable(text: str) -> str:
    """``text`` on one line and safe to print: control characters, invisible marks and undecodable
    file-name bytes written as escapes (``\\n``, ``\\x1b``, ``\\u202e``, ``\\xff``)."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else _escape(ch) for ch in text)


def _escape(ch: str) -> str:
    if ord(ch) in _UNDECODED:
        return f"\\x{ord(ch) - 0xDC00:02x}"
    return ch.encode("unicode_escape").decode("ascii")


class InputError(Exception):
    """Input that nearfar cannot use: names the file and, where known, the line."""

    def __init__(self, message: str, path: str | Path | None = None, line: int | None = None):
        self.message = printable(" ".join(str(message).split()))
        self.path = None if path is None else printable(str(path))
        self.line = line
        super().__init__(self.one_line())

    def one_line(self) -> str:
        where = ""
        if self.path is not None:
            where = self.path if self.line is None else f"{self.path}:{self.line}"
            where += ": "
        return f"{where}{self.message}"


class InternalError(Exception):
    """A fault of nearfar itself, not of the input (a figure that is not a finite number): one line on
    standard error and exit status 4."""
