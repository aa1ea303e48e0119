"""report.html: one self-contained page where an engineer decides what to change.

Order: the verdict and what was checked; what to fix first (failing victims, each
with its worst run, the fix and a link to its pictures; ``id="fix-first"``); the
maps, led by the interactive board map (``id="board-map"``, an inline SVG with a
plain inlined script); the findings over or near budget (passing ones folded
away); close-ups of the top runs; then the assumptions, stackup and rules in a
designer's words. Nothing is fetched from the network: styles and the script are
inline, images are the files beside the page, linked by relative names and only
where they exist. All text from the board and the rules is escaped. Written last,
after report.json and hotspots.csv.
"""
from __future__ import annotations

from importlib import metadata
from pathlib import Path

from scanner.board.model import Board
from scanner.outputs import write_file
from scanner.report import names
from scanner.report.boardmap import board_map, map_script
from scanner.report.checked import board_notes, gap_lines, reference_lines, verdict_sentence
from scanner.report.copper import board_bounds
from scanner.report.html import Markup, badge, esc, facts, joined, lines, link, num, table, tag, two_line
from scanner.report.marks import geometric_label
from scanner.report.pagefacts import TERMINATION_WORDS, assumptions
from scanner.report.pagestyle import style
from scanner.report.view import FixItem, detail_hotspots, fix_first, fix_lines, is_shown_in_table
from scanner.scoring.results import CAUTION, SCHEMA, Hotspot, ScanResult, VictimTotal
from scanner.signoff.page_sections import changes_section, waiver_mark_text, waivers_section

PAGE_FILE = "report.html"
TABLE_FILES = ("report.json", "hotspots.csv")
VERDICT_WORDS = {"fail": "Fails", "pass": "Passes", "incomplete": "Incomplete"}


class _Folder:
    """Which report files exist beside the page."""

    def __init__(self, out_dir: Path):
        self.out_dir = out_dir

    def has(self, name: str) -> bool:
        return (self.out_dir / name).is_file()


def _verdict(result: ScanResult) -> Markup:
    """The verdict and what was checked, in the same sentences the terminal prints first
    (``scanner.report.checked``), with the near-budget count and the impedance check beside them."""
    verdict = result.verdict
    word, _, why = verdict_sentence(result).partition(": ")
    sm = result.summary
    near = sm.get("victims_warn", 0)
    off_target = len(result.impedance.stretches) if result.impedance is not None else 0
    more = ([f"{off_target} stretch{'es' if off_target != 1 else ''} off the impedance target."] if off_target else [])
    more += [f"{near} victim{'' if near == 1 else 's'} near budget."] if near else []
    more.append(f"{sm.get('findings', len(result.hotspots))} couplings scored on {sm.get('coupled_runs', 0)} "
                "side-by-side runs.")
    gaps = tag("ul", [tag("li", line) for line in gap_lines(result)], class_="gaps") if result.unchecked else ""
    refs = tag("ul", [tag("li", line) for line in reference_lines(result) + board_notes(result)], class_="refs")
    return tag("div", [tag("p", [tag("span", VERDICT_WORDS[verdict], class_=f"verdict-word v-{verdict}"), " ",
                                 tag("strong", why[:1].upper() + why[1:] + "."), " ", " ".join(more)]),
                       gaps, refs], class_="verdict", id="verdict", data_verdict=verdict)


def _header(result: ScanResult, folder: _Folder) -> Markup:
    files = [link(f, f) for f in TABLE_FILES if folder.has(f)]
    data = tag("p", ["Data: "] + joined(files, ", "), class_="muted") if files else Markup("")
    sections = [("fix-first", "What to fix first"), ("maps", "Maps"), ("findings", "Findings")]
    sections += [("impedance", "Impedance")] if result.impedance is not None and result.impedance.classes else []
    sections += [("details", "Close-ups")]
    sections += [("waivers", "Waivers")] if result.waivers else []
    sections += [("changes", "Changes")] if result.comparison is not None else []
    sections += [("assumptions", "Assumptions, stackup and rules")]
    return Markup(tag("h1", f"Crosstalk report: {result.board.get('name', '')}") + _verdict(result)
                  + tag("p", [tag("strong", "Caution. "), CAUTION], class_="caution")
                  + tag("nav", joined([link(f"#{a}", t) for a, t in sections], " · ")) + data)


def _detail_by_run(result: ScanResult, folder: _Folder) -> dict[int, int]:
    """Run -> rank of the finding whose close-ups were written for it."""
    return {h.run: h.rank for h in detail_hotspots(result) if folder.has(names.crop_file(h.rank))}


