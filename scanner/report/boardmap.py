"""The page's interactive board map: an inline SVG of the copper per layer with a marker per coupled run.

Coordinates are board millimetres with y negated (SVG counts y downwards), so the
map is seen from the top like the overlay images. Copper is one path per layer
and trace width (traces) plus one path per layer for pads, vias and pours, with
coordinates rounded to ``DIGITS`` decimals; a run's victim and aggressor traces
sit in their layer's group so a layer toggle hides them too. Markers keep their
size on screen while zooming: the script sets ``--u`` (millimetres per screen
pixel) on the SVG and the markers scale by it. Everything the script shows
about a run comes from the JSON block beside the SVG (``id="map-data"``), which
is inert data, escaped for an HTML script element.

Markers exist for every listed finding's run and every broken geometric limit;
runs whose findings all pass and rank below ``PASS_SHOWN_TOP`` (marker and traces)
are hidden until a table row selects them.
"""
from __future__ import annotations

import json
from importlib import resources

import numpy as np
import shapely

from scanner.board.model import Board, TraceSegments
from scanner.report.labels import place_labels
from scanner.report.marks import PASS_SHOWN_TOP, geometric_label, role_segments
from scanner.report.view import detail_hotspots, fix_lines
from scanner.scoring.results import STATUS_ORDER, ScanResult

DIGITS = 3
#: outlines of pads and pours are simplified to within this many mm before they are written
SIMPLIFY_MM = 0.005
#: label placement happens at the whole-board view drawn this wide; label sizes in screen pixels
NOMINAL_WIDTH_PX = 900.0
LABEL_CHAR_PX, LABEL_HEIGHT_PX, MARKER_PX = 7.0, 14.0, 7.0
SIDE_SHAPE = {"top": "M-6 0a6 6 0 1 0 12 0a6 6 0 1 0-12 0Z", "inner": "M0-7L7 0L0 7L-7 0Z",
              "bottom": "M-5.5-5.5H5.5V5.5H-5.5Z"}


def _numbers(values: np.ndarray) -> np.ndarray:
    """Values as short decimal strings (at most DIGITS decimals, no trailing zeros)."""
    text = np.char.mod(f"%.{DIGITS}f", np.round(np.asarray(values, dtype=float), DIGITS))
    return np.char.rstrip(np.char.rstrip(text, "0"), ".")


def segments_path(s: TraceSegments) -> str:
    """``M x0 y0 L x1 y1`` for every segment (y negated)."""
    if len(s) == 0:
        return ""
    x0, y0, x1, y1 = (_numbers(v) for v in (s.x0, -np.asarray(s.y0), s.x1, -np.asarray(s.y1)))
    parts = np.char.add(np.char.add(np.char.add(np.char.add("M", x0), " "), y0),
                        np.char.add(np.char.add(np.char.add("L", x1), " "), y1))
    return "".join(parts.tolist())


def polygons_path(geometries) -> str:
    """Every ring of the polygons as ``M x y L x y ... Z`` (y negated); fill with the even-odd rule."""
    parts = shapely.get_parts(np.asarray(geometries, dtype=object))
    parts = parts[(shapely.get_type_id(parts) == 3) & ~shapely.is_empty(parts)]
    if len(parts) == 0:
        return ""
    parts = shapely.simplify(parts, SIMPLIFY_MM)
    parts = parts[~shapely.is_empty(parts)]
    if len(parts) == 0:
        return ""
    _, coords, (ring_offsets, _) = shapely.to_ragged_array(parts)
    xy = np.char.add(np.char.add(_numbers(coords[:, 0]), " "), _numbers(-coords[:, 1]))
    command = np.full(len(coords), "L", dtype="<U1")
    command[ring_offsets[:-1]] = "M"
    tokens = np.char.add(command, xy)
    ends = ring_offsets[1:] - 1
    tokens[ends] = np.char.add(tokens[ends], "Z")
    return "".join(tokens.tolist())


