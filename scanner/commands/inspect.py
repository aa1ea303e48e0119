"""``nearfar inspect``: what nearfar read from a board's files, before any scan."""
from __future__ import annotations

import dataclasses
from pathlib import Path

import click

from scanner import load_board
from scanner.board.layerstack import board_environments, describe_default, effective_stackup
from scanner.board.model import Board
from scanner.board.references import describe_reference, plane_evidence
from scanner.commands.options import stackup_option, stackup_override
from scanner.errors import InputError
from scanner.pipeline import board_roles
from scanner.rules import Rules, load_rules
from scanner.report.files import json_text

#: faults, pairs and nets quoted on the terminal (all of them are in --json)
SHOWN_FAULTS = 10
SHOWN_PAIRS = 40
SHOWN_NETS = 60


def inspect_data(board: Board, rules: Rules | None = None) -> dict:
    """The board summary as plain data (the ``--json`` output): layers, stackup, netting, and every net with
    its class, role and differential partner as a scan with these rules would take them."""
    netting = board.netting
    references = layer_references(board)
    roles = board_roles(board, rules)
    return {
        "name": board.name,
        "source": board.source,
        "format": board.format,
        "layers": [{
            "name": layer.name, "index": layer.index, "side": layer.side, "kind": layer.kind,
            "kind_source": layer.kind_source, "file": layer.path, "segments": len(layer.segments),
            "shapes": len(layer.shapes), "trace_length_mm": round(layer.trace_length_mm, 3),
            "fill_ratio": None if layer.fill_ratio is None else round(layer.fill_ratio, 4),
            "kind_evidence": layer.kind_evidence,
            "reference": references[layer.index][0], "reference_evidence": references[layer.index][1],
        } for layer in board.layers],
        "outline_mm2": None if board.outline is None else round(float(board.outline.area), 3),
        "left_out": {"objects": board.left_out.objects, "trace_length_mm": round(board.left_out.trace_length_mm, 3),
                     "layers": list(board.left_out.layers)},
        "incomplete": list(board.incomplete),
        "nets": len(board.nets),
        "holes": {"plated": int(board.holes.plated.sum()), "non_plated": int((~board.holes.plated).sum())},
        "stackup": [] if board.stackup is None else [{
            "kind": s.kind, "name": s.name, "thickness_mm": s.thickness_mm, "epsilon_r": s.epsilon_r,
            "copper_index": s.copper_index} for s in board.stackup.layers],
        "stackup_source": None if board.stackup is None else board.stackup.source,
        "stackup_path": None if board.stackup is None else board.stackup.path,
        "stackup_assumed": describe_default(len(board.layers)) if board.stackup is None and board.layers else None,
        "netting": None if netting is None else {
            "method": netting.method,
            "netted_trace_fraction": round(netting.netted_trace_fraction, 6),
            "netlist_points_matched": netting.netlist_points_matched,
            "netlist_points_total": netting.netlist_points_total,
            "copper_islands": netting.islands,
            "synthetic_nets": netting.synthetic_nets,
            "shorts": [_fault(f) for f in netting.shorts],
            "opens": [_fault(f) for f in netting.opens],
        },
        "pairs": roles.pairs(board.nets),
        "net_list": roles.net_table(board.nets),
        "warnings": list(roles.warnings) + list(board.warnings),
    }


def layer_references(board: Board) -> list[tuple[str, str | None]]:
    """Per copper layer, what a scan without rules would reference its traces to, and the evidence."""
    try:
        env = board_environments(board, None)
    except InputError as exc:
        return [(f"unknown: {exc.message}", None)] * len(board.layers)
    out = []
    for layer in board.layers:
        if layer.index in env.signal:
            words = describe_reference(board, env.signal[layer.index], env.plane_layers)
            out.append((words.reference, words.evidence))
        elif layer.index in env.plane_layers:
            out.append(("reference plane, no traces on it", plane_evidence(board, layer.index, env.plane_layers)))
        else:
            out.append((f"not scanned: {env.skipped.get(layer.index)}", None))
    return out


def _fault(f) -> dict:
    return {"nets": list(f.nets), "x_mm": round(f.x_mm, 4), "y_mm": round(f.y_mm, 4), "layer": f.layer,
            "detail": f.detail}


def _table(header: tuple, rows: list[tuple], right: set[int]) -> list[str]:
    widths = [max(len(str(r[i])) for r in rows + [header]) for i in range(len(header))]
    return ["  ".join(str(c).rjust(w) if i in right else str(c).ljust(w)
                      for i, (c, w) in enumerate(zip(r, widths))).rstrip() for r in [header] + rows]


