"""A comparison of two reports as terminal text: counts, a table of the changed findings, changed victims."""
from __future__ import annotations

HEADER = ("change", "victim", "aggressor", "layers", "at x,y mm", "used before", "used now", "gap before",
          "gap now", "len before", "len now", "note")
RIGHT = {5, 6, 7, 8, 9, 10}


def _side_text(side: dict) -> str:
    return f"{side.get('board')} (run {side.get('run_id')}, {side.get('created')}, {side.get('source')})"


def _figure(side: dict | None, key: str, fmt: str) -> str:
    if side is None:
        return "–"
    text = format(side[key], fmt)
    return text + (" w" if key == "budget_used_pct" and side.get("waived") else "")


def _row(f: dict) -> tuple[str, ...]:
    old, new = f["old"], f["new"]
    return (f["change"], f["victim"][:18], f["aggressor"][:18], "+".join(f["layers"])[:12],
            f"{f['x_mm']:.2f},{f['y_mm']:.2f}",
            _figure(old, "budget_used_pct", ".0f"), _figure(new, "budget_used_pct", ".0f"),
            _figure(old, "min_spacing_mm", ".3f"), _figure(new, "min_spacing_mm", ".3f"),
            _figure(old, "coupled_length_mm", ".1f"), _figure(new, "coupled_length_mm", ".1f"),
            ("geometric limit; " if f["kind"] == "geometric" else "") + (f["note"] or ""))


def table_lines(header: tuple[str, ...], rows: list[tuple[str, ...]], right: set[int]) -> list[str]:
    """Columns padded to their widest cell; ``right`` columns aligned right."""
    widths = [max(len(r[i]) for r in rows + [header]) for i in range(len(header))]
    return ["  ".join(c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths))).rstrip()
            for r in [header] + rows]


def comparison_summary(c: dict) -> str:
    """One line: the counts and whether anything regressed."""
    n = c["counts"]
    verdict = c["verdict"]
    return (f"since {c['old']['board']} run {c['old']['run_id']}: {n['worse']} worse, {n['new']} new, "
            f"{n['fixed']} fixed, {n['better']} better, {n['unchanged']} unchanged; "
            f"{n['victims_changed']} victims changed status; verdict {verdict['old']} -> {verdict['new']}"
            f"{' — REGRESSED' if c['regressed'] else ''}")


def render_comparison(c: dict, top: int = 40) -> str:
    lines = ["nearfar compare", f"  before: {_side_text(c['old'])}", f"  now:    {_side_text(c['new'])}"]
    lines += [f"warning: {w}" for w in c["warnings"]]
    lines += ["", comparison_summary(c), ""]
    findings = c["findings"]
    if findings:
        lines += table_lines(HEADER, [_row(f) for f in findings[:top]], RIGHT)
        if len(findings) > top:
            lines.append(f"… {len(findings) - top} more changed findings (--json lists all)")
        lines.append("budget used in % (w: waived); gap: closest edge spacing mm; len: coupled length mm")
    else:
        lines.append("no finding changed")
    if c["victims"]:
        lines += ["", "victims whose status changed:"]
        rows = [(v["net"], v["old_status"], v["new_status"],
                 "–" if v["old_budget_used_pct"] is None else f"{v['old_budget_used_pct']:.0f}%",
                 "–" if v["new_budget_used_pct"] is None else f"{v['new_budget_used_pct']:.0f}%",
                 ", ".join(v["waivers"]) and f"waived: {', '.join(v['waivers'])}") for v in c["victims"]]
        lines += ["  " + line for line in table_lines(("victim", "before", "now", "used before", "used now", ""),
                                                      rows, {3, 4})]
    lines += ["", "result: " + ("REGRESSED — something got worse or a new failure appeared (exit status 1)"
                                if c["regressed"] else "no regressions (exit status 0)"),
              f"caution: {c['caution']}"]
    return "\n".join(lines)
