"""What the report shows, read from the scan's records in one place.

The page and the images read findings, victims and the scan's coverage only
through these functions, so a change in the records' shape is met here.
``verdict_and_coverage`` stands in for the scan's own verdict and coverage
until the result carries them.
"""
from __future__ import annotations

from dataclasses import dataclass

from scanner.scoring.results import Hotspot, ScanResult, VictimTotal

#: distinct coupled runs that get a close-up, waveform, cross-section and what-if plots
DETAIL_TOP = 10


@dataclass(frozen=True)
class Coverage:
    """How much of the board the scan checked."""

    scanned_trace_fraction: float
    layers: list[dict]  # name, scanned, reference, reason


@dataclass(frozen=True)
class Verdict:
    status: str  # "pass" | "fail" | "incomplete"
    coverage: Coverage


@dataclass(frozen=True)
class FixItem:
    """One failing victim with its worst run, or one broken geometric limit."""

    victim: str
    victim_class: str
    budget_used: float | None  # the victim's total over all aggressors (None for a geometric limit)
    aggressor_count: int
    hotspot: Hotspot | None  # the victim's worst run
    geometric_index: int | None = None


def _layer_coverage(result: ScanResult) -> Coverage:
    """Per copper layer whether it was scanned; the share of signal-layer trace length scanned."""
    scanned = result.stackup.get("signal_layers", {})
    layers, total, checked = [], 0.0, 0.0
    for layer in result.board.get("layers", []):
        name, env = layer.get("name"), scanned.get(layer.get("name"))
        if layer.get("kind") == "plane":
            layers.append({"name": name, "scanned": False, "reference": "plane", "reason": "a reference plane"})
            continue
        length = float(layer.get("trace_length_mm") or 0.0)
        total += length
        checked += length if env is not None else 0.0
        layers.append({"name": name, "scanned": env is not None, "reference": env and env.get("structure"),
                       "reason": None if env is not None else "no reference plane or stackup found for it"})
    return Coverage(checked / total if total > 0 else 1.0, layers)


def verdict_and_coverage(result: ScanResult) -> Verdict:
    """Fail when anything is over budget or breaks a limit; incomplete when signal-layer traces went
    unscanned; pass otherwise. Derived from ``worst_status`` and the scanned layers."""
    coverage = _layer_coverage(result)
    if result.worst_status == "fail":
        return Verdict("fail", coverage)
    return Verdict("incomplete" if coverage.scanned_trace_fraction < 1.0 else "pass", coverage)


def worst_runs(result: ScanResult) -> dict[str, Hotspot]:
    """Each victim's listed finding with the largest share of budget (findings are ranked by it)."""
    out: dict[str, Hotspot] = {}
    for h in result.hotspots:
        out.setdefault(h.victim, h)
    return out


def fix_first(result: ScanResult) -> list[FixItem]:
    """Failing victims, most over budget first, each with its worst run; then broken geometric limits."""
    worst = worst_runs(result)
    items = [FixItem(v.net, v.net_class, v.budget_used, len(set(v.aggressors)), worst.get(v.net))
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
    return sorted(result.victims, key=lambda v: -v.budget_used)


def is_shown_in_table(h: Hotspot) -> bool:
    """Findings over or near budget are listed openly; passing ones are folded away."""
    return h.status != "pass"


def layer_references(result: ScanResult) -> dict[str, str]:
    """Per scanned signal layer: its structure and the nearest plane layer(s) it refers to ("stripline
    between L02 and L04", "microstrip over L02")."""
    layers = result.board.get("layers", [])
    planes = [k for k, layer in enumerate(layers) if layer.get("kind") == "plane"]
    out = {}
    for i, layer in enumerate(layers):
        env = result.stackup.get("signal_layers", {}).get(layer.get("name"))
        if env is None:
            continue
        above = [(i - k, layers[k]["name"]) for k in planes if k < i][-1:]
        below = [(k - i, layers[k]["name"]) for k in planes if k > i][:1]
        structure = env.get("structure", "")
        if structure == "stripline" and above and below:
            out[layer["name"]] = f"stripline between {above[0][1]} and {below[0][1]}"
        else:
            nearest = sorted(above + below)
            out[layer["name"]] = f"{structure} over {nearest[0][1]}" if nearest else structure
    return out


def fix_lines(h: Hotspot, brief: bool = False) -> list[str]:
    """The finding's fix guidance, one way out per line: in a designer's words, or ``brief`` for a table cell."""
    fix = h.fix or {}
    alternative = fix.get("alternative_layer") or {}
    used = alternative.get("budget_used")
    ways = [(fix.get("spacing_needed_mm"), "gap ≥ {:.3g} mm", "widen the gap to ≥ {:.3g} mm along the run"),
            (fix.get("max_length_mm"), "length ≤ {:.3g} mm", "shorten the side-by-side length to ≤ {:.3g} mm"),
            (alternative.get("layer"), "on {}" + (f": {100 * used:.0f} %" if used is not None else ""),
             "move it to {} (" + alternative.get("structure", "")
             + (f": {100 * used:.0f} % of budget there)" if used is not None else ")"))]
    out = []
    for value, short, words in ways:
        if value is not None:
            out.append(short.format(value) if brief else ("or " if out else "") + words.format(value))
    return out + ([fix["note"]] if fix.get("note") and not brief else [])
