"""index.html of a batch: every board worst first, each linked to its own report.

Self-contained like report.html: inline styles, no scripts, nothing from the network; text from the
boards and the file system is escaped.
"""
from __future__ import annotations

from pathlib import Path

from scanner.report import palette
from scanner.report.html import Markup, joined, link, table, tag

#: verdict colours: fail and pass as on the report page; the others our own, apart in lightness as well as hue
VERDICT_COLOUR = {"fail": palette.STATUS_COLOUR["fail"], "error": "#4b3a63", "refused": "#8a7d6b",
                  "incomplete": "#2f6690", "pass": palette.STATUS_COLOUR["pass"]}
VERDICT_TEXT = {"fail": "over budget", "error": "internal error", "refused": "input refused",
                "incomplete": "not all checked", "pass": "within budget"}
#: the budget bar spans 0 to this share of the budget
BAR_SPAN = 2.0


def _style() -> str:
    verdicts = "\n".join(f".v-{v} {{ background: {c}; color: #ffffff; }}\n"
                         f"tr.row-{v} td:first-child {{ border-left: 5px solid {c}; }}\n"
                         f".bar-{v} {{ background: {c}; }}" for v, c in VERDICT_COLOUR.items())
    return f"""
body {{ font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif; color: {palette.INK};
  margin: 0 auto; max-width: 1280px; padding: 0 1.2rem 3rem; line-height: 1.4; }}
h1 {{ font-size: 1.5rem; margin: 1.2rem 0 0.6rem; }}
a {{ color: {palette.VICTIM}; }}
.tally {{ display: flex; flex-wrap: wrap; gap: 0.6rem; margin: 0.4rem 0 1rem; }}
.tally div {{ border-radius: 0.3rem; padding: 0.35rem 0.8rem; min-width: 7rem; }}
.tally b {{ display: block; font-size: 1.5rem; }}
.tally .none {{ background: {palette.BOARD_FILL}; color: #8d8576; }}
.caution {{ background: #fbf3e2; border-left: 5px solid {palette.STATUS_COLOUR['warn']}; padding: 0.6rem 0.9rem; }}
.muted {{ color: #6b6357; font-size: 0.85rem; }}
table {{ border-collapse: collapse; font-size: 0.85rem; margin: 0.8rem 0 1rem; }}
th, td {{ border-bottom: 1px solid #e6e1d7; padding: 0.3rem 0.55rem; text-align: left; vertical-align: top; }}
th {{ background: {palette.BOARD_FILL}; position: sticky; top: 0; }}
td.num, th.num {{ text-align: right; font-variant-numeric: tabular-nums; }}
td.num {{ white-space: nowrap; }}
.verdict {{ display: inline-block; border-radius: 0.25rem; padding: 0 0.45rem; font-weight: 600; font-size: 0.78rem; }}
.meter {{ display: inline-block; position: relative; width: 6rem; height: 0.55rem; background: {palette.BOARD_FILL};
  border: 1px solid #d8d1c4; vertical-align: middle; margin-left: 0.4rem; }}
.meter span {{ position: absolute; left: 0; top: 0; bottom: 0; }}
.meter i {{ position: absolute; left: {100 / BAR_SPAN:g}%; top: -2px; bottom: -2px; border-left: 1px solid {palette.INK}; }}
.reused {{ color: #6b6357; font-size: 0.74rem; }}
table.boards {{ width: 100%; }}
table.boards td:nth-child(3) {{ min-width: 12rem; max-width: 20rem; overflow-wrap: anywhere; }}
table.boards td:nth-child(9) {{ min-width: 16rem; overflow-wrap: anywhere; }}
{verdicts}
"""


def _tally(counts: dict[str, int]) -> Markup:
    tiles = [tag("div", [tag("b", n), VERDICT_TEXT[v]], class_=f"v-{v}" if n else "none") for v, n in counts.items()]
    return tag("div", tiles, class_="tally")


def _used(row: dict) -> Markup:
    used = row.get("worst_budget_used")
    if used is None:
        return Markup("–")
    width = 100 * min(used, BAR_SPAN) / BAR_SPAN
    meter = tag("span", [tag("span", "", class_=f"bar-{row['verdict']}", style=f"width: {width:.1f}%"), tag("i")],
                class_="meter", title=f"the line marks the whole budget; the bar ends at {BAR_SPAN:g}×")
    return Markup(f"{100 * used:.0f} %") + meter


def _board_cell(row: dict) -> Markup:
    return link(row["report"], row["board"]) if row.get("report") else tag("span", row["board"])


def _rows(boards: list[dict]) -> Markup:
    body = []
    for i, r in enumerate(boards, 1):
        coverage = "–" if r["coverage"] is None else f"{100 * r['coverage']:.1f} %"
        seconds = Markup(f"{r['seconds']:.1f}") + (tag("div", "last run", class_="reused") if r["reused"] else "")
        body.append([i, tag("span", r["verdict"], class_=f"verdict v-{r['verdict']}"), _board_cell(r), coverage,
                     "–" if r["victims_fail"] is None else r["victims_fail"], r["worst_victim"] or "–", _used(r),
                     seconds, r["reason"]])
    return table(["#", "verdict", "board", "traces scanned", "victims over", "worst victim", "its budget used",
                  "seconds", "why"], body, class_="boards", numeric={0, 3, 4, 6, 7},
                 row_attrs=[{"class_": f"row-{r['verdict']}"} for r in boards])


def render_index(summary: dict, out_dir: Path, data_files: tuple[str, ...]) -> str:
    """The page for a batch summary (``batch_dict``); links the data files that exist in ``out_dir``."""
    boards = summary["boards"]
    reused = sum(1 for r in boards if r["reused"])
    facts = (f"{len(boards)} boards on {summary['cluster']}, {summary['seconds']:.1f} s in all"
             + (f"; {reused} unchanged since the last run and taken from it" if reused else "")
             + f". Rules: {summary['rules']}. Images: {'yes' if summary['images'] else 'no'}. "
             f"Started {summary['started_utc']}.")
    data = [link(name, name) for name in data_files if (out_dir / name).is_file()]
    body = (tag("h1", f"Crosstalk batch: {len(boards)} boards") + _tally(summary["counts"])
            + tag("p", [tag("strong", "Caution. "), summary["caution"]], class_="caution")
            + tag("p", facts, class_="muted")
            + (tag("p", ["Data: "] + joined(data, ", "), class_="muted") if data else Markup(""))
            + tag("p", "Traces scanned: share of the signal trace length the scan reached. Victims over: victims "
                       "over budget. Its budget used: the worst victim's noise as a share of its budget; the tick "
                       f"marks the whole budget, the bar ends at {BAR_SPAN:g} times it.", class_="muted")
            + tag("div", _rows(boards), style="overflow-x: auto")
            + tag("footer", f"nearfar {summary['nearfar']}; data schema {summary['schema']}.", class_="muted"))
    head = Markup(tag("meta", charset="utf-8") + tag("meta", name="viewport", content="width=device-width, initial-scale=1")
                  + tag("title", f"Crosstalk batch: {len(boards)} boards") + tag("style", Markup(_style())))
    return Markup("<!DOCTYPE html>\n") + tag("html", [tag("head", head), tag("body", body)], lang="en") + "\n"
