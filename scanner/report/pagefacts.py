"""The page's last section: the board, its stackup, the rules and the model, in a designer's words.

Settings are turned into sentences here (never shown by their names in the
rules file); a setting this module does not know yet is still listed, with its
name spelt out, so nothing in force goes unmentioned.
"""
from __future__ import annotations

from scanner.report import names
from scanner.report.html import Markup, esc, facts, link, num, table, tag
from scanner.report.view import coverage_layers, layer_references
from scanner.scoring.results import CAUTION, ScanResult

NETTING_WORDS = {
    "gerber-x2": "net names written into the Gerber files (X2 attributes)",
    "odbpp-eda": "the net list inside the ODB++ job",
    "netlist+connectivity": "copper connectivity, named from the IPC-D-356 netlist",
    "connectivity": "copper connectivity only (nets get made-up names)",
}
KIND_SOURCE_WORDS = {
    "gerber-x2": "its Gerber X2 attributes", "job-file": "the Gerber job file", "board-file": "nearfar-board.toml",
    "fill-ratio": "how much of it is filled", "odbpp-matrix": "the ODB++ layer matrix", "rules": "the rules file",
}
STACKUP_WORDS = {"job-file": "the Gerber job file", "rules": "the rules file", "default": "an assumed build",
                 "odbpp-job": "the ODB++ job"}
TERMINATION_WORDS = {"high-z-receiver": "high-impedance receiver: noise arriving there doubles",
                     "matched": "matched at both ends"}
#: settings described in the sentences of ``_scan_sentences``; any other setting is listed by name
DESCRIBED = {"search_distance_mm", "search_distance_source", "min_coupled_length_mm", "angle_tolerance_deg",
             "run_gap_mm", "budget_basis", "differential_aggressor", "broadside_layer_pairs", "cross_section_solves",
             "warn_fraction", "list_floor", "auto_diff_pairs", "impedance_min_length_mm"}


def _budget_text(c: dict, kind: str) -> str:
    mv = c.get(f"{kind}_budget_mv")
    if mv is not None:
        return f"{mv:g} mV"
    pct = c.get(f"{kind}_budget_pct")
    return "no limit" if pct is None else f"{pct:g} % of the swing"


def _impedance_target(c: dict) -> str:
    parts = [f"{label} {c[key]:g} Ω" for key, label in (("z0_target_ohm", "Z0"), ("zdiff_target_ohm", "Zdiff"))
             if c.get(key) is not None]
    return f"{', '.join(parts)} ±{c.get('impedance_tolerance_pct', 10.0):g} %" if parts else "none"


def _scan_sentences(result: ScanResult) -> list[str]:
    s = result.settings
    scan = result.rules.get("scan", {})
    out = [
        f"Two traces of different nets count as neighbours where their edges come within "
        f"{s.get('search_distance_mm')} mm of each other ({s.get('search_distance_source')}) and they run within "
        f"{s.get('angle_tolerance_deg')}° of parallel.",
        f"Side-by-side stretches shorter than {s.get('min_coupled_length_mm')} mm are ignored; a break of more than "
        f"{s.get('run_gap_mm')} mm along a pair of nets starts a new run.",
        "A victim's total adds the peaks of all its aggressors" + (" (worst case)."
                                                                    if s.get("budget_basis") == "worst-case" else
                                                                    " as a root-sum-square."),
        "A differential pair acting as aggressor is taken " + (
            "as one pair driven with opposite edges, its two members' noise partly cancelling."
            if s.get("differential_aggressor") == "odd-mode" else "as two separate lines, each with its full noise."),
    ]
    if "warn_fraction" in scan:
        out.append(f"Near budget means at least {100 * scan['warn_fraction']:g} % of the budget.")
    if "list_floor" in scan:
        out.append(f"Passing findings under {100 * scan['list_floor']:g} % of their budget are counted but not listed.")
    if "auto_diff_pairs" in scan:
        out.append("Differential pairs are " + ("also recognised from net names (such as _P and _N endings)."
                                                 if scan["auto_diff_pairs"] else "only those the rules name."))
    if "impedance_min_length_mm" in scan:
        out.append(f"Stretches off their impedance target shorter than {scan['impedance_min_length_mm']:g} mm "
                   "(neck-downs at pads) are counted but not listed.")
    pairs = s.get("broadside_layer_pairs") or []
    out.append("Coupling across layers was checked between " + ", ".join(pairs) + " (no plane between them)."
               if pairs else "No two signal layers face each other without a plane between, so coupling stays "
                             "within each layer.")
    if s.get("cross_section_solves") is not None:
        out.append(f"The field solver solved {s['cross_section_solves']} cross-sections for this board.")
    other = {**s, **scan}
    out += [f"{k.replace('_', ' ')}: {v}" for k, v in other.items() if k not in DESCRIBED]
    return out


