"""Parser warnings collected per file and summarised, never printed as they arrive.

gerbonara reports every dialect quirk it tolerates; a real board gives hundreds of
thousands. Counting them by message in our own ``warn`` hook costs far less than
letting the ``warnings`` machinery format and record each one.
"""
from __future__ import annotations

import re
import warnings
from collections import Counter
from contextlib import contextmanager
from dataclasses import dataclass, field

#: how many distinct messages a file summary quotes
QUOTED_KINDS = 3

_LOCATION = re.compile(r'^\S*?:(\d+)(?: "[^"]*")?:\s*')

#: gerbonara messages restated in plain terms (matched on their opening words)
_RESTATED = {
    "Deprecated G74 multi-quadant mode arc found": "arc in deprecated G74 single-quadrant mode",
    "Coordinate statement without explicit operation code":
        "coordinate without D01/D02/D03; the previous operation repeated (deprecated)",
    "Arc is missing I value": "arc without I offset; taken as 0",
    "Arc is missing J value": "arc without J offset; taken as 0",
}


@dataclass
class FileWarnings:
    """Warnings about one input file: count per message and the first line each appeared on."""

    name: str
    counts: Counter = field(default_factory=Counter)
    first_line: dict = field(default_factory=dict)

    def add(self, message: str, line: int | None = None) -> None:
        text = str(message)
        match = _LOCATION.match(text)
        if match:
            line = line or int(match.group(1))
            text = text[match.end():]
        text = " ".join(text.split())
        for opening, plain in _RESTATED.items():
            if text.startswith(opening):
                text = plain
                break
        self.counts[text] += 1
        self.first_line.setdefault(text, line)

    def absorb(self, other: "FileWarnings") -> None:
        """Add another log's warnings to this one (first lines kept where both have one)."""
        self.counts.update(other.counts)
        for text, line in other.first_line.items():
            self.first_line.setdefault(text, line)

    @property
    def total(self) -> int:
        return sum(self.counts.values())

    def summary(self) -> str | None:
        """One line: total, number of kinds and the commonest few with their first line."""
        if not self.counts:
            return None
        parts = []
        for text, n in self.counts.most_common(QUOTED_KINDS):
            where = f"line {self.first_line[text]}: " if self.first_line.get(text) else ""
            parts.append(f"{where}{_clip(text)} (x{n})")
        kinds = len(self.counts)
        return (f"{self.name}: {self.total} parser warning{'s' if self.total != 1 else ''} "
                f"of {kinds} kind{'s' if kinds != 1 else ''}; " + "; ".join(parts))

    @contextmanager
    def capturing(self):
        """Route warnings raised through the ``warnings`` module during the block into this log."""
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            yield self
        for w in caught:
            self.add(str(w.message))


def _clip(text: str, limit: int = 90) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."
