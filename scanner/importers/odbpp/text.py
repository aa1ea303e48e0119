"""Reading ODB++ text files: plain line files and "structured text" (``KEY=VALUE`` lines and ``NAME {`` … ``}`` blocks).

Every file is named in messages as the report names it (``job/matrix/matrix`` or
``job.tgz!job/matrix/matrix``), with the 1-based line where known.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from scanner.errors import InputError
from scanner.input_limits import read_input
from scanner.units import MM_PER_INCH, MM_PER_MIL

#: ODB++ units words and the millimetres per coordinate unit and per symbol-size unit
#: (symbol sizes are microns in metric jobs and mils in inch jobs)
UNITS = {"MM": (1.0, 0.001), "INCH": (MM_PER_INCH, MM_PER_MIL)}


@dataclass(frozen=True)
class JobFile:
    """A file of the job: where it is on disk and how messages name it."""

    path: Path
    name: str

    def child(self, *parts: str) -> "JobFile":
        sep = "" if self.name.endswith(("/", "!")) or not self.name else "/"
        return JobFile(self.path.joinpath(*parts), self.name + sep + "/".join(parts))

    def find(self, name: str) -> "JobFile":
        """The entry ``name`` in this folder, matched without regard to case (ODB++ names are case-insensitive)."""
        exact = self.child(name)
        if exact.path.exists() or not self.path.is_dir():
            return exact
        low = name.lower()
        for entry in sorted(self.path.iterdir()):
            if entry.name.lower() == low:
                return self.child(entry.name)
        return exact


def read_lines(src: JobFile, what: str) -> list[str]:
    """The file's lines (ASCII expected; stray bytes replaced), or InputError naming it."""
    if src.path.with_name(src.path.name + ".Z").is_file() and not src.path.is_file():
        raise InputError(f"{what} is stored compressed (.Z); uncompress it first", path=src.name + ".Z")
    if not src.path.is_file():
        raise InputError(f"{what} not found", path=src.name)
    return read_input(src.path, src.name, what).decode("utf-8", errors="replace").splitlines()


def units_word(value: str, src: JobFile, line: int | None) -> str:
    """``MM`` or ``INCH``; anything else is an InputError."""
    word = value.strip().upper()
    if word not in UNITS:
        raise InputError(f"unknown units {value.strip()!r} (expected MM or INCH)", path=src.name, line=line)
    return word


def number(token: str, src: JobFile, line: int, what: str = "number") -> float:
    try:
        return float(token)
    except ValueError:
        raise InputError(f"expected a {what}, found {token!r}", path=src.name, line=line) from None


def integer(token: str, src: JobFile, line: int, what: str) -> int:
    try:
        return int(token)
    except ValueError:
        raise InputError(f"{what} must be a whole number, found {token!r}", path=src.name, line=line) from None


@dataclass
class Block:
    """One ``NAME { … }`` array of a structured text file, keys upper-cased."""

    name: str
    line: int
    fields: dict[str, str] = field(default_factory=dict)

    def get(self, key: str, default: str = "") -> str:
        return self.fields.get(key, default).strip()


@dataclass
class Structured:
    values: dict[str, str]
    value_lines: dict[str, int]
    blocks: list[Block]


def read_structured(src: JobFile, what: str) -> Structured:
    """Parse a structured text file; an unclosed or stray brace is an InputError with its line."""
    values, value_lines, blocks = {}, {}, []
    current: Block | None = None
    for number_, raw in enumerate(read_lines(src, what), start=1):
        text = raw.strip()
        if not text or text.startswith("#"):
            continue
        if text.endswith("{"):
            if current is not None:
                raise InputError(f"block {text[:-1].strip()!r} opens inside block {current.name!r} "
                                 f"(line {current.line})", path=src.name, line=number_)
            current = Block(text[:-1].strip().upper(), number_)
            continue
        if text == "}":
            if current is None:
                raise InputError("'}' without an open block", path=src.name, line=number_)
            blocks.append(current)
            current = None
            continue
        key, sep, value = text.partition("=")
        if not sep:
            raise InputError(f"expected KEY=VALUE, found {text!r}", path=src.name, line=number_)
        key = key.strip().upper()
        if current is not None:
            current.fields[key] = value
        else:
            values[key] = value.strip()
            value_lines[key] = number_
    if current is not None:
        raise InputError(f"block {current.name!r} opened at line {current.line} is not closed; the file looks "
                         "truncated", path=src.name)
    return Structured(values, value_lines, blocks)