def _model_sentences(result: ScanResult) -> list[str]:
    items = [
        "Coupling per unit length comes from a 2D field solve of each scanned layer's cross-section in its stackup "
        "(method of moments), interpolated over spacing; lines are lossless.",
        "Noise follows the weak-coupling model: the near end sees the backward coefficient times the edge, the far "
        "end the forward coefficient times the coupled length times the edge's slope.",
        "The aggressor's edge is a linear ramp of its class's swing, the 10–90 % rise time being 80 % of it; the "
        "aggressor is matched at its driver.",
        "A victim with a high-impedance receiver sees the arriving noise doubled; whether the receiver sits at the "
        "near or the far end is not known from the layout, so the worse of the two is checked.",
        "A run that changes spacing or layer is a chain of pieces; the near-end figure is the peak of the summed "
        "waveform.",
        "Findings with a backward coefficient over 0.1 are marked as strong coupling, where the weak-coupling "
        "estimate is rougher.",
    ]
    if any(h.exact for h in result.hotspots):
        items.append("For the worst strong-coupling findings the run was also simulated with the full coupled-line "
                     "equations; those figures are shown as 'exact' beside the estimate.")
    if result.stackup.get("source") == "default":
        items.insert(0, "No stackup came with the board or the rules: an assumed evenly spaced build was used, so "
                        "every figure here is provisional.")
    return items


def _board(result: ScanResult) -> Markup:
    b = result.board
    netting = b.get("netting")
    info = [("board", b.get("name")), ("read from", b.get("source")), ("format", b.get("format")),
            ("nets", b.get("nets"))]
    if netting:
        info += [("nets taken from", NETTING_WORDS.get(netting.get("method"), netting.get("method"))),
                 ("trace length on a named net", f"{100 * netting.get('netted_trace_fraction', 0):.1f} %")]
        if netting.get("netlist_points_total"):
            info.append(("netlist points matched", f"{netting.get('netlist_points_matched')} of "
                                                   f"{netting.get('netlist_points_total')}"))
        if netting.get("shorts") or netting.get("opens"):
            info.append(("shorts / opens against the netlist", f"{netting.get('shorts')} / {netting.get('opens')}"))
    coverage = coverage_layers(result)
    references = layer_references(result)
    rows = []
    for layer in b.get("layers", []):
        name = layer.get("name")
        checked = coverage.get(name, {})
        role = "plane" if checked.get("role", layer.get("kind")) == "plane" else references.get(name, "signal")
        rows.append([name, layer.get("side"), role, KIND_SOURCE_WORDS.get(layer.get("kind_source"),
                                                                         layer.get("kind_source")),
                     "yes" if checked.get("scanned") else f"no: {checked.get('reason')}",
                     num(layer.get("trace_length_mm"), 6)])
    layers = table(["layer", "side", "role", "role known from", "checked", "trace length mm"], rows, numeric={5})
    return Markup(tag("h3", "Board", id="board") + facts(info) + tag("h4", "Copper layers") + tag("div", layers,
                                                                                                  class_="scroll"))


def _stackup(result: ScanResult, has_drawing: bool) -> Markup:
    st = result.stackup
    drawing = (tag("figure", [link(names.STACKUP_FILE, tag("img", src=names.STACKUP_FILE, alt="The stackup drawn",
                                                            class_="stackup")),
                              tag("figcaption", "Signal layers carry their structure and reference plane.")])
               if has_drawing else Markup(""))
    rows = [[s.get("kind"), s.get("name"), num(s.get("thickness_mm")), num(s.get("epsilon_r"))]
            for s in st.get("layers", [])]
    return Markup(tag("h3", f"Stackup, from {STACKUP_WORDS.get(st.get('source'), st.get('source', 'unknown'))}",
                      id="stackup") + drawing
                  + tag("details", [tag("summary", "The stackup as a table"),
                                    table(["", "name", "thickness mm", "εr"], rows, numeric={2, 3})])
                  + _signal_layers(st))