def _worst_run_text(h: Hotspot) -> Markup:
    return two_line(f"{h.aggressor} on {'+'.join(h.layers)}",
                    f"{h.coupled_length_mm:.4g} mm side by side, gap ≥ {h.min_spacing_mm:.3g} mm, "
                    f"{h.budget_used_pct:.0f} % of budget alone")


def _fix_row(item: FixItem, result: ScanResult, details: dict[int, int]) -> tuple[list, dict]:
    if item.geometric_index is not None:
        g = result.geometric[item.geometric_index]
        label = geometric_label(item.geometric_index)
        cells = [label, two_line(g.victim, g.victim_class), "limit broken",
                 two_line(f"{g.aggressor} on {'+'.join(g.layers)}",
                          f"{g.parallel_mm:.4g} mm within {g.within_spacing_mm:g} mm; the rules allow "
                          f"{g.max_parallel_mm:g} mm"),
                 lines([f"keep them under {g.max_parallel_mm:g} mm side by side within {g.within_spacing_mm:g} mm"]),
                 "–"]
        return cells, {"data_run": g.run, "class_": "row-fail"}
    h = item.hotspot
    if h is None:
        return [item.victim, two_line(item.victim, item.victim_class), f"{item.budget_used_pct:.0f} %",
                "no single run listed", "–", "–"], {"class_": "row-fail"}
    fix = fix_lines(h)
    if h.budget_used_pct <= 100:
        fix = [f"no single run is over budget: {item.aggressor_count} aggressors add up; start with this one"] + fix
    picture = link(f"#finding-{details[h.run]}", "close-up") if h.run in details else "on the map"
    cells = [str(h.rank), two_line(item.victim, item.victim_class), f"{item.budget_used_pct:.0f} %",
             _worst_run_text(h), lines(fix) if fix else "–", picture]
    return cells, {"data_run": h.run, "class_": "row-fail"}


def _fix_first(result: ScanResult, folder: _Folder) -> Markup:
    items = fix_first(result)
    parts = [tag("h2", "What to fix first", id="fix-first")]
    if not items:
        near = [v for v in result.victims if v.status == "warn"]
        parts.append(tag("p", "Nothing is over budget." + (f" {len(near)} victims are near their budget: see the "
                                                           "findings." if near else "")))
    else:
        details = _detail_by_run(result, folder)
        rows, attrs = zip(*(_fix_row(item, result, details) for item in items))
        parts.append(tag("p", "Victims over budget, worst first: each with the run that puts the most noise on it "
                              "and what would bring that run within budget. Click a row to find it on the map.",
                         class_="muted"))
        parts.append(tag("div", table(["finding", "victim (class)", "budget used, all aggressors", "worst run",
                                       "fix for that run", "picture"], list(rows), class_="fix-first",
                                      numeric={2}, row_attrs=list(attrs)), class_="scroll"))
    if result.impedance is not None and result.impedance.stretches:
        parts.append(tag("p", [f"Also {len(result.impedance.stretches)} routed stretches are off their class's "
                               "impedance target: ", link("#impedance", "see the impedance check"), "."]))
    if folder.has(names.BUDGET_FILE):
        parts.append(tag("figure", [link(names.BUDGET_FILE, tag("img", src=names.BUDGET_FILE, class_="bars",
                                                                 alt="Budget used per victim")),
                                    tag("figcaption", "Budget used per victim, all aggressors together; the line "
                                                      "is the budget.")]))
    return Markup("".join(parts))


def _map_controls(board: Board) -> Markup:
    toggles = [tag("label", [tag("input", type="checkbox", checked=True, data_layer=str(k)), f" {layer.name}",
                             tag("span", f" {layer.side}", class_="sub")], class_=f"toggle side-{layer.side}")
               for k, layer in enumerate(board.layers) if layer.kind != "plane"]
    buttons = [tag("button", text, type="button", id=i, title=t) for i, text, t in
               (("map-zoom-in", "+", "zoom in (+)"), ("map-zoom-out", "−", "zoom out (−)"),
                ("map-home", "whole board", "whole board (0)"))]
    return tag("div", [tag("span", "Layers:", class_="sub")] + toggles + [tag("span", buttons, class_="buttons")],
               class_="map-controls")


