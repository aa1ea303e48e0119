"""Sign-off sections of report.html: the waivers and their states, and the changes since a baseline report.

Self-contained HTML fragments (every text escaped here) that the page inserts where it likes; they use
the page's table and status-badge styles when present and read fine without them.
"""
from __future__ import annotations

import html

from scanner.signoff.compare_text import comparison_summary

WAIVER_STATE_TEXT = {"in-force": "in force", "expired": "expired", "exceeded": "exceeded", "unused": "unused"}
#: the status badge each change is shown with
CHANGE_BADGE = {"worse": "fail", "new": "fail", "fixed": "pass", "better": "pass"}


def _e(value) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _table(headers: list[str], rows: list[list[str]], numeric: set[int]) -> str:
    """A table of already-escaped cells."""
    def cell(kind: str, i: int, text: str) -> str:
        return f'<{kind} class="num">{text}</{kind}>' if i in numeric else f"<{kind}>{text}</{kind}>"

    head = "".join(cell("th", i, _e(h)) for i, h in enumerate(headers))
    body = "".join("<tr>" + "".join(cell("td", i, c) for i, c in enumerate(row)) + "</tr>" for row in rows)
    return f'<div class="scroll"><table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table></div>'


def _badge(status: str, text: str | None = None) -> str:
    return f'<span class="badge st-{_e(status)}">{_e(text or status)}</span>'


def waiver_mark_text(waiver: dict | None) -> str:
    """Short text for a finding's waiver mark: ``waived (W1)`` or ``waiver W2 lapsed``."""
    if not waiver:
        return ""
    return f"waived ({waiver['id']})" if waiver["state"] == "waived" else f"waiver {waiver['id']} lapsed"


def waivers_section(waivers: list[dict]) -> str:
    """The waivers given and what became of each; empty without waivers."""
    if not waivers:
        return ""
    rows = []
    for w in waivers:
        where = " ".join(filter(None, [w["layer"], w["area_mm"] and "[" + ", ".join(f"{v:g}" for v in w["area_mm"])
                                       + "] mm"])) or "anywhere"
        state = w["state"]
        rows.append([_e(w["id"]), _badge("pass" if state == "in-force" else "warn", WAIVER_STATE_TEXT[state]),
                     f"{_e(w['victim'])} ← {_e(w['aggressor'])}", _e(where), _e(w["reason"]),
                     f'{_e(w["accepted_by"])}<br/><span style="white-space: nowrap">{_e(w["accepted_on"])}</span>', _e(w["expires_on"] or "–"),
                     _e(f"{w['coupled_length_mm']:g} mm long, ≥ {w['min_spacing_mm']:g} mm apart, "
                        f"{w['budget_used_pct']:g} % of budget; margin {w['margin_pct']:g} %"),
                     _e(w["findings_covered"]), _e(w["note"] or "")])
    unused = sum(w["state"] != "in-force" for w in waivers)
    return ('<h2 id="waivers">Waivers</h2>'
            '<p class="muted">A waived finding is still computed and listed, but left out of its victim\'s total and '
            "the verdict. A waiver covers a run only as long as it is no longer, no closer and uses no more budget "
            "than when it was accepted, within its margin, and until it expires."
            + (f" {unused} waiver(s) cover nothing: remove them or bring them up to date." if unused else "")
            + "</p>"
            + _table(["id", "state", "victim ← aggressor", "where", "reason", "accepted", "expires",
                      "run as accepted", "findings covered", "note"],
                     rows, {8}))


def _figures(side: dict | None) -> str:
    if side is None:
        return "–"
    waived = " (waived)" if side["waived"] else ""
    return _e(f"{side['budget_used_pct']:.0f} %{waived}, {side['coupled_length_mm']:.4g} mm at ≥ "
              f"{side['min_spacing_mm']:.3g} mm")


def changes_section(c: dict | None) -> str:
    """What changed since the baseline report; empty without one."""
    if c is None:
        return ""
    rows = [[_badge(CHANGE_BADGE.get(f["change"], "warn"), f["change"]),
             f"{_e(f['victim'])} ← {_e(f['aggressor'])}", _e("+".join(f["layers"])),
             _e(f"{f['x_mm']:.2f}, {f['y_mm']:.2f}"), _figures(f["old"]), _figures(f["new"]),
             _e(" ".join(filter(None, ["geometric limit;" if f["kind"] == "geometric" else "", f["note"]])))]
            for f in c["findings"]]
    victims = [[_e(v["net"]), _badge(v["old_status"]), _badge(v["new_status"]),
                _e(", ".join(v["waivers"]) or "")] for v in c["victims"]]
    old = c["old"]
    parts = ['<h2 id="changes">Changes since the baseline</h2>',
             f'<p class="muted">Baseline: {_e(old["source"])}, run {_e(old["run_id"])} of {_e(old["created"])}. '
             f"Findings are matched by net pair and location (moves up to {_e(c['settings']['move_tolerance_mm'])} "
             f"mm); worse or better means a status change or at least {_e(c['settings']['threshold_pct'])} points "
             "of budget.</p>",
             f"<p>{_badge('fail' if c['regressed'] else 'pass', 'regressed' if c['regressed'] else 'no regressions')}"
             f" {_e(comparison_summary(c))}</p>"]
    parts += [f'<p class="muted">Warning: {_e(w)}</p>' for w in c["warnings"]]
    if rows:
        parts.append(_table(["change", "victim ← aggressor", "layers", "x, y mm", "before", "now", "note"], rows,
                            set()))
    if victims:
        parts += ["<h3>Victims whose status changed</h3>",
                  _table(["victim", "before", "now", "waivers"], victims, set())]
    return "".join(parts)
