"""The terminal report: settings in force, a compact ranked table, a summary line."""
from __future__ import annotations

from scanner.report.checked import (VERDICT_WORD, board_notes, checked_sentence, gap_lines, reference_lines,
                                    verdict_sentence)
from scanner.scoring.results import CAUTION, ScanResult
from scanner.signoff.compare_text import comparison_summary
from scanner.signoff.waiver_text import waiver_lines

STATUS_MARK = {"fail": "FAIL", "warn": "warn", "pass": "ok"}


def _trim(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


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
    if result.stackup["source"] == "default":
        lines.append("!" * 78)
    for w in result.warnings[:8]:
        lines.append(f"warning: {w}")
    if len(result.warnings) > 8:
        lines.append(f"warning: … and {len(result.warnings) - 8} more (see report.json)")
    if result.stackup["source"] == "default":
        lines.append("!" * 78)
    lines.append("")
    header = ("#", "status", "victim", "aggressor", "layer", "len mm", "gap mm", "NEXT mV", "FEXT mV", "used", "at x,y mm", "fix")
    rows = []
    for h in result.hotspots[:top]:
        fix = h.fix or {}
        fix_text = ""
        if fix.get("spacing_needed_mm") is not None:
            fix_text = f"gap≥{fix['spacing_needed_mm']:.3g}"
        if fix.get("max_length_mm") is not None:
            fix_text += (" or " if fix_text else "") + f"len≤{fix['max_length_mm']:.3g}"
        rows.append((str(h.rank), "waived" if h.waived else STATUS_MARK[h.status], _trim(h.victim, 18), _trim(h.aggressor, 18),
                     _trim("+".join(h.layers), 12), f"{h.coupled_length_mm:.1f}", f"{h.min_spacing_mm:.3f}",
                     f"{h.next_mv:.0f}", f"{h.fext_mv:.0f}", f"{100 * h.budget_used:.0f}%",
                     f"{h.x_mm:.2f},{h.y_mm:.2f}", fix_text))
    if rows:
        widths = [max(len(r[i]) for r in rows + [header]) for i in range(len(header))]
        right = {0, 5, 6, 7, 8, 9}
        for r in [header] + rows:
            lines.append("  ".join(c.rjust(w) if i in right else c.ljust(w)
                                   for i, (c, w) in enumerate(zip(r, widths))).rstrip())
        strong = [h for h in result.hotspots[:top] if h.exact]
        if strong:
            lines.append("strong coupling (Kb > 0.1), exact line simulation: " + "; ".join(
                f"#{h.rank} NEXT {h.exact['next_mv']:.0f} mV, FEXT {h.exact['fext_mv']:.0f} mV "
                f"({100 * h.exact['budget_used']:.0f}%)" for h in strong[:4])
                + (f"; … {len(strong) - 4} more" if len(strong) > 4 else ""))
        if len(result.hotspots) > top:
            lines.append(f"… {len(result.hotspots) - top} more hotspots in report.json / hotspots.csv")
    else:
        lines.append("no coupled runs above the minimum length")
    if result.geometric:
        lines += ["", "geometric limits between classes (parallel length within a spacing):"]
        for g in result.geometric:
            lines.append(f"  FAIL  {g.victim} beside {g.aggressor} ({g.aggressor_class} -> {g.victim_class}) on "
                         f"{'+'.join(g.layers)}: {g.parallel_mm:.1f} mm within {g.within_spacing_mm:g} mm "
                         f"(limit {g.max_parallel_mm:g} mm), closest {g.min_spacing_mm:.3f} mm at "
                         f"{g.x_mm:.2f},{g.y_mm:.2f}")
    lines += _impedance_lines(result.impedance, top)
    lines += waiver_lines(result)
    sm = result.summary
    lines += ["", f"{sm['victims']} victims: {sm['victims_fail']} fail, {sm['victims_warn']} warn, "
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
    rows = [(STATUS_MARK[s.status], _trim(s.net_class, 14), _trim(s.net, 24), s.kind, s.layer, f"{s.length_mm:.1f}",
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
