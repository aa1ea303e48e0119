"""report.html: one self-contained page that puts a scan together.

No scripts, no fonts, no style sheets or images from the network: the styles are
inline and the images are the files beside the page (``scanner.report.images``),
linked by relative names and only where they exist. All text from the board and
the rules is escaped. Written last, after report.json and hotspots.csv.
"""
from __future__ import annotations

import html
from importlib import metadata
from pathlib import Path

from scanner.outputs import write_file
from scanner.report import names, palette
from scanner.report.checked import board_notes, gap_lines, reference_lines, verdict_sentence
from scanner.report.marks import PASS_SHOWN_TOP, geometric_label, shown_findings
from scanner.scoring.results import CAUTION, SCHEMA, Hotspot, ScanResult, VictimTotal

PAGE_FILE = "report.html"
TABLE_FILES = ("report.json", "hotspots.csv")
VOID_ELEMENTS = {"img", "meta", "br"}


class Markup(str):
    """Text that is already HTML; everything else is escaped when inserted or added to it."""

    def __add__(self, other) -> "Markup":
        return Markup(str.__add__(self, esc(other)))

    def __radd__(self, other) -> "Markup":
        return Markup(str.__add__(esc(other), self))


def esc(value) -> Markup:
    return value if isinstance(value, Markup) else Markup(html.escape("" if value is None else str(value), quote=True))


def tag(element: str, content="", /, **attrs) -> Markup:
    """An element; attribute names ending in ``_`` lose it (``class_``), ``None`` attributes are left out."""
    text = "".join(f' {k.rstrip("_")}="{esc(v)}"' for k, v in attrs.items() if v is not None)
    if element in VOID_ELEMENTS:
        return Markup(f"<{element}{text}/>")
    body = "".join(esc(c) for c in content) if isinstance(content, (list, tuple)) else esc(content)
    return Markup(f"<{element}{text}>{body}</{element}>")


def link(href: str, text) -> Markup:
    return tag("a", text, href=href)


def table(headers: list[str], rows: list[list], class_: str | None = None, numeric: set[int] = frozenset(),
          row_classes: list[str] | None = None) -> Markup:
    head = tag("thead", tag("tr", [tag("th", h, class_="num" if i in numeric else None) for i, h in enumerate(headers)]))
    row_classes = row_classes or [None] * len(rows)
    body = tag("tbody", [tag("tr", [tag("td", c, class_="num" if i in numeric else None) for i, c in enumerate(row)],
                             class_=rc) for row, rc in zip(rows, row_classes)])
    return tag("table", [head, body], class_=class_)


def facts(pairs: list[tuple[str, object]]) -> Markup:
    return tag("dl", [Markup(tag("dt", k) + tag("dd", v)) for k, v in pairs], class_="facts")


def badge(status: str) -> Markup:
    return tag("span", status, class_=f"badge st-{status}")


def num(value, digits: int = 3) -> str:
    if value is None:
        return "–"
    return f"{value:.{digits}g}" if isinstance(value, float) else str(value)


