"""The terminal report: settings in force, the victims that warn or fail with their top aggressors, then one
row per coupled run, and a summary line."""
from __future__ import annotations

from scanner.report.checked import (VERDICT_WORD, board_notes, checked_sentence, gap_lines, reference_lines,
                                    verdict_sentence)
from scanner.scoring.results import CAUTION, ScanResult
from scanner.signoff.compare_text import comparison_summary
from scanner.signoff.waiver_text import waiver_lines

#: aggressors shown under each victim, and victims shown, on the terminal (all are in report.json)
TOP_AGGRESSORS = 3
TOP_VICTIMS = 15

#: which end each figure is read at (docs/physics.md, terminations)
ENDS_NOTE = ("NEXT and FEXT are the noise at the victim's receiver: NEXT with the victim driven from the far end "
             "(receiver at the aggressor's driver end), FEXT with it driven from the same end (receiver at the far "
             "end); a high-z-receiver doubles the wave that reaches it.")


def _trim(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def pct(value: float) -> str:
    """A share of budget, as every terminal line shows it."""
    return f"{value:.0f}%"


def fix_text(fix: dict | None) -> str:
    """A run's offered change, short: spacing, length, layer, and how many other runs go with it."""
    if not fix:
        return ""
    parts = []
    if fix.get("spacing_needed_mm") is not None:
        parts.append(f"gap≥{fix['spacing_needed_mm']:.3f}")
    if fix.get("max_length_mm") is not None:
        parts.append(f"len≤{fix['max_length_mm']:.1f}")
    if fix.get("alternative_layer"):
        parts.append(f"move to {fix['alternative_layer']['layer']}")
    text = " or ".join(parts) if parts else "reroute"
    others = len(fix.get("together_with") or [])
    return text + (f" (+{others} run{'s' if others > 1 else ''})" if others else "")


def render(result: ScanResult, top: int = 20) -> str:
    s = result.settings
    lines = [verdict_sentence(result)] + gap_lines(result)
    lines += [f"nearfar scan of {result.board['name']} ({result.board['format']}, "
              f"{len(result.board['layers'])} copper layers, {result.board['nets']} nets)",
              f"stackup: {result.stackup['source']}{_path(result.stackup)}   rules: {result.rules['source']}   "
              f"search distance {_search_text(s)} ({s['search_distance_source']}), "
              f"runs shorter than {s['min_coupled_length_mm']} mm ignored, "
              f"parallel within {s['angle_tolerance_deg']}°"]
    lines += [f"  {line}" for line in reference_lines(result) + board_notes(result)]
    lines.append("net classes (aggressor edge; victim budgets and termination):")
    lines += [f"  {c['name']:<14} {', '.join(c['patterns'])[:40]:<40} tr {c['rise_time_ns']:g} ns, {c['swing_v']:g} V; "
              f"NEXT ≤ {_budget(c, 'next')}, FEXT ≤ {_budget(c, 'fext')}; {c['termination']}{_targets(c)}"
              for c in result.rules["classes"] + [result.rules["default_class"]]]
    lines.append(_pairs_line(result.pairs))
    if result.stackup["source"] == "default":
        lines.append("!" * 78)
    for w in result.warnings[:8]:
        lines.append(f"warning: {w}")
    if len(result.warnings) > 8:
        lines.append(f"warning: … and {len(result.warnings) - 8} more (see report.json)")
    if result.stackup["source"] == "default":
        lines.append("!" * 78)
    lines += ["", *_victim_lines(result), "", *_run_lines(result, top)]
    if result.geometric:
        lines += ["", "geometric limits between classes (parallel length within a spacing):"]
        for g in result.geometric:
            status = "waived" if g.waived else g.status
            lines.append(f"  {status}  {g.victim} beside {g.aggressor} ({g.aggressor_class} -> {g.victim_class}) on "
                         f"{'+'.join(g.layers)}: {g.parallel_mm:.1f} mm within {g.within_spacing_mm:g} mm "
                         f"(limit {g.max_parallel_mm:g} mm), closest {g.min_spacing_mm:.3f} mm at "
                         f"{g.x_mm:.2f},{g.y_mm:.2f}")
    lines += _impedance_lines(result.impedance, top)
    lines += waiver_lines(result)
    sm = result.summary
    lines += ["", ENDS_NOTE, f"{sm['victims']} victims: {sm['victims_fail']} fail, {sm['victims_warn']} warn, "
                  f"{sm['victims_pass']} pass — {sm['coupled_runs']} coupled runs scored; {checked_sentence(result)}. "
                  f"Overall: {VERDICT_WORD[result.verdict]}"]
    if result.comparison is not None:
        lines.append(comparison_summary(result.comparison))
    lines.append(f"caution: {CAUTION}")
    return "\n".join(lines)


def _search_text(settings: dict) -> str:
    """The search distance, or its range when the layers differ."""
    values = sorted(set((settings.get("search_distance_by_layer_mm") or {}).values()))
    if len(values) > 1:
        return f"{values[0]:.3g}–{values[-1]:.3g} mm by layer"
    return f"{settings['search_distance_mm']:g} mm"


def _pairs_line(pairs: list[dict]) -> str:
    if not pairs:
        return "differential pairs: none found (legs of a pair are never scored against each other)"
    by = {src: sum(p["source"] == src for p in pairs) for src in ("name", "rules", "geometry")}
    how = ", ".join(f"{n} by {src}" for src, n in by.items() if n)
    return f"differential pairs: {len(pairs)} ({how}); legs of a pair are never scored against each other"


def _victim_lines(result: ScanResult) -> list[str]:
    """Victims that warn or fail, worst first, each with its top aggressors and where they couple."""
    bad = [v for v in result.victims if v.status != "pass"]
    if not bad:
        return ["no victim warns or fails"]
    rank = {h.id: h.rank for h in result.hotspots}
    out = [f"victims that warn or fail, worst first ({len(bad)}):"]
    for v in bad[:TOP_VICTIMS]:
        fix = v.fix or {}
        plan = " ".join(f"#{rank[f]}" for f in fix.get("findings", []) if f in rank)
        head = f"  {v.status:<4}  {v.net} ({v.net_class})  {pct(v.budget_used_pct)} of budget"
        if v.total_used_pct < v.budget_used_pct:
            head += f" (its worst coupling, under a class-pair budget; total {pct(v.total_used_pct)})"
        if plan:
            head += f" — fix {plan}" + (f": {fix['note']}" if fix.get("note") else "")
        out.append(head)
        for a in v.aggressors[:TOP_AGGRESSORS]:
            where = f"#{rank[a['finding']]}" if a["finding"] in rank else ""
            out.append(f"          ← {_trim(a['aggressor'], 28):<28} {pct(a['budget_used_pct']):>6}  "
                       f"{a['layer']} at {a['x_mm']:.2f},{a['y_mm']:.2f} {where}".rstrip())
        if len(v.aggressors) > TOP_AGGRESSORS:
            more = len(v.aggressors) - TOP_AGGRESSORS
            out.append(f"          … {more} more aggressor{'s' if more > 1 else ''}")
    if len(bad) > TOP_VICTIMS:
        out.append(f"  … {len(bad) - TOP_VICTIMS} more victims in report.json")
    return out


def _run_lines(result: ScanResult, top: int) -> list[str]:
    """One row per coupled run, the worse direction first; the other direction's share in its own column."""
    if not result.hotspots:
        return ["no coupled runs above the minimum length"]
    header = ("#", "status", "victim", "aggressor", "layer", "len mm", "gap mm", "NEXT mV", "FEXT mV", "used",
              "other way", "at x,y mm", "fix")
    rows = []
    for h in result.hotspots[:top]:
        other = pct(h.directions[1].budget_used_pct) if len(h.directions) > 1 else "-"
        rows.append((str(h.rank), "waived" if h.waived else h.status, _trim(h.victim, 18), _trim(h.aggressor, 18),
                     _trim("+".join(h.layers), 12), f"{h.coupled_length_mm:.1f}", f"{h.min_spacing_mm:.3f}",
                     f"{h.next_mv:.1f}", f"{h.fext_mv:.1f}", pct(h.budget_used_pct), other,
                     f"{h.x_mm:.2f},{h.y_mm:.2f}", fix_text(h.fix)))
    widths = [max(len(r[i]) for r in rows + [header]) for i in range(len(header))]
    right = {0, 5, 6, 7, 8, 9, 10}
    out = ["coupled runs, worst first (one row per run, worse direction shown; both in report.json):"]
    out += ["  ".join(c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths))).rstrip()
            for r in [header] + rows]
    strong = [h for h in result.hotspots[:top] if h.exact]
    if strong:
        out.append("strong coupling (Kb > 0.1), exact line simulation: " + "; ".join(
            f"#{h.rank} NEXT {h.exact['next_mv']:.1f} mV, FEXT {h.exact['fext_mv']:.1f} mV "
            f"({pct(h.exact['budget_used_pct'])})" for h in strong[:4])
            + (f"; … {len(strong) - 4} more" if len(strong) > 4 else ""))
    if len(result.hotspots) > top:
        out.append(f"… {len(result.hotspots) - top} more runs in report.json / hotspots.csv")
    return out