def _maps(result: ScanResult, board: Board | None, folder: _Folder) -> Markup:
    parts = [tag("h2", "Where the findings are", id="maps")]
    if board is not None:
        svg, data = board_map(result, board, board_bounds(board))
        parts.append(tag("div", [_map_controls(board),
                                 tag("div", [tag("div", Markup(svg), class_="map-frame"),
                                             tag("aside", "", id="map-info", aria_live="polite")],
                                     class_="map-body"),
                                 tag("p", "Drag to pan, wheel or + and − to zoom, 0 for the whole board; markers: "
                                          "circle on the top layer, diamond inside, square on the bottom. Click a "
                                          "marker or a table row for the figures and the fix.", class_="sub"),
                                 tag("script", Markup(data), type="application/json", id="map-data")],
                         id="board-map"))
    stems = names.layer_stems([layer["name"] for layer in result.board.get("layers", [])])
    figures = []
    for stem, caption in [(names.COMPOSITE_STEM, "All layers: copper dimmed, marker shape gives the side of the "
                                                "finding's main layer.")] + [
            (st, f"Layer {name}: copper, victim and aggressor traces, findings.") for name, st in stems.items()]:
        if folder.has(f"{stem}.png"):
            img = tag("img", src=f"{stem}.png", alt=caption, class_="map")
            body = link(f"{stem}.svg", img) if folder.has(f"{stem}.svg") else img
            figures.append(tag("figure", [body, tag("figcaption", caption)], id=stem))
    if figures:
        parts.append(tag("details", [tag("summary", f"Printable maps ({len(figures)}): PNG, and SVG by a click")]
                         + figures))
    if len(parts) == 1:
        parts.append(tag("p", "No images were written."))
    return Markup("".join(parts))


def _status(finding) -> Markup:
    """The status badge, with the finding's waiver mark under it."""
    return two_line(badge(finding.status), waiver_mark_text(finding.waiver)) if finding.waiver else badge(finding.status)


def _used(h: Hotspot) -> Markup:
    """Share of budget used, with the exact simulation's share under it where one was run."""
    used = f"{h.budget_used_pct:.0f} %"
    return two_line(used, f"exact {h.exact['budget_used_pct']:.0f} %") if h.exact else esc(used)


def _finding_rows(hotspots: list[Hotspot], details: dict[int, int], on_map: bool) -> tuple[list, list]:
    rows, attrs = [], []
    for h in hotspots:
        rank = link(f"#finding-{details[h.run]}", str(h.rank)) if h.run in details else str(h.rank)
        rows.append([rank, _status(h), two_line(h.victim, h.victim_class),
                     two_line(h.aggressor, h.aggressor_class), two_line("+".join(h.layers), h.structure),
                     num(h.coupled_length_mm, 4), num(h.min_spacing_mm),
                     two_line(f"{h.next_mv:.4g}", f"{h.next_pct:.3g} %"),
                     two_line(f"{h.fext_mv:.4g}", f"{h.fext_pct:.3g} %"),
                     two_line(f"{h.next_budget_mv:.4g}", f"{h.fext_budget_mv:.4g}"), _used(h),
                     two_line(f"{h.x_mm:.2f}", f"{h.y_mm:.2f}"), lines(fix_lines(h, brief=True)) if h.fix else "–"])
        attrs.append({"class_": f"row-{h.status}", "data_run": h.run if on_map else None})
    return rows, attrs


FINDING_HEADERS = ["#", "status", "victim (class)", "aggressor (class)", "layers", "side by side mm", "gap mm",
                   "NEXT mV (% swing)", "FEXT mV (% swing)", "budget mV NEXT / FEXT", "budget used", "x / y mm",
                   "fix"]
FINDING_NUMERIC = {0, 5, 6, 7, 8, 9, 10, 11}


def _findings(result: ScanResult, board: Board | None, folder: _Folder) -> Markup:
    details = _detail_by_run(result, folder)
    open_rows = [h for h in result.hotspots if is_shown_in_table(h)]
    folded = [h for h in result.hotspots if not is_shown_in_table(h)]
    floor = result.summary.get("list_floor")
    note = (f" Couplings using less than {100 * floor:g} % of their budget are counted in the totals but not "
            "listed." if floor is not None else "")
    parts = [tag("h2", f"Findings over or near budget ({len(open_rows)})", id="findings"),
             tag("p", "One row per aggressor and victim on one side-by-side run, worst first; a run scored both ways "
                      "gives two rows. Location: the middle of the run's worst stretch, seen from the top." + note,
                 class_="muted")]
    rows, attrs = _finding_rows(open_rows, details, board is not None)
    parts.append(tag("div", table(FINDING_HEADERS, rows, class_="findings", numeric=FINDING_NUMERIC, row_attrs=attrs),
                     class_="scroll") if rows else tag("p", "None."))
    if folded:
        rows, attrs = _finding_rows(folded, details, board is not None)
        parts.append(tag("details", [tag("summary", f"Findings within budget ({len(folded)})"),
                                     tag("div", table(FINDING_HEADERS, rows, class_="findings-pass",
                                                      numeric=FINDING_NUMERIC, row_attrs=attrs), class_="scroll")]))
    parts.append(_geometric(result, board is not None))
    parts.append(_impedance(result))
    parts.append(_victims(result.victims))
    return Markup("".join(parts))