def render_inspect(data: dict, all_nets: bool = False) -> str:
    out = [f"board {data['name']} ({data['format']}) from {data['source']}", ""]
    rows = [(l["name"], l["side"], l["kind"], l["kind_source"], l["segments"], f"{l['trace_length_mm']:.1f}",
             l["shapes"], "-" if l["fill_ratio"] is None else f"{100 * l['fill_ratio']:.0f}%",
             Path(l["file"] or "").name) for l in data["layers"]]
    out += _table(("layer", "side", "use", "decided by", "traces", "length mm", "shapes", "poured", "file"),
                  rows, {4, 5, 6, 7})
    out += ["", "why each layer is a plane or a signal layer:"]
    out += [f"  {l['name']}: {l['kind_evidence']}" for l in data["layers"] if l["kind_evidence"]]
    outline = data["outline_mm2"]
    out += ["", f"outline: {'none read; the board extent comes from drill hits and copper' if outline is None else f'{outline:.0f} mm2'}"]
    if data["left_out"]["objects"]:
        left = data["left_out"]
        out.append(f"left out (outside the board): {left['objects']} objects, {left['trace_length_mm']:.0f} mm of "
                   f"draws on {', '.join(left['layers'])}")
    if data["incomplete"]:
        out += ["incomplete import:"] + [f"  {reason}" for reason in data["incomplete"]]
    out += ["", "references (from the board's stackup, or the default one; a rules file can change them):"]
    out += [f"  {l['name']}: {l['reference']}" + (f" ({l['reference_evidence']})" if l["reference_evidence"] else "")
            for l in data["layers"]]
    holes = data["holes"]
    out += ["", f"nets: {data['nets']}    holes: {holes['plated']} plated, {holes['non_plated']} non-plated"]
    if data["stackup"]:
        path = f", {data['stackup_path']}" if data.get("stackup_path") else ""
        out += ["", f"stackup ({data['stackup_source']}{path}):"]
        srows = [(s["kind"], s["name"], f"{s['thickness_mm']:.4f}",
                  "" if s["epsilon_r"] is None else f"{s['epsilon_r']:.2f}") for s in data["stackup"]]
        out += ["  " + line for line in _table(("material", "name", "thick mm", "eps_r"), srows, {2, 3})]
    else:
        out += ["", "stackup: none in the files; a scan assumes a typical build, "
                    f"{data['stackup_assumed']} (give the real one with --stackup FILE or in the rules file)"]
    n = data["netting"]
    if n:
        out += ["", f"netting by {n['method']}: {100 * n['netted_trace_fraction']:.1f}% of trace length carries a "
                    f"named net; netlist points matched {n['netlist_points_matched']}/{n['netlist_points_total']}; "
                    f"{n['copper_islands']} copper islands, {n['synthetic_nets']} without a name",
                f"shorts: {len(n['shorts'])}    opens: {len(n['opens'])}"]
        for kind in ("shorts", "opens"):
            for f in n[kind][:SHOWN_FAULTS]:
                out.append(f"  {kind[:-1]}: {', '.join(f['nets'])} at ({f['x_mm']:.3f}, {f['y_mm']:.3f}) mm"
                           f"{' on ' + f['layer'] if f['layer'] else ''}: {f['detail']}")
            if len(n[kind]) > SHOWN_FAULTS:
                out.append(f"  ... {len(n[kind]) - SHOWN_FAULTS} more {kind} (see --json)")
    out += _pair_lines(data["pairs"]) + _net_lines(data["net_list"], all_nets)
    if data["warnings"]:
        out += ["", "warnings:"] + [f"  {w}" for w in data["warnings"]]
    return "\n".join(out)


def _pair_lines(pairs: list[dict]) -> list[str]:
    if not pairs:
        return ["", "differential pairs: none"]
    out = ["", f"differential pairs ({len(pairs)}; never scored against each other):"]
    out += ["  " + line for line in _table(("positive", "negative", "found by"),
                                           [(p["p"], p["n"], p["source"]) for p in pairs[:SHOWN_PAIRS]], set())]
    if len(pairs) > SHOWN_PAIRS:
        out.append(f"  ... {len(pairs) - SHOWN_PAIRS} more pairs (see --json)")
    return out


def _net_lines(nets: list[dict], all_nets: bool) -> list[str]:
    shown = nets if all_nets else nets[:SHOWN_NETS]
    rows = [(n["name"], n["class"], n["role"], "" if n["pair"] is None else f"{n['pair']} ({n['pair_source']})")
            for n in shown]
    out = ["", f"nets ({len(nets)}):"] + ["  " + line for line in _table(("net", "class", "role", "pair"), rows, set())]
    if len(nets) > len(shown):
        out.append(f"  ... {len(nets) - len(shown)} more nets (--all-nets, or see --json)")
    return out


@click.command("inspect")
@click.argument("board", type=click.Path(path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the summary as JSON instead of tables.")
@click.option("--board-file", type=click.Path(path_type=Path), default=None,
              help="Board description (TOML): copper files in stack order, planes, netlist, drills.")
@click.option("--rules", "rules_path", type=click.Path(path_type=Path), default=None,
              help="Rules file (TOML) whose classes, power nets and pairs to apply; defaults without one.")
@click.option("--all-nets", is_flag=True, help=f"List every net on the terminal (the first {SHOWN_NETS} otherwise).")
@click.option("--step", default=None, metavar="NAME", help="The step of an ODB++ job to read, when it has several.")
@stackup_option
def command(board, as_json, board_file, rules_path, all_nets, stackup_path, step):
    """Show what nearfar reads from BOARD (a folder, .zip, or ODB++ job .tgz): copper layers in stack order, planes
    and the evidence for each, the outline, copper left out, nets with their class, role and differential partner, stackup, how well the copper matched the netlist, and
    warnings (parser warnings, rules patterns that match no net). With --stackup, the stackup shown is the file's
    (checked against the board's copper layers)."""
    rules = load_rules(rules_path)
    the_board = load_board(board, board_file=board_file, step=step)
    if stackup_path is not None:
        stackup, _ = effective_stackup(the_board, stackup_override(stackup_path))
        the_board = dataclasses.replace(the_board, stackup=stackup)
    data = inspect_data(the_board, rules)
    click.echo(json_text(data, "inspect --json", indent=2) if as_json else render_inspect(data, all_nets),
               nl=not as_json)
    return 0