def _style() -> str:
    s = palette.STATUS_COLOUR
    t = palette.STATUS_TEXT
    return f"""
body {{ font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif; color: {palette.INK};
  margin: 0 auto; max-width: 1280px; padding: 0 1.2rem 3rem; line-height: 1.4; }}
h1 {{ font-size: 1.5rem; margin: 1.2rem 0 0.3rem; }}
h2 {{ font-size: 1.2rem; margin-top: 2.2rem; border-bottom: 2px solid {palette.POUR}; padding-bottom: 0.2rem; }}
h3 {{ font-size: 1.02rem; margin: 1.4rem 0 0.4rem; }}
nav a {{ margin-right: 1rem; }}
a {{ color: {palette.VICTIM}; }}
.caution {{ background: #fbf3e2; border-left: 5px solid {s['warn']}; padding: 0.6rem 0.9rem; }}
.verdict {{ font-size: 1.05rem; }}
table {{ border-collapse: collapse; font-size: 0.82rem; margin: 0.5rem 0 1rem; }}
th, td {{ border-bottom: 1px solid #e6e1d7; padding: 0.25rem 0.5rem; text-align: left; vertical-align: top; }}
th {{ background: {palette.BOARD_FILL}; position: sticky; top: 0; }}
td.num, th.num {{ text-align: right; font-variant-numeric: tabular-nums; }}
tr.row-fail td:first-child {{ border-left: 4px solid {s['fail']}; }}
tr.row-warn td:first-child {{ border-left: 4px solid {s['warn']}; }}
tr.row-pass td:first-child {{ border-left: 4px solid {s['pass']}; }}
.badge {{ display: inline-block; border-radius: 0.6rem; padding: 0 0.5rem; font-weight: 600; font-size: 0.78rem; }}
.st-fail {{ background: {s['fail']}; color: {t['fail']}; }}
.st-warn {{ background: {s['warn']}; color: {t['warn']}; }}
.st-pass {{ background: {s['pass']}; color: {t['pass']}; }}
dl.facts {{ display: grid; grid-template-columns: max-content auto; gap: 0.15rem 1rem; font-size: 0.88rem; }}
dl.facts dt {{ color: #6b6357; }}
dl.facts dd {{ margin: 0; }}
figure {{ margin: 0.8rem 0 1.4rem; }}
figure img {{ max-width: 100%; height: auto; border: 1px solid #e6e1d7; }}
figcaption {{ font-size: 0.82rem; color: #6b6357; }}
.pair {{ display: flex; flex-wrap: wrap; gap: 1rem; }}
.pair figure {{ flex: 1 1 540px; }}
.scroll {{ overflow-x: auto; }}
.muted {{ color: #6b6357; font-size: 0.85rem; }}
.sub {{ color: #6b6357; font-size: 0.74rem; }}
.views, td.num {{ white-space: nowrap; }}
table.findings td {{ font-size: 0.8rem; }}
table.findings td:nth-child(13) {{ white-space: nowrap; }}
figure img.map {{ max-width: min(100%, 1100px); }}
"""


class _Folder:
    """Which report files exist beside the page."""

    def __init__(self, out_dir: Path):
        self.out_dir = out_dir

    def has(self, name: str) -> bool:
        return (self.out_dir / name).is_file()


def _header(result: ScanResult, folder: _Folder) -> Markup:
    sm = result.summary
    status = result.worst_status
    findings = sm.get("findings", len(result.hotspots))
    verdict = tag("p", [badge(status), f" {sm.get('victims', 0)} victims: {sm.get('victims_fail', 0)} over budget, "
                                       f"{sm.get('victims_warn', 0)} near budget, {sm.get('victims_pass', 0)} within "
                                       f"budget; {findings} findings from {sm.get('coupled_runs', 0)} coupled runs, "
                                       f"{len(result.hotspots)} listed."], class_="verdict")
    files = [link(f, f) for f in TABLE_FILES if folder.has(f)]
    data = tag("p", ["Data: "] + _joined(files, ", "), class_="muted") if files else Markup("")
    sections = [("board", "Board"), ("rules", "Rules"), ("maps", "Maps"), ("findings", "Findings")]
    sections += [("geometric", "Geometric limits")] if result.geometric else []
    sections += [("impedance", "Impedance")] if result.impedance is not None and result.impedance.classes else []
    sections += [("details", "Top findings"), ("victims", "Victims"), ("assumptions", "Assumptions")]
    return Markup(tag("h1", f"Crosstalk report: {result.board.get('name', '')}") + verdict
                  + tag("p", [tag("strong", "Caution. "), CAUTION], class_="caution")
                  + tag("nav", [link(f"#{a}", t) for a, t in sections]) + data)