def _geometric(result: ScanResult, on_map: bool) -> Markup:
    if not result.geometric:
        return Markup("")
    rows = [[geometric_label(i), _status(g), two_line(g.victim, g.victim_class),
             two_line(g.aggressor, g.aggressor_class), "+".join(g.layers), num(g.parallel_mm, 4),
             num(g.max_parallel_mm, 4), num(g.within_spacing_mm), num(g.min_spacing_mm),
             two_line(f"{g.x_mm:.2f}", f"{g.y_mm:.2f}")] for i, g in enumerate(result.geometric)]
    headers = ["", "status", "victim (class)", "aggressor (class)", "layers", "side by side mm", "limit mm",
               "within gap mm", "smallest gap mm", "x / y mm"]
    attrs = [{"class_": f"row-{g.status}", "data_run": g.run if on_map else None} for g in result.geometric]
    return Markup(tag("h3", f"Geometric limits broken ({len(result.geometric)})", id="geometric")
                  + tag("p", "Runs between two classes longer than the rules allow within a gap; G1, G2, … on the "
                             "maps.", class_="muted")
                  + tag("div", table(headers, rows, numeric={5, 6, 7, 8, 9}, row_attrs=attrs), class_="scroll"))


def _impedance(result: ScanResult) -> Markup:
    """Routed stretches outside their class's impedance target (only when some class sets one)."""
    check = result.impedance
    if check is None or not check.classes:
        return Markup("")
    targets = [[c.net_class, num(c.z0_target_ohm), num(c.zdiff_target_ohm), f"±{c.tolerance_pct:g} %",
                num(c.checked_mm, 6), num(c.pair_checked_mm, 6), f"{c.stretches} ({num(c.outside_mm, 6)} mm)",
                f"{c.short_stretches} ({num(c.short_mm, 6)} mm)", num(c.not_checked_mm, 6)] for c in check.classes]
    rows = [[badge(x.status), x.net_class, x.net, x.kind, x.layer, num(x.length_mm, 4), num(x.width_mm),
             num(x.gap_mm), num(x.z_ohm, 4), f"{x.target_ohm:g}", f"{x.deviation_pct:+.0f} %",
             two_line(f"{x.x_mm:.2f}", f"{x.y_mm:.2f}")] for x in check.stretches]
    return Markup(tag("h3", f"Impedance off target ({len(check.stretches)})", id="impedance")
                  + tag("p", f"Traces of classes with an impedance target, solved at their own width and layer (pairs "
                             f"also at their gap). Stretches shorter than {check.min_length_mm:g} mm (neck-downs at "
                             "pads) are counted, not listed.", class_="muted")
                  + tag("div", table(["class", "Z0 target Ω", "Zdiff target Ω", "tolerance", "traces checked mm",
                                      "pairs checked mm", "off target", "shorter, not listed", "not checked mm"],
                                     targets, numeric={1, 2, 4, 5, 8}), class_="scroll")
                  + tag("div", table(["status", "class", "net", "kind", "layer", "length mm", "width mm", "gap mm",
                                      "Z Ω", "target Ω", "off by", "x / y mm"], rows, numeric=set(range(5, 12)),
                                     row_attrs=[{"class_": f"row-{x.status}"} for x in check.stretches]),
                        class_="scroll"))


