"""What the report shows, read from the scan's records in one place.

The page and the images read findings, victims and the scan's coverage only
through these functions, so a change in the records' shape is met here.
"""
from __future__ import annotations

from dataclasses import dataclass

from scanner.scoring.results import Hotspot, ScanResult, VictimTotal

#: distinct coupled runs that get a close-up, waveform, cross-section and what-if plots
DETAIL_TOP = 10


@dataclass(frozen=True)
class FixItem:
    """One failing victim with its worst run, or one broken geometric limit."""

    victim: str
    victim_class: str
    budget_used_pct: float | None  # what decides the victim's status (None for a geometric limit)
    aggressor_count: int
    hotspot: Hotspot | None  # the victim's worst run
    geometric_index: int | None = None


def coverage_layers(result: ScanResult) -> dict[str, dict]:
    """Each copper layer's part in the scan by name: scanned, role, reference, reason."""
    return {row["name"]: row for row in (result.coverage or {}).get("layers", [])}


def worst_runs(result: ScanResult) -> dict[str, Hotspot]:
    """Each victim's listed run with the largest share of its budget, read from that victim's side (a run holds
    both directions)."""
    out: dict[str, Hotspot] = {}
    for h in result.hotspots:
        for d in h.directions:
            if d.victim not in out or d.budget_used_pct > out[d.victim].budget_used_pct:
                out[d.victim] = h.toward(d.victim)
    return out


def fix_first(result: ScanResult) -> list[FixItem]:
    """Failing victims, most over budget first, each with its worst run; then broken geometric limits."""
    worst = worst_runs(result)
    items = [FixItem(v.net, v.net_class, v.budget_used_pct, len({a["aggressor"] for a in v.aggressors}),
                     worst.get(v.net))
             for v in result.victims if v.status == "fail"]
    items += [FixItem(g.victim, g.victim_class, None, 1, None, i)
              for i, g in enumerate(result.geometric) if g.status == "fail"]
    return items


def detail_hotspots(result: ScanResult, top: int = DETAIL_TOP) -> list[Hotspot]:
    """Findings that get close-up pictures: one per coupled run, the fix-first victims' worst runs first,
    then the highest ranks, ``top`` at most."""
    chosen: dict[int, Hotspot] = {}
    first = [item.hotspot for item in fix_first(result) if item.hotspot is not None]
    for h in first + list(result.hotspots):
        if len(chosen) >= top:
            break
        chosen.setdefault(h.run, h)
    return list(chosen.values())


def victims_by_use(result: ScanResult) -> list[VictimTotal]:
    """Victims with the largest share of budget used first."""
    return sorted(result.victims, key=lambda v: -v.budget_used_pct)


def is_shown_in_table(h: Hotspot) -> bool:
    """Findings over or near budget are listed openly; passing ones are folded away."""
    return h.status != "pass"


def layer_references(result: ScanResult) -> dict[str, str]:
    """Per scanned signal layer: its structure and the plane layer(s) it refers to ("stripline between L02 and
    L04", "microstrip over L02")."""
    out = {}
    for name, row in result.stackup.get("signal_layers", {}).items():
        refs = list(row.get("references") or [])
        structure = row.get("structure", "")
        out[name] = (f"{structure} between {refs[0]} and {refs[1]}" if len(refs) == 2 else
                     f"{structure} over {refs[0]}" if refs else structure)
    return out


def fix_lines(h: Hotspot, brief: bool = False) -> list[str]:
    """The finding's fix guidance, one way out per line: in a designer's words, or ``brief`` for a table cell.
    Every way shown was re-scored by the scan and passes (docs/rules.md, "Fix guidance")."""
    fix = h.fix or {}
    alternative = fix.get("alternative_layer") or {}
    ways = [(fix.get("spacing_needed_mm"), "gap ≥ {:.3f} mm", "widen the gap to ≥ {:.3f} mm along the run"),
            (fix.get("max_length_mm"), "length ≤ {:.1f} mm", "shorten the side-by-side length to ≤ {:.1f} mm"),
            (alternative.get("layer"), "on {}", "move it to {} (" + alternative.get("structure", "") + ")")]
    out = []
    for value, short, words in ways:
        if value is not None:
            out.append(short.format(value) if brief else ("or " if out else "") + words.format(value))
    others = len(fix.get("together_with") or [])
    if others and not brief:
        out.append(f"together with {others} other run{'s' if others > 1 else ''} on the same victim"
                   f"{'s' if others > 1 else ''}")
    return out + ([fix["note"]] if fix.get("note") and not brief else [])
