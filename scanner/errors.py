"""The one exception type for bad input, caught once in the CLI, and which input file is being read."""
from __future__ import annotations

from contextlib import contextmanager
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



#: the input files being read now, innermost last, for the one-line report of an internal error
_reading: list[str] = []

#: attribute an escaping exception carries naming the file that was being read when it was raised
READING_ATTRIBUTE = "nearfar_reading"


@contextmanager
def reading(path: str | Path):
    """Mark ``path`` as the file being read during the block; an exception leaving it is stamped with the
    innermost file (see :func:`being_read`)."""
    _reading.append(printable(str(path)))
    try:
        yield
    except BaseException as exc:
        if getattr(exc, READING_ATTRIBUTE, None) is None:
            setattr(exc, READING_ATTRIBUTE, _reading[-1])
        raise
    finally:
        _reading.pop()


def being_read(exc: BaseException | None = None) -> str | None:
    """The file ``exc`` was raised while reading, else the innermost file being read now."""
    return getattr(exc, READING_ATTRIBUTE, None) or (_reading[-1] if _reading else None)


class InternalError(Exception):
    """A fault of nearfar itself, not of the input (a figure that is not a finite number): one line on
    standard error and exit status 4."""
