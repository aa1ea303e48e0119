"""Net-name wildcard patterns (``*`` any run of characters, ``?`` one character), matched case-insensitively."""
from __future__ import annotations

import fnmatch
import re
from functools import lru_cache


@lru_cache(maxsize=256)
def compile_patterns(patterns: tuple[str, ...]) -> re.Pattern:
    """One regular expression matching an upper-cased name against any of the wildcard patterns."""
    if not patterns:
        return re.compile(r"(?!)")
    return re.compile("|".join(f"(?:{fnmatch.translate(p.upper())})" for p in patterns))
