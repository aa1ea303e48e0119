"""Net-name wildcard patterns (``*`` any run of characters, ``?`` one character), matched case-insensitively.

Each pattern is compiled once into a regular expression that cannot backtrack across its wildcards:
the text between two ``*`` is matched at its leftmost place and that choice is kept (an atomic group),
which is always right for wildcard patterns. A match then costs at most the name's length times the
pattern's, however many ``*`` it holds. Other characters, ``[`` and ``]`` included, stand for themselves.
A pattern longer than ``MAX_PATTERN_CHARS`` or with more than ``MAX_PATTERN_WILDCARDS`` wildcards is refused.
"""
from __future__ import annotations

import re
from functools import lru_cache

#: longest pattern accepted (net names are rarely longer than a few dozen characters)
MAX_PATTERN_CHARS = 256
#: most ``*`` and ``?`` in one pattern
MAX_PATTERN_WILDCARDS = 32


def pattern_problem(pattern: str) -> str | None:
    """Why ``pattern`` is refused (too long or too many wildcards), or None."""
    if len(pattern) > MAX_PATTERN_CHARS:
        return f"pattern of {len(pattern):,} characters is longer than the limit of {MAX_PATTERN_CHARS}"
    wildcards = pattern.count("*") + pattern.count("?")
    if wildcards > MAX_PATTERN_WILDCARDS:
        return f"pattern {pattern[:40]!r}... has {wildcards} wildcards, more than the limit of {MAX_PATTERN_WILDCARDS}"
    return None


def _piece(text: str) -> str:
    return "".join("." if ch == "?" else re.escape(ch) for ch in text)


def _expression(pattern: str, capture: bool) -> str:
    """The anchored regular expression of one pattern; with ``capture`` each ``*`` is a group."""
    problem = pattern_problem(pattern)
    if problem is not None:
        raise ValueError(problem)
    star = "(.*?)" if capture else ".*?"
    pieces = pattern.split("*")
    if len(pieces) == 1:
        return _piece(pattern) + r"\Z"
    middle = "".join(f"(?>{star}{_piece(p)})" for p in pieces[1:-1])
    return f"{_piece(pieces[0])}{middle}{'(.*)' if capture else '.*'}{_piece(pieces[-1])}\\Z"


@lru_cache(maxsize=256)
def compile_patterns(patterns: tuple[str, ...]) -> re.Pattern:
    """One expression matching (with ``.match``) an upper-cased name against any of the wildcard patterns."""
    if not patterns:
        return re.compile(r"(?!)")
    return re.compile("|".join(f"(?:{_expression(p.upper(), False)})" for p in patterns), re.DOTALL)


@lru_cache(maxsize=256)
def compile_capture(pattern: str) -> re.Pattern:
    """An expression whose groups are what each ``*`` of ``pattern`` matched (case-insensitive)."""
    return re.compile(_expression(pattern, True), re.IGNORECASE | re.DOTALL)


def fill(pattern: str, parts: tuple[str, ...]) -> str:
    """``pattern`` with its ``*`` replaced by ``parts`` in order."""
    pieces = pattern.split("*")
    return pieces[0] + "".join(part + rest for part, rest in zip(parts, pieces[1:]))