def _checked(result: ScanResult) -> Markup:
    """The verdict and what was checked: a block with its own inline styles, first on the page."""
    verdict = result.verdict
    colour = palette.STATUS_COLOUR["warn" if verdict == "incomplete" else verdict]
    text = palette.STATUS_TEXT["warn" if verdict == "incomplete" else verdict]
    word, _, rest = verdict_sentence(result).partition(": ")
    head = tag("p", [tag("strong", word, style=f"background:{colour};color:{text};padding:0.1rem 0.55rem;"
                                                 "border-radius:0.5rem;margin-right:0.5rem"), rest],
               style="margin:0;font-size:1.1rem")
    gaps = tag("ul", [tag("li", line) for line in gap_lines(result)], style="margin:0.4rem 0 0;padding-left:1.3rem")
    refs = tag("ul", [tag("li", line) for line in reference_lines(result) + board_notes(result)],
               style="margin:0.4rem 0 0;padding-left:1.3rem;font-size:0.85rem;color:#5b544a")
    return tag("section", [head, gaps if result.unchecked else "", refs], id="checked",
               style=f"border:2px solid {colour};border-radius:6px;padding:0.6rem 0.9rem;margin:1rem 0 0.6rem")


def _joined(items: list[Markup], sep: str) -> list:
    out: list = []
    for i, item in enumerate(items):
        out += ([sep] if i else []) + [item]
    return out


def _board(result: ScanResult) -> Markup:
    b = result.board
    netting = b.get("netting")
    info = [("name", b.get("name")), ("read from", b.get("source")), ("format", b.get("format")),
            ("nets", b.get("nets")), ("copper layers", len(b.get("layers", [])))]
    if netting:
        info += [("nets assigned by", netting.get("method")),
                 ("trace length with a net", f"{100 * netting.get('netted_trace_fraction', 0):.1f} %"),
                 ("netlist points matched", f"{netting.get('netlist_points_matched')} of "
                                            f"{netting.get('netlist_points_total')}"),
                 ("shorts / opens", f"{netting.get('shorts')} / {netting.get('opens')}")]
    layers = table(["#", "layer", "side", "kind", "kind from", "segments", "trace length mm"],
                   [[layer.get("index"), layer.get("name"), layer.get("side"), layer.get("kind"),
                     layer.get("kind_source"), layer.get("segments"), num(layer.get("trace_length_mm"), 6)]
                    for layer in b.get("layers", [])], numeric={0, 5, 6})
    st = result.stackup
    stack = table(["", "name", "thickness mm", "εr"],
                  [[s.get("kind"), s.get("name"), num(s.get("thickness_mm")), num(s.get("epsilon_r"))]
                   for s in st.get("layers", [])], numeric={2, 3})
    warnings = tag("ul", [tag("li", w) for w in result.warnings]) if result.warnings else tag("p", "None.")
    return Markup(tag("h2", "Board", id="board") + facts(info) + tag("h3", "Copper layers") + layers
                  + tag("h3", f"Stackup (from {st.get('source', 'unknown')})") + stack
                  + _signal_layers(st)
                  + tag("h3", f"Warnings ({len(result.warnings)})") + warnings)


def _signal_layers(st: dict) -> Markup:
    """Each scanned layer's cross-section and impedances at the board's own width and pair gap."""
    rows = [[e.get("name", name), e.get("structure"), ", ".join(e.get("references", [])) or "–",
             num(e.get("height_mm")), num(e.get("height_second_mm")), num(e.get("width_mm")), num(e.get("z0_ohm")),
             num(e.get("pair_width_mm")), num(e.get("gap_mm")), num(e.get("zdiff_ohm")),
             "pairs" if e.get("gap_source") == "pairs" else "assumed (= width)"]
            for name, e in st.get("signal_layers", {}).items()]
    headers = ["signal layer", "structure", "references", "height mm", "to 2nd plane mm", "width mm", "Z0 Ω",
               "pair width mm", "gap mm", "Zdiff Ω", "gap from"]
    return Markup(tag("h3", "Scanned layers and their impedance")
                  + tag("p", "At each layer's most used trace width and differential-pair gap, from the same field "
                             "solver; compare with the fabricator's impedance table.", class_="muted")
                  + tag("div", table(headers, rows, numeric=set(range(3, 10))), class_="scroll"))


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
    return Markup(tag("h2", f"Impedance off target ({len(check.stretches)})", id="impedance")
                  + tag("p", f"Traces of classes with an impedance target, solved at their own width and layer (pairs "
                             f"also at their gap). Stretches shorter than {check.min_length_mm:g} mm (neck-downs at "
                             "pads) are counted, not listed.", class_="muted")
                  + table(["class", "Z0 target Ω", "Zdiff target Ω", "tolerance", "traces checked mm",
                           "pairs checked mm", "off target", "shorter, not listed", "not checked mm"], targets,
                          numeric={1, 2, 4, 5, 8})
                  + tag("div", table(["status", "class", "net", "kind", "layer", "length mm", "width mm", "gap mm",
                                      "Z Ω", "target Ω", "off by", "x / y mm"], rows, numeric=set(range(5, 12)),
                                     row_classes=[f"row-{x.status}" for x in check.stretches]), class_="scroll"))