def _victims(victims: list[VictimTotal]) -> Markup:
    rows = []
    for v in victims:
        aggressors = list(dict.fromkeys(a["aggressor"] for a in v.aggressors))
        rows.append([v.net, v.net_class, badge(v.status), f"{v.next_worst_mv:.4g} ({v.next_worst_pct:.3g} %)",
                     f"{v.fext_worst_mv:.4g} ({v.fext_worst_pct:.3g} %)", f"{v.next_rss_pct:.3g} / {v.fext_rss_pct:.3g}",
                     f"{v.next_budget_mv:.4g} / {v.fext_budget_mv:.4g}", f"{v.budget_used_pct:.0f} %",
                     ", ".join(aggressors) + (f"; waived: {', '.join(v.waived_aggressors)} ({', '.join(v.waivers)}), "
                                              f"{v.budget_used_with_waived_pct:.0f} % with them"
                                              if v.waived_aggressors else "")])
    body = table(["victim", "class", "status", "NEXT worst case mV (%)", "FEXT worst case mV (%)",
                  "RSS % (NEXT / FEXT)", "budget mV (NEXT / FEXT)", "budget used", "aggressors"], rows,
                 class_="victims", numeric={3, 4, 5, 6, 7})
    return tag("details", [tag("summary", f"Every victim, all aggressors together ({len(victims)})"),
                           tag("p", "Worst case: peak magnitudes added; RSS: root-sum-square. The budget check uses "
                                    "the basis the rules name.", class_="muted"),
                           tag("div", body, class_="scroll")], id="victims")


def _details(result: ScanResult, folder: _Folder) -> Markup:
    parts = [tag("h2", "Close-ups of the top runs", id="details")]
    for h in detail_hotspots(result):
        pictures = [(names.crop_file(h.rank), "The run: victim and aggressor traces on every layer it uses, the "
                                              "worst stretch shaded, gap and coupled length marked."),
                    (names.wave_file(h.rank), "Predicted noise against time, one panel per place the receiver may "
                                              "sit."),
                    (names.section_file(h.rank), "The cross-section at the worst stretch, to scale."),
                    (names.whatif_file(h.rank), "The noise at other gaps and lengths: where the dotted line meets "
                                                "the budget is the fix.")]
        figures = [tag("figure", [link(f, tag("img", src=f, alt=alt)), tag("figcaption", alt)])
                   for f, alt in pictures if folder.has(f)]
        if not figures:
            continue
        info = facts([("status", badge(h.status)), ("aggressor model", h.aggressor_model),
                      ("edge", f"{h.rise_time_ns:g} ns 10–90 %, {h.swing_v:g} V"),
                      ("victim's ends", TERMINATION_WORDS.get(h.termination, h.termination)), ("largest backward coefficient", num(h.kb_max)),
                      ("strong coupling", "yes: weak-coupling figures are less accurate" if h.strong_coupling
                       else "no"), ("fix", lines(fix_lines(h)) if h.fix else "none needed")]
                     + ([("exact line simulation", f"NEXT {h.exact['next_mv']:.4g} mV, FEXT {h.exact['fext_mv']:.4g} "
                                                   f"mV, {h.exact['budget_used_pct']:.0f} % of budget")]
                        if h.exact else []))
        parts.append(tag("section", [tag("h3", f"#{h.rank} {h.victim} ← {h.aggressor} on {'+'.join(h.layers)}"),
                                     info, tag("div", figures, class_="pair")], id=f"finding-{h.rank}"))
    if len(parts) == 1:
        parts.append(tag("p", "No close-ups were written."))
    return Markup("".join(parts))


def _version() -> str:
    try:
        return metadata.version("nearfar")
    except metadata.PackageNotFoundError:
        return "unknown"


def render_page(result: ScanResult, out_dir: str | Path, board: Board | None = None) -> str:
    """The page's HTML; links only to files that exist in ``out_dir``; the board map needs ``board``."""
    folder = _Folder(Path(out_dir))
    body = (_header(result, folder) + _fix_first(result, folder) + _maps(result, board, folder)
            + _findings(result, board, folder) + _details(result, folder)
            + Markup(waivers_section(result.waivers)) + Markup(changes_section(result.comparison))
            + assumptions(result, folder.has(names.STACKUP_FILE))
            + tag("footer", f"nearfar {_version()}; data schema {SCHEMA}; run {result.run_id}, {result.created}.",
                  class_="muted"))
    if board is not None:
        body += tag("script", Markup(map_script()))
    head = Markup(tag("meta", charset="utf-8") + tag("meta", name="viewport", content="width=device-width, initial-scale=1")
                  + tag("title", f"Crosstalk report: {result.board.get('name', '')}") + tag("style", Markup(style())))
    return Markup("<!DOCTYPE html>\n") + tag("html", [tag("head", head), tag("body", body)], lang="en") + "\n"


def write_page(result: ScanResult, out_dir: str | Path, board: Board | None = None) -> Path:
    """Write report.html into ``out_dir`` (atomically)."""
    return write_file(Path(out_dir) / PAGE_FILE, render_page(result, out_dir, board))