def _signal_layers(st: dict) -> Markup:
    """Each scanned layer's cross-section and impedances at the board's own width and pair gap."""
    rows = [[e.get("name", name), e.get("structure"), ", ".join(e.get("references", [])) or "–",
             num(e.get("height_mm")), num(e.get("height_second_mm")), num(e.get("width_mm")), num(e.get("z0_ohm")),
             num(e.get("pair_width_mm")), num(e.get("gap_mm")), num(e.get("zdiff_ohm")),
             "the board's pairs" if e.get("gap_source") == "pairs" else "assumed equal to the width"]
            for name, e in st.get("signal_layers", {}).items()]
    headers = ["signal layer", "structure", "references", "height mm", "to 2nd plane mm", "width mm", "Z0 Ω",
               "pair width mm", "gap mm", "Zdiff Ω", "pair gap from"]
    return Markup(tag("h4", "Scanned layers and their impedance")
                  + tag("p", "At each layer's most used trace width and differential-pair gap, from the same field "
                             "solver; compare with the fabricator's impedance table.", class_="muted")
                  + tag("div", table(headers, rows, numeric=set(range(3, 10))), class_="scroll"))


def _rules(result: ScanResult) -> Markup:
    r = result.rules
    classes = r.get("classes", []) + ([r["default_class"]] if r.get("default_class") else [])
    targets = any(c.get("z0_target_ohm") is not None or c.get("zdiff_target_ohm") is not None for c in classes)
    class_rows = [[c.get("name"), ", ".join(c.get("patterns", [])), f"{num(c.get('rise_time_ns'))} ns",
                   f"{num(c.get('swing_v'))} V", _budget_text(c, "next"), _budget_text(c, "fext"),
                   TERMINATION_WORDS.get(c.get("termination"), c.get("termination"))]
                  + ([_impedance_target(c)] if targets else []) for c in classes]
    pair_rows = []
    for rule in r.get("class_pairs", []):
        what = []
        if rule.get("next_budget_mv") is not None or rule.get("next_budget_pct") is not None:
            what.append(f"noise allowed: NEXT {_budget_text(rule, 'next')}, FEXT {_budget_text(rule, 'fext')}")
        if rule.get("max_parallel_mm") is not None:
            what.append(f"at most {rule['max_parallel_mm']:g} mm side by side within {rule['within_spacing_mm']:g} mm")
        pair_rows.append([rule.get("aggressor_class"), rule.get("victim_class"), "; ".join(what)])
    pairs = r.get("diff_pairs") or []
    extra = [("power and ground nets (never aggressor or victim)", ", ".join(r.get("power_patterns", [])) or "none"),
             ("differential pairs named in the rules", "; ".join(" / ".join(map(str, p)) for p in pairs) or "none"),
             ("planes named in the rules", ", ".join(r.get("planes", [])) or "none")]
    return Markup(tag("h3", "Rules in force", id="rules")
                  + tag("p", f"From {r.get('source', 'the built-in defaults')}.", class_="muted")
                  + tag("ul", [tag("li", sentence) for sentence in _scan_sentences(result)])
                  + tag("h4", "Net classes")
                  + tag("div", table(["class", "nets", "edge (10–90 %)", "swing", "near-end noise allowed",
                                      "far-end noise allowed", "victim's ends"]
                                     + (["impedance target"] if targets else []), class_rows), class_="scroll")
                  + (tag("h4", "Between classes") + table(["aggressor class", "victim class", "rule"], pair_rows)
                     if pair_rows else Markup(""))
                  + facts(extra))


def assumptions(result: ScanResult, has_drawing: bool) -> Markup:
    """The whole last section: model, board, stackup, rules, warnings and the caution."""
    warnings = tag("ul", [tag("li", w) for w in result.warnings]) if result.warnings else tag("p", "None.")
    return Markup(tag("h2", "Assumptions, stackup and rules", id="assumptions")
                  + tag("h3", "The model")
                  + tag("ul", [tag("li", i) for i in _model_sentences(result)])
                  + _stackup(result, has_drawing) + _board(result) + _rules(result)
                  + tag("h3", f"Warnings from reading and scanning ({len(result.warnings)})", id="warnings")
                  + warnings
                  + tag("p", [tag("strong", "Caution. "), esc(CAUTION)], class_="caution"))