def _budget_text(c: dict, kind: str) -> str:
    mv = c.get(f"{kind}_budget_mv")
    if mv is not None:
        return f"{mv:g} mV"
    pct = c.get(f"{kind}_budget_pct")
    return "none" if pct is None else f"{pct:g} %"


def _rules(result: ScanResult) -> Markup:
    r, s = result.rules, result.settings
    settings = [(k.replace("_", " "), v) for k, v in s.items()]
    scan = [(k.replace("_", " "), v) for k, v in r.get("scan", {}).items() if k not in s]
    classes = r.get("classes", []) + ([r["default_class"]] if r.get("default_class") else [])
    class_rows = [[c.get("name"), ", ".join(c.get("patterns", [])), num(c.get("rise_time_ns")), num(c.get("swing_v")),
                   _budget_text(c, "next"), _budget_text(c, "fext"), c.get("termination")] for c in classes]
    pairs = r.get("diff_pairs") or []
    extra = [("power and ground nets (patterns)", ", ".join(r.get("power_patterns", [])) or "none"),
             ("differential pairs (explicit)", "; ".join(" / ".join(map(str, p)) for p in pairs) or "none"),
             ("planes named in the rules", ", ".join(r.get("planes", [])) or "none")]
    return Markup(tag("h2", "Rules and defaults in force", id="rules")
                  + tag("p", f"Rules from: {r.get('source', 'defaults')}", class_="muted")
                  + facts(settings + scan) + tag("h3", "Net classes")
                  + table(["class", "nets", "rise time ns", "swing V", "NEXT budget", "FEXT budget", "victim ends"],
                          class_rows, numeric={2, 3})
                  + facts(extra))


def _layer_stems(result: ScanResult) -> dict[str, str]:
    return names.layer_stems([layer["name"] for layer in result.board.get("layers", [])])


def _maps(result: ScanResult, folder: _Folder) -> Markup:
    stems = _layer_stems(result)
    parts = [tag("h2", "Where the findings are", id="maps"),
             tag("p", f"Findings over budget and near budget are all drawn, passing ones only among the first "
                      f"{PASS_SHOWN_TOP} ranks. Labels give ranks in the findings table (G1, G2, …: geometric "
                      "limits); a label with two ranks is one run scored in both directions. Click an image for "
                      "the scalable version.", class_="muted")]
    for stem, caption in [(names.COMPOSITE_STEM, "All layers: marker shape gives the side of the finding's main "
                                                "layer.")] + [(st, f"Layer {name}: copper, victim and aggressor "
                                                                   f"traces, findings.") for name, st in stems.items()]:
        if folder.has(f"{stem}.png"):
            img = tag("img", src=f"{stem}.png", alt=caption, class_="map")
            body = link(f"{stem}.svg", img) if folder.has(f"{stem}.svg") else img
            parts.append(tag("figure", [body, tag("figcaption", caption)], id=stem))
    if len(parts) == 2:
        parts.append(tag("p", "No images were written."))
    return Markup("".join(parts))


