"""Waivers on the terminal: each waiver's state, and the findings a lapsed waiver no longer covers."""
from __future__ import annotations

#: findings with a lapsed waiver listed on the terminal
LAPSED_SHOWN = 10
STATE_TEXT = {"in-force": "in force", "expired": "EXPIRED", "exceeded": "EXCEEDED", "unused": "unused"}


def waiver_lines(result) -> list[str]:
    """Lines for the terminal report; none when no waiver was given."""
    if not result.waivers:
        return []
    states = [w["state"] for w in result.waivers]
    counts = ", ".join(f"{states.count(s)} {STATE_TEXT[s].lower()}" for s in STATE_TEXT if s in states)
    lines = ["", f"waivers ({len(result.waivers)}: {counts}):"]
    width = max(len(w["id"]) for w in result.waivers)
    for w in result.waivers:
        where = f" on {w['layer']}" if w["layer"] else ""
        where += " in [{}] mm".format(", ".join(f"{v:g}" for v in w["area_mm"])) if w["area_mm"] else ""
        lines.append(f"  {w['id']:<{width}}  {STATE_TEXT[w['state']]:<8}  {w['victim']} <- {w['aggressor']}{where}: "
                     f"{w['findings_covered']} finding(s) covered; \"{w['reason']}\" ({w['accepted_by']}, "
                     f"{w['accepted_on']})")
        if w["note"]:
            lines.append(f"  {'':<{width}}            {w['note']}")
    lapsed = [(f"#{h.rank}", d) for h in result.hotspots for d in h.directions if d.waiver and not d.waived]
    lapsed += [("geometric", g) for g in result.geometric if g.waiver and not g.waived]
    for label, f in lapsed[:LAPSED_SHOWN]:
        lines.append(f"  {label} {f.victim} <- {f.aggressor}: {f.waiver['note']}")
    if len(lapsed) > LAPSED_SHOWN:
        lines.append(f"  … {len(lapsed) - LAPSED_SHOWN} more findings with a lapsed waiver (report.json, 'waiver')")
    return lines
