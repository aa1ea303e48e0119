"""``nearfar stackup``: the stack in use drawn in the terminal, and each signal layer's impedances at the board's
own trace width and pair gap, to hold against the fabricator's impedance table."""
from __future__ import annotations

from pathlib import Path

import click

from scanner import load_board
from scanner.board.layerstack import BoardEnvironments, board_environments
from scanner.board.model import Board
from scanner.board.roles import assign_roles
from scanner.commands.options import stackup_option, stackup_override
from scanner.coupling.layer_impedance import GAP_FROM_PAIRS, SignalLayerRow, pair_pieces, signal_layer_table
from scanner.report.files import json_text
from scanner.rules import load_rules

CAUTION = ("Impedances are quasi-static field-solver estimates for the stackup shown. Compare them with the "
           "fabricator's impedance table: a clear mismatch means the stackup given is not the one built. Confirm "
           "critical lines by measurement (impedance coupons) and follow your organisation's own sign-off practice.")

SOURCE_WORDS = {"job-file": "from the Gerber job file", "odbpp-job": "from the ODB++ job",
                "rules": "from the rules file", "stackup-file": "from the stackup file",
                "board-file": "from the board file", "default": "ASSUMED, none given"}
#: drawing: rows per dielectric grow with its thickness, one per this many mm, at most DRAW_MAX_ROWS
DRAW_MM_PER_ROW = 0.15
DRAW_MAX_ROWS = 4
DRAW_WIDTH = 28
FILL = {"soldermask": "~", "dielectric": "·", "plane": "█"}


def stackup_data(board: Board, env: BoardEnvironments, rows: list[SignalLayerRow]) -> dict:
    """The stack, each signal layer's row and the warnings, as plain data (the ``--json`` output)."""
    stack = env.stackup
    items = []
    for s in stack.layers:
        item = {"kind": s.kind, "name": s.name, "thickness_mm": round(s.thickness_mm, 5), "epsilon_r": s.epsilon_r}
        if s.kind == "copper":
            item |= {"copper_layer": board.layers[s.copper_index].name,
                     "role": "plane" if s.copper_index in env.plane_layers else "signal"}
        items.append(item)
    return {"board": board.name, "format": board.format,
            "stackup": {"source": stack.source, "path": stack.path, "assumed": stack.source == "default",
                        "total_thickness_mm": round(stack.total_thickness_mm, 4), "layers": items},
            "layers": [row.to_dict() for row in rows],
            "warnings": list(env.warnings), "caution": CAUTION}


def _source_text(stack: dict) -> str:
    words = SOURCE_WORDS.get(stack["source"], stack["source"])
    return f"{words} {stack['path']}" if stack["path"] else words


def _drawing(data: dict) -> list[str]:
    by_name = {row["name"]: row for row in data["layers"]}
    lines = []
    for item in data["stackup"]["layers"]:
        thick = f"{item['thickness_mm']:.3f} mm"
        if item["kind"] == "copper":
            name, role = item["copper_layer"], item["role"]
            art = FILL["plane"] * DRAW_WIDTH if role == "plane" else ("▬▬▬  " * DRAW_WIDTH)[:DRAW_WIDTH]
            row = by_name.get(name)
            note = "reference plane" if role == "plane" else _layer_note(row)
            label = f"{name} {role}"
            lines.append(f"  {label:<14} {art}  {thick:>10}            {item['name']:<20} {note}".rstrip())
            continue
        er = f"er {item['epsilon_r']:.2f}"
        count = 1 if item["kind"] == "soldermask" else min(DRAW_MAX_ROWS, max(1, round(item["thickness_mm"] /
                                                                                          DRAW_MM_PER_ROW)))
        for k in range(count):
            text = f"{thick:>10}  {er:<9} {item['name']}" if k == 0 else ""
            lines.append(f"  {'':<14} {FILL[item['kind']] * DRAW_WIDTH}  {text}".rstrip())
    return lines


def _layer_note(row: dict | None) -> str:
    if row is None or row["height_mm"] is None:
        return "not scanned: no reference"
    refs = " and ".join(row["references"]) or "—"
    return f"{row['structure']}, reference {refs}"


def _num(value, fmt: str) -> str:
    return "-" if value is None else format(value, fmt)


def render_stackup(data: dict) -> str:
    stack = data["stackup"]
    copper = sum(item["kind"] == "copper" for item in stack["layers"])
    out = [f"stackup of {data['board']} ({_source_text(stack)}): {copper} copper layers, "
           f"{stack['total_thickness_mm']:.3f} mm", ""]
    if stack["assumed"]:
        out += ["!" * 78] + [f"warning: {w}" for w in data["warnings"] if w.startswith("NO STACKUP")] + ["!" * 78, ""]
    out += _drawing(data)
    out += ["", "signal layers: impedance at the board's own most used width and pair gap (field solver)"]
    header = ("layer", "structure", "references", "h mm", "h2 mm", "width mm", "Z0 ohm", "pair w mm", "gap mm",
              "Zdiff ohm", "gap from")
    rows = [(r["name"], r["structure"], ", ".join(r["references"]) or "-", _num(r["height_mm"], ".3f"),
             _num(r["height_second_mm"], ".3f"), _num(r["width_mm"], ".3f"), _num(r["z0_ohm"], ".1f"),
             _num(r["pair_width_mm"], ".3f"), _num(r["gap_mm"], ".3f"), _num(r["zdiff_ohm"], ".1f"),
             "pairs" if r["gap_source"] == GAP_FROM_PAIRS else ("assumed (= width)" if r["gap_source"] else "-"))
            for r in data["layers"]]
    widths = [max(len(str(x[i])) for x in rows + [header]) for i in range(len(header))]
    right = {3, 4, 5, 6, 7, 8, 9}
    for r in [header] + rows:
        out.append("  " + "  ".join(c.rjust(w) if i in right else c.ljust(w)
                                    for i, (c, w) in enumerate(zip(r, widths))).rstrip())
    out.append("  h: trace base to its (nearer) reference plane; h2: to the second plane of a stripline")
    others = [w for w in data["warnings"] if not w.startswith("NO STACKUP")]
    if others:
        out += [""] + [f"warning: {w}" for w in others]
    out += ["", f"caution: {data['caution']}"]
    return "\n".join(out)


@click.command("stackup")
@click.argument("board", type=click.Path(path_type=Path))
@stackup_option
@click.option("--rules", "rules_path", type=click.Path(path_type=Path), default=None,
              help="Rules file (TOML): its [stackup], named planes and differential-pair patterns are used.")
@click.option("--board-file", type=click.Path(path_type=Path), default=None,
              help="Board description (TOML) naming layers in stack order, planes and netlist.")
@click.option("--json", "as_json", is_flag=True, help="Print the stack and the per-layer table as JSON.")
def command(board, stackup_path, rules_path, board_file, as_json):
    """Draw the stackup nearfar uses for BOARD and give each signal layer's structure, reference planes, heights,
    and single-ended and differential impedance at the board's own most used trace width and pair gap.

    Hold the figures against the fabricator's impedance table: a mismatch means the stackup is wrong.
    """
    rules = load_rules(rules_path)
    override = stackup_override(stackup_path, rules.stackup)
    the_board = load_board(board, board_file=board_file)
    env = board_environments(the_board, override, rules.planes)
    roles = assign_roles(the_board.nets, rules)
    rows = signal_layer_table(the_board, env, pair_pieces(the_board, env.signal, roles.partner))
    data = stackup_data(the_board, env, rows)
    click.echo(json_text(data, "stackup --json", indent=2) if as_json else render_stackup(data), nl=not as_json)
    return 0