def two_line(main, sub) -> Markup:
    """A cell value with a second, smaller line under it."""
    return esc(main) + tag("br") + tag("span", sub, class_="sub")


def _fix_text(h: Hotspot) -> Markup:
    """Each way out on its own line: a wider spacing, a shorter run, another layer."""
    fix = h.fix or {}
    out = []
    if fix.get("spacing_needed_mm") is not None:
        out.append(f"spacing ≥ {fix['spacing_needed_mm']:.3g} mm")
    if fix.get("max_length_mm") is not None:
        out.append(f"length ≤ {fix['max_length_mm']:.3g} mm")
    layer = (fix.get("alternative_layer") or {}).get("layer")
    if layer:
        out.append(f"move to {layer}")
    return Markup(tag("br").join(esc(o) for o in out))


def _used(h: Hotspot) -> Markup:
    """Share of budget used, with the exact simulation's share under it where one was run."""
    used = f"{100 * h.budget_used:.0f} %"
    return two_line(used, f"exact {100 * h.exact['budget_used']:.0f} %") if h.exact else esc(used)


def _floor_note(result: ScanResult) -> str:
    floor = result.summary.get("list_floor")
    if floor is None:
        return ""
    return f" Findings using less than {100 * floor:g} % of their budget are counted in the totals but not listed."


def _views(h: Hotspot, folder: _Folder, stems: dict[str, str], on_map: bool) -> Markup:
    """Links to the finding's crop and waveform, and to its main layer's map when it is marked there."""
    targets = [(names.crop_file(h.rank), "crop"), (names.wave_file(h.rank), "wave")]
    targets += [(f"{stems.get(h.layer, '')}.png", "map")] if on_map else []
    views = [link(target, text) for target, text in targets if folder.has(target)]
    return tag("span", _joined(views, " · "), class_="views")


def _findings(result: ScanResult, folder: _Folder) -> Markup:
    stems = _layer_stems(result)
    marked = {f.label for f in shown_findings(result)}
    rows, classes = [], []
    for h in result.hotspots:
        detail = folder.has(names.crop_file(h.rank)) or folder.has(names.wave_file(h.rank))
        rank = link(f"#finding-{h.rank}", str(h.rank)) if detail else str(h.rank)
        rows.append([rank, badge(h.status), two_line(h.victim, h.victim_class),
                     two_line(h.aggressor, h.aggressor_class), two_line("+".join(h.layers), h.structure),
                     num(h.coupled_length_mm, 4), num(h.min_spacing_mm),
                     two_line(f"{h.next_mv:.4g}", f"{h.next_pct:.3g} %"), two_line(f"{h.fext_mv:.4g}", f"{h.fext_pct:.3g} %"),
                     two_line(f"{h.next_budget_mv:.4g}", f"{h.fext_budget_mv:.4g}"), _used(h),
                     two_line(f"{h.x_mm:.2f}", f"{h.y_mm:.2f}"), _fix_text(h), _views(h, folder, stems, str(h.rank) in marked)])
        classes.append(f"row-{h.status}")
    headers = ["#", "status", "victim (class)", "aggressor (class)", "layers", "coupled mm", "min spacing mm",
               "NEXT mV (% swing)", "FEXT mV (% swing)", "budget mV NEXT / FEXT", "budget used", "x / y mm",
               "suggested fix", "views"]
    body = table(headers, rows, class_="findings", numeric={0, 5, 6, 7, 8, 9, 10, 11}, row_classes=classes)
    return Markup(tag("h2", f"Findings, worst first ({len(result.hotspots)})", id="findings")
                  + tag("p", "One row per aggressor and victim on one coupled run; both directions of a run are "
                             f"listed.{_floor_note(result)} Location: middle of the run's worst stretch, board "
                             "coordinates seen from the top.", class_="muted")
                  + tag("div", body, class_="scroll"))


