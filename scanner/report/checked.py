"""The verdict and what was checked, in sentences: the first lines of the terminal and the top of the page."""
from __future__ import annotations

import math

from scanner.board.references import FAR_SIDE_NOTE
from scanner.scoring.results import ScanResult

VERDICT_WORD = {"pass": "PASS", "fail": "FAIL", "incomplete": "INCOMPLETE"}


def percent(fraction: float) -> str:
    """A share as shown to people: rounded down, so "100 %" only when nothing is missing."""
    return "100 %" if fraction >= 1 else f"{math.floor(fraction * 1000) / 10:.1f} %"


def checked_sentence(result: ScanResult) -> str:
    """E.g. "checked 100 % of 4,297 mm of signal trace on 10 layers"."""
    c = result.coverage
    n = c.get("scanned_layers", 0)
    return (f"checked {percent(c.get('scanned_trace_fraction', 0.0))} of {c.get('signal_trace_mm', 0.0):,.0f} mm "
            f"of signal trace on {n} layer{'' if n == 1 else 's'}")


def verdict_sentence(result: ScanResult) -> str:
    """The verdict and why, in one line."""
    sm = result.summary
    verdict = result.verdict
    if verdict == "fail":
        why = f"{sm.get('victims_fail', 0)} of {sm.get('victims', 0)} victims over budget"
        broken = len(result.geometric)
        why += f", {broken} geometric limit{'' if broken == 1 else 's'} broken" if broken else ""
    elif verdict == "incomplete":
        why = "nothing over budget, but part of the board was not checked"
    elif sm.get("coupled_runs", 0) == 0:
        why = ("no parallel runs of different nets within the search distance"
               if not result.coverage.get("parallel_pieces_found") else
               f"no parallel run of different nets reaches {result.settings.get('min_coupled_length_mm')} mm "
               f"(the shortest scored)")
    else:
        why = f"all {sm.get('victims', 0)} victims within budget"
    return f"{VERDICT_WORD[verdict]}: {why}; {checked_sentence(result)}"


def gap_lines(result: ScanResult) -> list[str]:
    """What was not checked, one reason a line."""
    return [f"not checked: {reason}" for reason in result.unchecked]


def reference_lines(result: ScanResult) -> list[str]:
    """Each copper layer and what its traces were referenced to (or why it was not scanned)."""
    out = []
    for row in result.coverage.get("layers", []):
        if row.get("scanned"):
            what = row["reference"]
        elif row.get("role") == "plane":
            what = row.get("reason")
        else:
            what = f"not scanned: {row.get('reason')}"
        out.append(f"{row['name']}: {what}")
    if any(row.get("reference_kind") in ("pour", "far side") for row in result.coverage.get("layers", [])):
        out.append(f"{FAR_SIDE_NOTE}, and stronger still where no copper lies under a trace")
    return out


def board_notes(result: ScanResult) -> list[str]:
    """Copper left out, nets without a name and trace named by connectivity alone."""
    c = result.coverage
    out = []
    left = c.get("left_out") or {}
    if left.get("objects"):
        out.append(f"left out: {left['objects']} copper objects outside the board ({left['trace_length_mm']:,.0f} mm "
                   f"of trace on {', '.join(left['layers'])})")
    if c.get("unnamed_nets"):
        out.append(f"{c['unnamed_nets']} nets without a name; {percent(c['connectivity_only_trace_fraction'])} "
                   f"of signal trace is on nets recognised by connectivity only")
    return out
