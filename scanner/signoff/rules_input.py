"""The rules in force for a scan: the rules file with the waivers of a separate waivers file added."""
from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from scanner.errors import printable
from scanner.rules import Rules, load_rules
from scanner.signoff.waivers import check_unique_ids, load_waivers


def rules_with_waivers(rules_path: str | Path | None, waivers_path: str | Path | None) -> Rules:
    """``load_rules`` plus the waivers file's entries after the rules file's own (ids unique over both)."""
    rules = load_rules(rules_path)
    if waivers_path is None:
        return rules
    extra = load_waivers(waivers_path, first=len(rules.waivers) + 1)
    check_unique_ids(rules.waivers + extra, printable(str(waivers_path)))
    return replace(rules, waivers=rules.waivers + extra)