def _geometric(result: ScanResult, folder: _Folder) -> Markup:
    if not result.geometric:
        return Markup("")
    stems = _layer_stems(result)
    rows = []
    for i, g in enumerate(result.geometric):
        maps = [link(f"{stems[name]}.png", name) for name in g.layers if folder.has(f"{stems.get(name, '')}.png")]
        rows.append([geometric_label(i), badge(g.status), two_line(g.victim, g.victim_class),
                     two_line(g.aggressor, g.aggressor_class), "+".join(g.layers), num(g.parallel_mm, 4),
                     num(g.max_parallel_mm, 4), num(g.within_spacing_mm), num(g.min_spacing_mm),
                     two_line(f"{g.x_mm:.2f}", f"{g.y_mm:.2f}"), tag("span", _joined(maps, " · "), class_="views")])
    headers = ["", "status", "victim (class)", "aggressor (class)", "layers", "parallel mm", "limit mm",
               "within spacing mm", "min spacing mm", "x / y mm", "maps"]
    return Markup(tag("h2", f"Geometric limits broken ({len(result.geometric)})", id="geometric")
                  + tag("p", "Runs between two classes longer than the rules allow at or below a spacing; marked "
                             "G1, G2, … on the maps.", class_="muted")
                  + tag("div", table(headers, rows, numeric={5, 6, 7, 8, 9},
                                     row_classes=[f"row-{g.status}" for g in result.geometric]), class_="scroll"))


def _details(result: ScanResult, folder: _Folder) -> Markup:
    parts = [tag("h2", "Top findings", id="details")]
    for h in result.hotspots:
        crop, wave = names.crop_file(h.rank), names.wave_file(h.rank)
        if not (folder.has(crop) or folder.has(wave)):
            continue
        figures = [tag("figure", [link(f, tag("img", src=f, alt=alt)), tag("figcaption", alt)])
                   for f, alt in ((crop, f"Finding {h.rank} on layer {h.layer}: victim and aggressor traces, worst "
                                         f"stretch shaded."),
                                  (wave, f"Finding {h.rank}: predicted victim noise against time, budget band and "
                                         f"aggressor edge."))
                   if folder.has(f)]
        info = facts([("status", badge(h.status)), ("aggressor model", h.aggressor_model),
                      ("edge", f"{h.rise_time_ns:g} ns 10–90 %, {h.swing_v:g} V"),
                      ("victim ends", h.termination), ("largest Kb", num(h.kb_max)),
                      ("strong coupling", "yes: weak-coupling figures are less accurate" if h.strong_coupling
                       else "no")]
                     + ([("exact line simulation", f"NEXT {h.exact['next_mv']:.4g} mV, FEXT {h.exact['fext_mv']:.4g} "
                                                   f"mV, {100 * h.exact['budget_used']:.0f} % of budget")]
                        if h.exact else []))
        parts.append(tag("section", [tag("h3", f"#{h.rank} {h.victim} ← {h.aggressor} on {'+'.join(h.layers)}"),
                                     info, tag("div", figures, class_="pair")], id=f"finding-{h.rank}"))
    if len(parts) == 1:
        parts.append(tag("p", "No detail images were written."))
    return Markup("".join(parts))


def _victims(victims: list[VictimTotal]) -> Markup:
    rows = []
    for v in victims:
        aggressors = list(dict.fromkeys(v.aggressors))
        rows.append([v.net, v.net_class, badge(v.status), f"{v.next_worst_mv:.4g} ({v.next_worst_pct:.3g} %)",
                     f"{v.fext_worst_mv:.4g} ({v.fext_worst_pct:.3g} %)", f"{v.next_rss_pct:.3g} / {v.fext_rss_pct:.3g}",
                     f"{v.next_budget_mv:.4g} / {v.fext_budget_mv:.4g}", f"{100 * v.budget_used:.0f} %",
                     ", ".join(aggressors)])
    return Markup(tag("h2", f"Victims, all aggressors together ({len(victims)})", id="victims")
                  + tag("p", "Worst case: peak magnitudes added; RSS: root-sum-square. The budget check uses the "
                             "basis named in the rules.", class_="muted")
                  + tag("div", table(["victim", "class", "status", "NEXT worst case mV (%)", "FEXT worst case mV (%)",
                                      "RSS % (NEXT / FEXT)", "budget mV (NEXT / FEXT)", "budget used", "aggressors"],
                                     rows, numeric={3, 4, 5, 6, 7}), class_="scroll"))