def _layer_group(board: Board, index: int, runs_here: list[tuple[int, str, TraceSegments, bool]]) -> str:
    layer = board.layers[index]
    paths = []
    shapes = layer.shapes
    if len(shapes):
        pour = shapes.role == "region"
        for mask, cls in ((pour, "cu-pour"), (~pour, "cu-pad")):
            d = polygons_path(shapes.geometry[mask])
            if d:
                paths.append(f'<path class="{cls}" d="{d}"/>')
    segments = layer.segments
    if len(segments):
        widths = np.round(np.asarray(segments.width, dtype=float), DIGITS)
        for w in np.unique(widths):
            d = segments_path(segments.select(widths == w))
            paths.append(f'<path class="cu-trace" stroke-width="{_numbers([max(w, 0.01)])[0]}" d="{d}"/>')
    for run, role, s, quiet in runs_here:
        width = _numbers([max(float(np.max(s.width)), 0.01)])[0]
        paths.append(f'<path class="run-{role}{" quiet" if quiet else ""}" data-run="{run}" style="--w:{width}px" '
                     f'd="{segments_path(s)}"/>')
    return f'<g class="layer side-{layer.side}" data-layer="{index}">' + "".join(paths) + "</g>"


def _outline(board: Board, bounds) -> str:
    if board.outline is not None and not board.outline.is_empty:
        d = polygons_path([board.outline])
        if d:
            return f'<path class="outline" d="{d}"/>'
    x0, y0, x1, y1 = bounds
    return (f'<rect class="outline extent" x="{x0:.3f}" y="{-y1:.3f}" width="{x1 - x0:.3f}" '
            f'height="{y1 - y0:.3f}"/>')


def _groups(result: ScanResult) -> dict[int, dict]:
    """Per coupled run: its findings (rank order) and broken limits, as the script shows them."""
    details = {h.run: h.rank for h in detail_hotspots(result)}
    runs: dict[int, dict] = {}
    for h in result.hotspots:
        entry = runs.setdefault(h.run, {"run": h.run, "x": h.x_mm, "y": h.y_mm, "first": h.rank, "items": []})
        entry["items"].append({
            "label": str(h.rank), "status": h.status, "victim": h.victim, "aggressor": h.aggressor,
            "classes": f"{h.victim_class} ← {h.aggressor_class}", "layers": "+".join(h.layers),
            "structure": h.structure, "length_mm": h.coupled_length_mm, "gap_mm": h.min_spacing_mm,
            "next_mv": h.next_mv, "fext_mv": h.fext_mv, "next_budget_mv": h.next_budget_mv,
            "fext_budget_mv": h.fext_budget_mv, "used_pct": round(h.budget_used_pct),
            "fix": fix_lines(h), "detail": f"finding-{details[h.run]}" if h.run in details else None,
            "quiet": h.status == "pass" and h.rank > PASS_SHOWN_TOP})
    for i, g in enumerate(result.geometric):
        entry = runs.setdefault(g.run, {"run": g.run, "x": g.x_mm, "y": g.y_mm,
                                        "first": len(result.hotspots) + 1 + i, "items": []})
        entry["items"].append({
            "label": geometric_label(i), "status": g.status, "victim": g.victim, "aggressor": g.aggressor,
            "classes": f"{g.victim_class} ← {g.aggressor_class}", "layers": "+".join(g.layers),
            "limit": f"{g.parallel_mm:.4g} mm side by side within {g.within_spacing_mm:g} mm; the rules allow "
                     f"{g.max_parallel_mm:g} mm", "gap_mm": g.min_spacing_mm, "quiet": False,
            "fix": [f"keep the side-by-side length within {g.within_spacing_mm:g} mm under {g.max_parallel_mm:g} mm, "
                    f"or space the nets wider than {g.within_spacing_mm:g} mm"]})
    for entry in runs.values():
        entry["status"] = min((it["status"] for it in entry["items"]), key=STATUS_ORDER.__getitem__)
        entry["quiet"] = all(it["quiet"] for it in entry["items"])
        entry["label"] = ",".join(it["label"] for it in entry["items"])
    return runs


def _label_offsets(entries: list[dict], view) -> np.ndarray:
    """(N, 2) label offsets from their markers in screen pixels, placed clear of each other and of the markers
    at the whole-board view (``scanner.report.labels``); zooming in only moves the markers further apart."""
    if not entries:
        return np.zeros((0, 2))
    scale = NOMINAL_WIDTH_PX / view[2]
    x = np.array([(e["x"] - view[0]) * scale for e in entries])
    y = np.array([(-e["y"] - view[1]) * scale for e in entries])
    width = np.array([LABEL_CHAR_PX * len(e["label"]) + 6.0 for e in entries])
    height = np.full(len(entries), LABEL_HEIGHT_PX)
    layout = place_labels(x, y, width, height, (0.0, 0.0, NOMINAL_WIDTH_PX, view[3] * scale), MARKER_PX)
    return np.column_stack([layout.x - x, layout.y - y])