def _budget(c: dict, kind: str) -> str:
    mv = c.get(f"{kind}_budget_mv")
    return f"{mv:g} mV" if mv is not None else f"{c.get(f'{kind}_budget_pct'):g}%"



def _targets(c: dict) -> str:
    parts = [f"{label} {c[key]:g} ohm" for label, key in (("Z0", "z0_target_ohm"), ("Zdiff", "zdiff_target_ohm"))
             if c.get(key) is not None]
    return f"; {' / '.join(parts)} ±{c['impedance_tolerance_pct']:g}%" if parts else ""


def _path(stackup: dict) -> str:
    return f" ({stackup['path']})" if stackup.get("path") and stackup["source"] == "stackup-file" else ""


def _impedance_lines(check, top: int) -> list[str]:
    """The impedance check: each class's targets and what lies outside them, then the stretches."""
    if check is None or not check.classes:
        return []
    lines = ["", "impedance targets (single-ended Z0 / differential; stretches from "
                 f"{check.min_length_mm:g} mm listed):"]
    for c in check.classes:
        targets = " / ".join(f"{t:g} ohm" if t is not None else "-" for t in (c.z0_target_ohm, c.zdiff_target_ohm))
        unchecked = f", {c.not_checked_mm:g} mm on unscanned layers not checked" if c.not_checked_mm else ""
        lines.append(f"  {c.net_class:<14} {targets} ±{c.tolerance_pct:g}%: checked {c.checked_mm:g} mm of traces, "
                     f"{c.pair_checked_mm:g} mm of coupled pairs; outside: {c.stretches} stretches, "
                     f"{c.outside_mm:g} mm (+{c.short_stretches} shorter){unchecked}")
    header = ("status", "class", "net", "kind", "layer", "len mm", "width mm", "gap mm", "Z ohm", "target", "off",
              "at x,y mm")
    rows = [(s.status, _trim(s.net_class, 14), _trim(s.net, 24), s.kind, s.layer, f"{s.length_mm:.1f}",
             f"{s.width_mm:.3f}", "-" if s.gap_mm is None else f"{s.gap_mm:.3f}", f"{s.z_ohm:.1f}",
             f"{s.target_ohm:g}", f"{s.deviation_pct:+.0f}%", f"{s.x_mm:.2f},{s.y_mm:.2f}")
            for s in check.stretches[:top]]
    if rows:
        widths = [max(len(r[i]) for r in rows + [header]) for i in range(len(header))]
        right = {5, 6, 7, 8, 9, 10}
        for r in [header] + rows:
            lines.append("  " + "  ".join(c.rjust(w) if i in right else c.ljust(w)
                                          for i, (c, w) in enumerate(zip(r, widths))).rstrip())
        if len(check.stretches) > top:
            lines.append(f"  … {len(check.stretches) - top} more stretches in report.json")
    return lines