def _assumptions(result: ScanResult) -> Markup:
    s = result.settings
    items = [
        "Per-unit-length coupling comes from a 2D quasi-static cross-section solve of each scanned layer in its "
        "stackup, interpolated over spacing; lines are lossless.",
        "Noise follows the weak-coupling model: the near end sees the backward coefficient times the edge, the far "
        "end the forward coefficient times the coupled length times the edge's slope.",
        "The aggressor edge is a linear ramp of the class swing; its full duration is the 10–90 % rise time "
        "divided by 0.8. The aggressor is matched at its driver.",
        "The victim's near end is matched; its far end is matched or a high-impedance receiver, where the far-end "
        "noise doubles (class termination).",
        "A run that changes spacing or layer is a chain of pieces; the near-end figure is the peak of the summed "
        "waveform, for the worse of the two driver positions.",
        f"Traces count as coupled where their edges come within {s.get('search_distance_mm')} mm "
        f"({s.get('search_distance_source')}) and run within {s.get('angle_tolerance_deg')}° of parallel; runs "
        f"shorter than {s.get('min_coupled_length_mm')} mm are left out; a gap over {s.get('run_gap_mm')} mm starts a "
        "new run.",
        f"Victim totals add aggressors by the {s.get('budget_basis')} basis; differential aggressors are modelled as "
        f"{s.get('differential_aggressor')}.",
        "Findings with a largest backward coefficient over 0.1 are marked as strong coupling: there the weak-coupling "
        "estimate is rougher.",
    ]
    if any(h.exact for h in result.hotspots):
        items.append("For the worst strong-coupling findings the run was also simulated with the full coupled-line "
                     "equations (sections solved with the field solver, resistive ends); those figures are shown as "
                     "'exact' beside the estimate.")
    if result.stackup.get("source") == "default":
        items.insert(0, "No stackup came with the board, a stackup file or the rules: a typical symmetric build was "
                        "assumed (its values are in the warnings), so every figure here is provisional.")
    return Markup(tag("h2", "Assumptions", id="assumptions") + tag("ul", [tag("li", i) for i in items])
                  + tag("p", [tag("strong", "Caution. "), CAUTION], class_="caution"))


def _version() -> str:
    try:
        return metadata.version("nearfar")
    except metadata.PackageNotFoundError:
        return "unknown"


def render_page(result: ScanResult, out_dir: str | Path) -> str:
    """The page's HTML; links only to files that exist in ``out_dir``."""
    folder = _Folder(Path(out_dir))
    body = (_checked(result) + _header(result, folder) + _board(result) + _rules(result) + _maps(result, folder)
            + _findings(result, folder) + _geometric(result, folder) + _impedance(result) + _details(result, folder)
            + _victims(result.victims) + _assumptions(result)
            + tag("footer", f"nearfar {_version()}; data schema {SCHEMA}; run {result.run_id}, {result.created}.",
                  class_="muted"))
    head = Markup(tag("meta", charset="utf-8") + tag("meta", name="viewport", content="width=device-width, initial-scale=1")
                  + tag("title", f"Crosstalk report: {result.board.get('name', '')}") + tag("style", Markup(_style())))
    return Markup("<!DOCTYPE html>\n") + tag("html", [tag("head", head), tag("body", body)], lang="en") + "\n"


def write_page(result: ScanResult, out_dir: str | Path) -> Path:
    """Write report.html into ``out_dir`` (a staging folder: ``scanner.report.folder``)."""
    return write_file(Path(out_dir) / PAGE_FILE, render_page(result, out_dir))
