"""Objects a file places off the board, and nets far below what the files promise.

A drill file or netlist in other units, or from another board, puts its holes or points
off the board; a copper file read at the wrong scale puts its copper far from the outline.
Each file's objects off the board are counted: a few give a warning, more than a small share
make the import incomplete (the verdict cannot be a pass), most of them refuse the file.
"""
from __future__ import annotations

from typing import Callable

import numpy as np
import shapely

from scanner.board.model import Board, CopperLayer
from scanner.errors import InputError
from scanner.importers.board_extent import copper_box

#: holes and netlist points further than this outside the board's box are off the board (mm)
OFF_BOARD_MARGIN_MM = 1.0
#: copper further outside the outline than the board's larger side (and at least this) is far off the board
FAR_COPPER_MIN_MM = 10.0
#: share of a file's objects off the board above which the import is incomplete
SMALL_SHARE = 0.1
#: share above which the file is refused (its units or its board are wrong)
MOST = 0.5
#: netlist points matched below this share make the import incomplete
NETLIST_MATCHED_SHARE = 0.5


def off_board(x: np.ndarray, y: np.ndarray, box: tuple[float, float, float, float], margin_mm: float) -> np.ndarray:
    x0, y0, x1, y1 = box
    return (x < x0 - margin_mm) | (x > x1 + margin_mm) | (y < y0 - margin_mm) | (y > y1 + margin_mm)


def check_on_board(board_warnings: list[str], incomplete: list[str], x: np.ndarray, y: np.ndarray, box,
                   file: str, what: str, first_at: Callable[[int], str], margin_mm: float = OFF_BOARD_MARGIN_MM,
                   refuse_above: float = MOST) -> None:
    """Count ``what`` of ``file`` at (x, y) off the board ``box``: refuse the file when all or more than
    ``refuse_above`` of them are, add a reason to ``incomplete`` above :data:`SMALL_SHARE`, and a warning for any."""
    if box is None or not len(x):
        return
    off = off_board(np.asarray(x), np.asarray(y), box, margin_mm)
    count = int(off.sum())
    if not count:
        return
    share = count / len(off)
    x0, y0, x1, y1 = box
    said = (f"{count} of {len(off)} {what} lie off the board (x {x0:.3f} to {x1:.3f} mm, y {y0:.3f} to "
            f"{y1:.3f} mm), the first {first_at(int(np.flatnonzero(off)[0]))}")
    if share > refuse_above or count == len(off):
        raise InputError(f"{said}; are its units wrong, or is it another board's file?", path=file)
    board_warnings.append(f"{file}: {said}")
    if share > SMALL_SHARE:
        incomplete.append(f"{file}: {100 * share:.0f} % of its {what} lie off the board (wrong units, or another "
                          "board's file?)")


def at_mm(x: np.ndarray, y: np.ndarray) -> Callable[[int], str]:
    return lambda k: f"at ({float(x[k]):.3f}, {float(y[k]):.3f}) mm"


def far_mm(box: tuple[float, float, float, float]) -> float:
    """How far outside ``box`` is far off the board: the board's larger side, at least FAR_COPPER_MIN_MM."""
    return max(FAR_COPPER_MIN_MM, box[2] - box[0], box[3] - box[1])


def check_holes_on_board(board_warnings: list[str], incomplete: list[str], x: np.ndarray, y: np.ndarray,
                         file: str, layers: list[CopperLayer], outline) -> None:
    """Holes of one drill file against the outline; without one, against the copper's extent, where only holes
    far from it count (mounting holes often sit beyond the copper)."""
    box = copper_box(layers, outline)
    if box is None:
        return
    margin = OFF_BOARD_MARGIN_MM if outline is not None and not outline.is_empty else far_mm(box)
    check_on_board(board_warnings, incomplete, x, y, box, file, "holes", at_mm(x, y), margin_mm=margin)


def check_copper_on_board(board_warnings: list[str], incomplete: list[str], layer: CopperLayer, outline) -> None:
    """Copper objects far outside the outline (further out than the board's size): a warning; more than a
    small share of the layer, a problem with the file; all of them, refused. Nothing to compare without an
    outline (film frames and title blocks lie nearer than that, and are left for the outline's own check)."""
    if outline is None or outline.is_empty:
        return
    s = layer.segments
    centres = shapely.centroid(layer.shapes.geometry) if len(layer.shapes) else np.zeros(0, dtype=object)
    x = np.concatenate([(s.x0 + s.x1) / 2, shapely.get_x(centres)])
    y = np.concatenate([(s.y0 + s.y1) / 2, shapely.get_y(centres)])
    box = tuple(float(v) for v in outline.bounds)
    check_on_board(board_warnings, incomplete, x, y, box, layer.path or layer.name,
                   f"copper objects of layer {layer.name}", at_mm(x, y), margin_mm=far_mm(box), refuse_above=1.0)


def check_netting(board: Board, names_promised: str | None = None) -> None:
    """A loud warning, and a reason the import is incomplete, when the nets fall far below what the files
    promise: a netlist matching under half its points, or named nets promised (``names_promised`` says by
    what) and no trace carrying one."""
    n = board.netting
    if n is None:
        return
    reasons = []
    if n.netlist_points_total and n.netlist_points_matched < NETLIST_MATCHED_SHARE * n.netlist_points_total:
        reasons.append(f"the netlist matched only {n.netlist_points_matched} of its {n.netlist_points_total} points "
                       "to copper of their own net: the nets cannot be trusted (another board's netlist, or other "
                       "units?)")
    traces = any(len(layer.segments) for layer in board.layers)
    if names_promised and traces and n.netted_trace_fraction == 0:
        reasons.append(f"{names_promised} names nets, but no trace carries one: the nets cannot be trusted")
    for reason in reasons:
        board.warnings.append(f"NETS INCOMPLETE: {reason}")
        board.incomplete.append(reason)