def _mark(entry: dict, side: str, layers: list[str], title: str, offset) -> str:
    cls = f"mark st-{entry['status']}" + (" quiet" if entry["quiet"] else "")
    dx, dy = (f"{v:.1f}" for v in offset)
    return (f'<g class="{cls}" data-run="{entry["run"]}" data-layers="{" ".join(layers)}" '
            f'style="transform:translate({entry["x"]:.3f}px,{-entry["y"]:.3f}px) scale(var(--u))">'
            f"<title>{_escape(title)}</title>"
            f'<line class="leader" x1="0" y1="0" x2="{dx}" y2="{dy}"/>'
            f'<path class="shape" d="{SIDE_SHAPE.get(side, SIDE_SHAPE["top"])}"/>'
            f'<text x="{dx}" y="{dy}">{_escape(entry["label"])}</text></g>')


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def script_json(data) -> str:
    """JSON safe inside an HTML script element (no ``</script>``, no comment openers)."""
    return json.dumps(data, ensure_ascii=False, allow_nan=False).replace("<", "\\u003c").replace(">", "\\u003e") \
        .replace("&", "\\u0026")


def board_map(result: ScanResult, board: Board, bounds) -> tuple[str, str]:
    """(the map's SVG, its JSON data) for the page; ``bounds`` is the board's extent (mm)."""
    groups = _groups(result)
    carriers = {g.run: g for g in result.geometric}
    carriers.update({h.run: h for h in reversed(result.hotspots)})  # the run's first finding gives the roles
    per_layer: dict[int, list] = {k: [] for k in range(len(board.layers))}
    x0, y0, x1, y1 = bounds
    pad = 0.04 * max(x1 - x0, y1 - y0, 1.0)
    view = [round(v, 3) for v in (x0 - pad, -y1 - pad, x1 - x0 + 2 * pad, y1 - y0 + 2 * pad)]
    ordered = sorted(groups.values(), key=lambda e: (e["quiet"], e["first"]))
    offsets = dict(zip((e["run"] for e in ordered), _label_offsets(ordered, view)))
    marks = []
    for run, entry in groups.items():
        layers = result.runs.layers_of(run)
        for k in layers:
            victim, aggressor = role_segments(result, board, carriers[run], k)
            for role, idx in (("aggressor", aggressor), ("victim", victim)):
                if len(idx):
                    per_layer[k].append((run, role, board.layers[k].segments.select(idx), entry["quiet"]))
        entry["layer_names"] = [board.layers[k].name for k in layers]
        title = "\n".join(f"{it['label']} {it['victim']} ← {it['aggressor']}" for it in entry["items"])
        side = board.layers[int(result.runs.main_layer[run])].side
        marks.append(_mark(entry, side, [str(k) for k in layers], title, offsets[run]))
    shown = [k for k, layer in enumerate(board.layers) if layer.kind != "plane"]
    svg = (f'<svg id="map-svg" xmlns="http://www.w3.org/2000/svg" viewBox="{" ".join(f"{v:g}" for v in view)}" '
           f'preserveAspectRatio="xMidYMid meet" role="img" aria-label="Board map of {_escape(board.name)}, '
           f'seen from the top" tabindex="0">'
           f'<g id="map-board">{_outline(board, bounds)}</g>'
           + "".join(_layer_group(board, k, per_layer[k]) for k in shown)
           + '<g id="map-marks">' + "".join(marks) + "</g></svg>")
    data = {"view": view, "runs": {str(k): v for k, v in groups.items()},
            "layers": [{"index": k, "name": board.layers[k].name, "side": board.layers[k].side} for k in shown]}
    return svg, script_json(data)


def map_script() -> str:
    """The map's script, inlined into the page."""
    return resources.files("scanner.report").joinpath("boardmap.js").read_text(encoding="utf-8")
