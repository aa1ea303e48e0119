"""Hostile and broken board inputs, written by code into a folder the test gives (no binary files in the repository).

``write_board`` lays down a small valid board: two copper layers (X2, or X1 with an
IPC-D-356A netlist), a drill file, a profile and a job file with the stackup. Each
entry of ``CASES`` damages one part of it (or builds an archive, a rules or board file)
and says which file the one-line error must name, and on which line where that is
known. Each entry of ``RECOVERABLE`` damages an optional part (the profile, a silkscreen,
the job file, a drill file, which leaves the import incomplete): the board still loads
and a warning names what was left out.
"""
from __future__ import annotations

import json
import os
import stat
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from tests.importers_odbpp import jobs

# ---------------------------------------------------------------------------------------- a valid board

TOP_FILE = "board-F_Cu.gbr"
BOTTOM_FILE = "board-B_Cu.gbr"
PROFILE_FILE = "board-Edge_Cuts.gbr"
SILK_FILE = "board-F_SilkS.gbr"
DRILL_FILE = "board-PTH.drl"
NETLIST_FILE = "board.ipc"
JOB_FILE = "board.gbrjob"
RULES_FILE = "rules.toml"

#: Gerber header lines (mm, 4.6 format); X2 files put a .FileFunction line in front
HEADER = ["G04 hostile corpus*", "%FSLAX46Y46*%", "%MOMM*%", "%LPD*%", "%ADD10C,0.150000*%",
          "%ADD11C,0.600000*%", "G01*"]
#: the two nets of the top layer and the y of their traces (mm)
TRACES = (("CLK", 10.0), ("DATA", 10.3))


def mm(v: float) -> str:
    """A coordinate in the 4.6 format of ``HEADER``."""
    return str(int(round(v * 1e6)))


def _net(name: str, body: list[str], x2: bool) -> list[str]:
    return ([f"%TO.N,{name}*%"] + body + ["%TD*%"]) if x2 else body


def top_lines(x2: bool = True) -> list[str]:
    """Two 39 mm traces 0.3 mm apart (CLK and DATA), a pad at each start and a via land at each end."""
    body = []
    for name, y in TRACES:
        body += _net(name, ["D10*", f"X{mm(1)}Y{mm(y)}D02*", f"X{mm(40)}Y{mm(y)}D01*",
                            "D11*", f"X{mm(1)}Y{mm(y)}D03*", f"X{mm(40)}Y{mm(y)}D03*"], x2)
    head = ["%TF.FileFunction,Copper,L1,Top,Signal*%"] if x2 else []
    return head + HEADER + body + ["M02*"]


def region(points: list[tuple[float, float]]) -> list[str]:
    """A G36/G37 region through ``points`` (give the first point again at the end to close it)."""
    return (["G36*", f"X{mm(points[0][0])}Y{mm(points[0][1])}D02*"]
            + [f"X{mm(x)}Y{mm(y)}D01*" for x, y in points[1:]] + ["G37*"])


BOARD_CORNERS = [(0, 0), (50, 0), (50, 20), (0, 20), (0, 0)]


def bottom_lines(x2: bool = True) -> list[str]:
    """A ground pour over the whole board, with the two via lands."""
    body = _net("GND", region(BOARD_CORNERS), x2)
    for name, y in TRACES:
        body += _net(name, ["D11*", f"X{mm(40)}Y{mm(y)}D03*"], x2)
    head = ["%TF.FileFunction,Copper,L2,Bot,Plane*%"] if x2 else []
    return head + HEADER + body + ["M02*"]


def rich_lines() -> list[str]:
    """A copper layer using more of the format, as a base for random damage: arcs, a macro, rectangle,
    obround and polygon apertures, a region with an arc edge, clear polarity, step and repeat."""
    return ["%TF.FileFunction,Copper,L1,Top,Signal*%"] + HEADER[:4] + [
        "%AMTRI*4,1,3,0,0,1,0,0.5,0.8,0,0,0*%", "%AMRR*21,1,$1,$2,0,0,0*1,1,$3,0,0*%",
        "%ADD10C,0.150000*%", "%ADD12R,0.6X0.4*%", "%ADD13O,0.8X0.4*%", "%ADD14P,0.9X6X30*%",
        "%ADD15TRI*%", "%ADD16RR,1.2X0.6X0.3*%", "G75*",
        "%TO.N,ARC*%", "D10*", f"X{mm(5)}Y{mm(5)}D02*", "G02*", f"X{mm(9)}Y{mm(5)}I{mm(2)}J0D01*",
        "G03*", f"X{mm(13)}Y{mm(5)}I{mm(2)}J0D01*", "G01*", f"X{mm(13)}Y{mm(9)}D01*", "%TD*%",
        "%TO.N,PADS*%", "D12*", f"X{mm(20)}Y{mm(5)}D03*", "D13*", f"X{mm(22)}Y{mm(5)}D03*",
        "D14*", f"X{mm(24)}Y{mm(5)}D03*", "D15*", f"X{mm(26)}Y{mm(5)}D03*", "D16*", f"X{mm(28)}Y{mm(5)}D03*",
        "%TD*%", "%TO.N,POUR*%", "G36*", f"X{mm(30)}Y0D02*", f"X{mm(40)}Y0D01*", "G03*",
        f"X{mm(40)}Y{mm(10)}I0J{mm(5)}D01*", "G01*", f"X{mm(30)}Y{mm(10)}D01*", f"X{mm(30)}Y0D01*", "G37*",
        "%TD*%", "%LPC*%", "D12*", f"X{mm(35)}Y{mm(5)}D03*", "%LPD*%",
        "%SRX3Y2I1.0J1.5*%", "D10*", f"X{mm(1)}Y{mm(15)}D02*", f"X{mm(1.5)}Y{mm(15)}D01*", "%SR*%", "M02*"]


def profile_lines() -> list[str]:
    first = BOARD_CORNERS[0]
    return (["%TF.FileFunction,Profile,NP*%"] + HEADER + ["D10*", f"X{mm(first[0])}Y{mm(first[1])}D02*"]
            + [f"X{mm(x)}Y{mm(y)}D01*" for x, y in BOARD_CORNERS[1:]] + ["M02*"])


def drill_lines() -> list[str]:
    return ["M48", "; #@! TF.FileFunction,Plated,1,2,PTH", "METRIC", "T1C0.300", "%", "G05", "T1",
            "X40.000Y10.000", "X40.000Y10.300", "M30"]


def netlist_point(code: int, net: str, x: float, y: float, access: int, hole: str = "") -> str:
    """One IPC-D-356A test record in CUST 1 units (0.001 mm)."""
    hole_field = f"D{hole}P" if hole else " " * 6
    return (f"{code}{net:<14}   {'U1':<6}-{'1':<4} {hole_field}A{access:02d}"
            f"X{int(round(x * 1000)):+07d}Y{int(round(y * 1000)):+07d}X0600Y0600R000 S0")


NETLIST_HEADER = ["C  hostile corpus netlist", "P  JOB   HOSTILE", "P  UNITS CUST 1"]


def netlist_lines() -> list[str]:
    """A surface point at each trace start and a through point at each via."""
    return NETLIST_HEADER + [netlist_point(327, n, 1, y, 1) for n, y in TRACES] + \
        [netlist_point(317, n, 40, y, 0, "0300") for n, y in TRACES] + ["999"]


def job_data() -> dict:
    return {"Header": {"GenerationSoftware": {"Application": "hostile corpus"}},
            "FilesAttributes": [{"Path": TOP_FILE, "FileFunction": "Copper,L1,Top,Signal"},
                                {"Path": BOTTOM_FILE, "FileFunction": "Copper,L2,Bot,Plane"}],
            "MaterialStackup": [{"Type": "SolderMask", "Name": "top mask", "Thickness": 0.02,
                                 "DielectricConstant": 3.8},
                                {"Type": "Copper", "Name": "top", "Thickness": 0.035},
                                {"Type": "Dielectric", "Name": "core", "Thickness": 0.2, "DielectricConstant": 4.2},
                                {"Type": "Copper", "Name": "bottom", "Thickness": 0.035}]}


RULES_LINES = [
    "[scan]", "search_distance_mm = 0.8", "min_coupled_length_mm = 1.0", "",
    "[[class]]", 'name = "clocks"', 'nets = ["CLK*"]', "rise_time_ns = 0.5", "swing_v = 3.3",
    "next_budget_pct = 4", "fext_budget_pct = 4", 'termination = "matched"', "",
    "[[class]]", 'name = "data"', 'nets = ["DATA*"]', "rise_time_ns = 2.0", "swing_v = 1.8",
    "next_budget_mv = 60", "fext_budget_mv = 60", "",
    "[power]", 'nets = ["GND"]', "",
    "[[diff_pair]]", 'positive = "*_P"', 'negative = "*_N"', "",
    "[[class_pair]]", 'aggressor_class = "clocks"', 'victim_class = "data"', "max_parallel_mm = 10.0",
    "within_spacing_mm = 0.5", "",
    "[stackup]", "layers = [",
    '  { kind = "soldermask", thickness_mm = 0.02, epsilon_r = 3.8 },',
    '  { kind = "copper", thickness_mm = 0.035 },',
    '  { kind = "dielectric", thickness_mm = 0.2, epsilon_r = 4.2 },',
    '  { kind = "copper", thickness_mm = 0.035 },', "]",
]


def write_lines(path: Path, lines: list[str]) -> Path:
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def write_board(folder: Path, x2: bool = True) -> Path:
    """The valid board: X2 with a job file, or X1 with an IPC-D-356A netlist (and the same job file)."""
    folder.mkdir(parents=True, exist_ok=True)
    write_lines(folder / TOP_FILE, top_lines(x2))
    write_lines(folder / BOTTOM_FILE, bottom_lines(x2))
    write_lines(folder / PROFILE_FILE, profile_lines())
    write_lines(folder / DRILL_FILE, drill_lines())
    (folder / JOB_FILE).write_text(json.dumps(job_data(), indent=1), encoding="utf-8")
    if not x2:
        write_lines(folder / NETLIST_FILE, netlist_lines())
    return folder


# ---------------------------------------------------------------------------------------- what a case expects


@dataclass(frozen=True)
class Case:
    """A board the command must refuse: run ``nearfar <command> target *args``.

    ``names`` must appear in the error line (the file it blames), ``line`` is the line
    number it must give when known, ``says`` a phrase that tells what is wrong.
    """

    target: Path
    names: str
    says: str
    line: int | None = None
    args: tuple[str, ...] = ()


@dataclass(frozen=True)
class Recoverable:
    """A board that loads without one optional part: a warning naming ``names`` and saying ``says``."""

    target: Path
    names: str
    says: str


CASES: dict[str, Callable[[Path], Case]] = {}
RECOVERABLE: dict[str, Callable[[Path], Recoverable]] = {}


def case(fn):
    CASES[fn.__name__] = fn
    return fn


def recoverable(fn):
    RECOVERABLE[fn.__name__] = fn
    return fn


def index_of(lines: list[str], start: str) -> int:
    """0-based index of the first line starting with ``start``."""
    return next(i for i, line in enumerate(lines) if line.startswith(start))


def board_with_bytes(tmp: Path, file: str, data: bytes, x2: bool = True) -> Path:
    """The valid board with ``file`` replaced by (or added as) ``data``."""
    board = write_board(tmp / "board", x2)
    (board / file).write_bytes(data)
    return board


def board_with(tmp: Path, file: str, lines: list[str], x2: bool = True) -> Path:
    """The valid board with ``file`` replaced by ``lines``."""
    return board_with_bytes(tmp, file, ("\n".join(lines) + "\n").encode(), x2)


def top_with(tmp: Path, at: str, new: list[str], replace: bool = False) -> tuple[Path, int]:
    """The board with ``new`` inserted before (or in place of) the first top-layer line starting with ``at``;
    returns the board and the 1-based number of the first new line."""
    lines = top_lines()
    i = index_of(lines, at)
    lines[i:i + int(replace)] = new
    return board_with(tmp, TOP_FILE, lines), i + 1


def top_case(tmp: Path, at: str, new: list[str], says: str, replace: bool = False, line_of: int = 0) -> Case:
    """A case whose top layer gets ``new`` lines (see ``top_with``); the error is expected on new line
    number ``line_of`` (counted from 0)."""
    board, line = top_with(tmp, at, new, replace)
    return Case(board, TOP_FILE, says, line=line + line_of)


# ---------------------------------------------------------------------------------------- empty and garbage


@case
def empty_copper_file(tmp):
    return Case(board_with_bytes(tmp, TOP_FILE, b""), TOP_FILE, "empty")


@case
def binary_garbage_copper_file(tmp):
    return Case(board_with_bytes(tmp, TOP_FILE, bytes(range(256)) * 16), TOP_FILE, "not a readable")


@recoverable
def empty_drill_file(tmp):
    return Recoverable(board_with_bytes(tmp, DRILL_FILE, b""), DRILL_FILE, "empty")


@case
def garbage_netlist(tmp):
    noise = os.urandom(2048).replace(b"\n", b" ")
    return Case(board_with_bytes(tmp, NETLIST_FILE, noise, x2=False), NETLIST_FILE, "not a readable")


@recoverable
def empty_job_file(tmp):
    return Recoverable(board_with_bytes(tmp, JOB_FILE, b""), f"{JOB_FILE}:1", "not valid JSON")


@case
def empty_folder(tmp):
    (tmp / "board").mkdir()
    return Case(tmp / "board", "board", "no files")


@case
def only_garbage_files(tmp):
    board = tmp / "board"
    board.mkdir()
    (board / "noise.bin").write_bytes(os.urandom(4096))
    return Case(board, "board", "no importer")


# ---------------------------------------------------------------------------------------- damaged Gerber


@case
def truncated_mid_block(tmp):
    lines = top_lines()
    cut = index_of(lines, f"X{mm(40)}")
    board = board_with(tmp, TOP_FILE, lines[:cut] + [lines[cut][:7]])
    return Case(board, TOP_FILE, "M02")


@case
def truncated_mid_macro(tmp):
    lines = top_lines()
    cut = index_of(lines, "G01*")
    board = board_with(tmp, TOP_FILE, lines[:cut] + ["%AMPAD*", "1,1,0.5,0,0*", "21,1,0.8,0.4,"])
    return Case(board, TOP_FILE, "truncated")


@case
def missing_end_marker(tmp):
    return Case(board_with(tmp, TOP_FILE, top_lines()[:-1]), TOP_FILE, "M02")


@case
def undefined_aperture(tmp):
    return top_case(tmp, "D10*", ["D77*"], "undefined aperture 77", replace=True)


@case
def bad_aperture_macro(tmp):
    return top_case(tmp, "G01*", ["%AMBROKEN*1,1,$1,0,0,zz*%", "%ADD20BROKEN,0.5*%"], "unreadable Gerber")


@case
def polygon_aperture_with_a_million_vertices(tmp):
    return top_case(tmp, "G01*", ["%ADD20P,1X1000000*%"], "polygon vertices")


@case
def macro_polygon_with_a_million_vertices(tmp):
    macro = ["%AMMANY*5,1,$1,0,0,1,0*%", "%ADD20MANY,1000000*%"]
    return top_case(tmp, "G01*", macro, "polygon vertices", line_of=1)


@case
def thermal_with_inner_beyond_outer(tmp):
    """A thermal (code 7) whose inner diameter exceeds its outer one is no shape: refused naming the aperture."""
    thermal = ["%AMTHERM*7,0,0,0.6,1.0,0.2,45*%", "%ADD20THERM*%"]
    return top_case(tmp, "G01*", thermal, "D20 cannot be drawn", line_of=1)


@case
def absurd_coordinate(tmp):
    return top_case(tmp, f"X{mm(40)}", [f"X{mm(1e9)}Y{mm(10)}D01*"], "beyond the limit", replace=True)


@case
def absurd_arc_centre(tmp):
    arc = ["D10*", "G75*", f"X{mm(5)}Y{mm(5)}D02*", "G02*", f"X{mm(5)}Y{mm(5)}I{mm(1e9)}J0D01*", "G01*"]
    return top_case(tmp, "M02*", arc, "beyond the limit", line_of=4)


@case
def absurd_aperture(tmp):
    return top_case(tmp, "G01*", ["%ADD20C,1000000000*%"], "outside the aperture size range")


@case
def missing_units(tmp):
    board = board_with(tmp, TOP_FILE, [line for line in top_lines() if not line.startswith("%MO")])
    return Case(board, TOP_FILE, "unit")


@case
def mixed_units(tmp):
    return top_case(tmp, "%TO.N,DATA", ["%MOIN*%"], "unit changed")


@case
def old_style_unit_change(tmp):
    return top_case(tmp, "%TO.N,DATA", ["G70*"], "unit changed")


@case
def format_without_digits(tmp):
    """%FSLAX00Y00*% would read every coordinate at another scale."""
    return top_case(tmp, "%FSLAX46Y46*%", ["%FSLAX00Y00*%"], "coordinate format 0.0 is not usable", replace=True)


@case
def format_differs_for_x_and_y(tmp):
    return top_case(tmp, "%FSLAX46Y46*%", ["%FSLAX46Y36*%"], "differs for X", replace=True)


@case
def format_changed_after_coordinates(tmp):
    return top_case(tmp, "%TO.N,DATA", ["%FSLAX24Y24*%"], "coordinate format changed from 4.6 to 2.4")


@recoverable
def negative_image_polarity(tmp):
    board, _ = top_with(tmp, "%LPD*%", ["%IPNEG*%"])
    return Recoverable(board, TOP_FILE, "negative image")


@case
def region_with_flash_inside(tmp):
    lines = bottom_lines()
    lines.remove("G37*")
    board = board_with(tmp, BOTTOM_FILE, lines)
    return Case(board, BOTTOM_FILE, "inside region", line=index_of(lines, f"X{mm(40)}") + 1)


@case
def region_never_closes(tmp):
    lines = bottom_lines()
    lines[-1:-1] = ["G36*", f"X{mm(60)}Y0D02*", f"X{mm(70)}Y{mm(10)}D01*"]
    board = board_with(tmp, BOTTOM_FILE, lines)
    return Case(board, BOTTOM_FILE, "G36 without its G37", line=len(lines))


@case
def graphics_after_end_marker(tmp):
    lines = top_lines() + top_lines()
    board = board_with(tmp, TOP_FILE, lines)
    return Case(board, TOP_FILE, "after the M02", line=len(top_lines()) + index_of(top_lines(), f"X{mm(40)}") + 1)


@case
def step_and_repeat_bomb(tmp):
    repeat = ["%SRX100000Y100000I1J1*%", "D11*", f"X{mm(1)}Y{mm(1)}D03*", "%SR*%"]
    return top_case(tmp, "M02*", repeat, "step-and-repeat copies")


@case
def copper_layer_missing_from_x2_numbers(tmp):
    lines = [line.replace("L2,Bot", "L3,Bot") for line in bottom_lines()]
    return Case(board_with(tmp, BOTTOM_FILE, lines), "board", "L2 missing")


@case
def job_lists_a_missing_copper_file(tmp):
    inner = {"Path": "board-In1_Cu.gbr", "FileFunction": "Copper,L2,Inr,Signal"}
    board = board_with_job(tmp, lambda d: d["FilesAttributes"].insert(1, inner))
    return Case(board, JOB_FILE, "missing from the board: board-In1_Cu.gbr")


# ---------------------------------------------------------------------------------------- netlists


def netlist_case(tmp, edit: Callable[[list[str]], list[str]], says: str, line: int | None) -> Case:
    """The X1 board with its netlist's lines passed through ``edit``."""
    return Case(board_with(tmp, NETLIST_FILE, edit(netlist_lines()), x2=False), NETLIST_FILE, says, line)


@case
def netlist_unknown_units(tmp):
    return netlist_case(tmp, lambda ls: [x.replace("CUST 1", "FURLONGS") for x in ls], "FURLONGS", 3)


@case
def netlist_without_units(tmp):
    return netlist_case(tmp, lambda ls: [x for x in ls if "UNITS" not in x], "units unknown", 3)


@case
def netlist_wrong_columns(tmp):
    def shift(ls):
        return ls[:3] + [x[:20] + x[25:] if x[:3] in ("317", "327") else x for x in ls[3:]]
    return netlist_case(tmp, shift, "columns", 4)


@case
def netlist_letters_in_a_number(tmp):
    return netlist_case(tmp, lambda ls: ls[:4] + [ls[4].replace("Y+010300", "Y+01O3OO")] + ls[5:],
                        "not a number", 5)


@case
def netlist_absurd_conductor(tmp):
    record = f"378{'DATA':<14} L01 0150 X{'9' * 40}Y10000"
    return netlist_case(tmp, lambda ls: ls[:-1] + [record] + ls[-1:], "beyond the limit",
                        len(netlist_lines()))


@case
def netlist_points_all_off_board(tmp):
    return netlist_case(tmp, lambda ls: [x.replace("X+0", "X+9") for x in ls], "units", None)


@case
def netlist_units_changed_after_records(tmp):
    """A second P UNITS after the first record: the rest of the file would be read at another scale."""
    return netlist_case(tmp, lambda ls: ls[:4] + ["P  UNITS CUST 0"] + ls[4:], "units changed to 'CUST 0'", 5)


# ---------------------------------------------------------------------------------------- drill files


def drill_case(tmp, lines: list[str], says: str, line: int | None) -> Recoverable:
    """A damaged drill file: the board loads without it (incomplete), with a warning naming the file and line."""
    return Recoverable(board_with(tmp, DRILL_FILE, lines), DRILL_FILE if line is None else f"{DRILL_FILE}:{line}", says)


def drill_refused(tmp, lines: list[str], says: str, line: int | None) -> Case:
    """A drill file that means two things, holds a number out of range, or is another board's: refused with one line."""
    return Case(board_with(tmp, DRILL_FILE, lines), DRILL_FILE, says, line)


@recoverable
def drill_undefined_tool(tmp):
    lines = drill_lines()
    lines[index_of(lines, "T1") + 3] = "T7"  # the selection after the header
    return drill_case(tmp, lines, "Undefined tool", index_of(lines, "T7") + 1)


@recoverable
def drill_hole_before_any_tool(tmp):
    lines = [line for line in drill_lines() if not (line.startswith("T") and "C" not in line)]
    return drill_case(tmp, lines, "before any tool", index_of(lines, "X") + 1)


@recoverable
def drill_truncated(tmp):
    return drill_case(tmp, drill_lines()[:-2], "M30", len(drill_lines()) - 2)


@recoverable
def drill_absurd_coordinate(tmp):
    lines = drill_lines()
    i = index_of(lines, "X")
    lines[i] = "X1000000000.0Y10.0"
    return drill_case(tmp, lines, "beyond the limit", i + 1)


@case
def drill_absurd_tool(tmp):
    lines = [line.replace("T1C0.300", "T1C99999999.0") for line in drill_lines()]
    return drill_refused(tmp, lines, "tool diameter 1e+08 mm is outside the drill diameter range",
                         index_of(lines, "X") + 1)


@case
def drill_inch_after_metric_holes(tmp):
    lines = drill_lines()
    lines.insert(index_of(lines, "X") + 1, "INCH")
    return drill_refused(tmp, lines, "unit changed from millimeter to inch after coordinates", index_of(lines, "INCH") + 1)


@case
def drill_m72_after_metric_holes(tmp):
    lines = drill_lines()
    lines.insert(index_of(lines, "X") + 1, "M72")
    return drill_refused(tmp, lines, "unit changed from millimeter to inch after coordinates", index_of(lines, "M72") + 1)


@case
def drill_holes_all_off_board(tmp):
    """Holes in the wrong units land far from the board: refused, not scored as opens."""
    return drill_refused(tmp, [line.replace("X40.000", "X1016.000") for line in drill_lines()], "units", None)


@case
def drill_unit_change_inside_an_archive(tmp):
    """Errors about a file in an archive name it as archive!entry, with its line."""
    lines = drill_lines()
    lines.insert(index_of(lines, "X") + 1, "INCH")
    board = board_with(tmp, DRILL_FILE, lines)
    return Case(zip_of(board, tmp / "board.zip"), f"board.zip!{DRILL_FILE}", "unit changed",
                index_of(lines, "INCH") + 1)


# ---------------------------------------------------------------------------------------- job files


def board_with_job(tmp, edit: Callable[[dict], None]) -> Path:
    """The valid board with its job file's data passed through ``edit``."""
    data = job_data()
    edit(data)
    return board_with_bytes(tmp, JOB_FILE, json.dumps(data, indent=1).encode())


def job_case(tmp, edit: Callable[[dict], None], says: str) -> Recoverable:
    """A job file that cannot be used: the board loads without it (stackup from the rules), with a warning."""
    return Recoverable(board_with_job(tmp, edit), JOB_FILE, says)


def job_out_of_range(tmp, edit: Callable[[dict], None], says: str) -> Case:
    """A number outside its physical range refuses the board, even in a file it could do without."""
    return Case(board_with_job(tmp, edit), JOB_FILE, says)


def _core(data: dict) -> dict:
    return data["MaterialStackup"][2]


@case
def job_negative_thickness(tmp):
    return job_out_of_range(tmp, lambda d: _core(d).update(Thickness=-0.2),
                            "Thickness -0.2 mm is outside the dielectric thickness range")


@recoverable
def job_missing_thickness(tmp):
    return job_case(tmp, lambda d: _core(d).pop("Thickness"), "no Thickness")


@case
def job_zero_thickness(tmp):
    return job_out_of_range(tmp, lambda d: _core(d).update(Thickness=0),
                            "Thickness 0 mm is outside the dielectric thickness range")


@case
def job_permittivity_below_one(tmp):
    return job_out_of_range(tmp, lambda d: _core(d).update(DielectricConstant=0.7),
                            "DielectricConstant 0.7 is outside the relative permittivity range")


@case
def job_permittivity_not_a_number(tmp):
    return job_out_of_range(tmp, lambda d: _core(d).update(DielectricConstant="high"),
                            "not a finite number, is outside the relative permittivity range")


@recoverable
def job_missing_permittivity(tmp):
    return job_case(tmp, lambda d: _core(d).pop("DielectricConstant"), "no DielectricConstant")


@recoverable
def job_stackup_of_wrong_shape(tmp):
    return job_case(tmp, lambda d: d.update(MaterialStackup={"layers": 2}), "not a list")


@recoverable
def job_not_json(tmp):
    board = write_board(tmp / "board")
    (board / JOB_FILE).write_text('{\n "MaterialStackup": [\n  {"Type": "Copper",, }\n ]\n}\n')
    return Recoverable(board, f"{JOB_FILE}:3", "not valid JSON")


# ---------------------------------------------------------------------------------------- rules and board files


def rules_case(tmp, lines: list[str], says: str, line: int | None = None) -> Case:
    rules = write_lines(tmp / RULES_FILE, lines)
    return Case(write_board(tmp / "board"), RULES_FILE, says, line, ("--rules", str(rules)))


@case
def rules_unknown_key(tmp):
    return rules_case(tmp, ["colour = 'green'"] + RULES_LINES, "unknown key(s) colour")


@case
def rules_unknown_key_in_class(tmp):
    lines = RULES_LINES.copy()
    lines.insert(index_of(lines, "swing_v"), "rise_time = 1")
    return rules_case(tmp, lines, "unknown key 'rise_time'")


@case
def rules_wrong_type(tmp):
    return rules_case(tmp, [x.replace("swing_v = 3.3", 'swing_v = "3.3 V"') for x in RULES_LINES], "must be float")


@case
def rules_permittivity_below_one(tmp):
    return rules_case(tmp, [x.replace("epsilon_r = 4.2", "epsilon_r = 0.9") for x in RULES_LINES], "epsilon_r")


@case
def rules_not_toml(tmp):
    lines = RULES_LINES.copy()
    lines.insert(2, "min_coupled_length_mm = = 1")
    return rules_case(tmp, lines, "not valid TOML", line=3)


@case
def rules_not_utf8(tmp):
    rules = tmp / RULES_FILE
    rules.write_bytes(b'[scan]\nbudget_basis = "\xff\xfe"\n')
    return Case(write_board(tmp / "board"), RULES_FILE, "UTF-8", args=("--rules", str(rules)))


@case
def rules_file_missing(tmp):
    return Case(write_board(tmp / "board"), "absent.toml", "not found", args=("--rules", str(tmp / "absent.toml")))


@case
def output_folder_is_the_board_folder(tmp):
    board = write_board(tmp / "board")
    return Case(board, "board", "output folder is the board folder", args=("--out", str(board)))


@case
def board_file_unknown_key(tmp):
    board = write_board(tmp / "board")
    (board / "nearfar-board.toml").write_text('layers = ["board-F_Cu.gbr", "board-B_Cu.gbr"]\ncolour = "red"\n')
    return Case(board, "nearfar-board.toml", "unknown key")


# ---------------------------------------------------------------------------------------- archives


def zip_of(board: Path, path: Path, extra: Callable[[zipfile.ZipFile], None] | None = None) -> Path:
    """``board``'s files in a zip, then whatever ``extra`` adds."""
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        for f in sorted(board.iterdir()):
            zf.write(f, f.name)
        if extra:
            extra(zf)
    return path


@case
def zip_entry_escapes_upward(tmp):
    target = zip_of(write_board(tmp / "board"), tmp / "evil.zip", lambda zf: zf.writestr("../../escape.gbr", "x"))
    return Case(target, "evil.zip", "outside the archive")


@case
def zip_entry_absolute(tmp):
    target = zip_of(write_board(tmp / "board"), tmp / "evil.zip", lambda zf: zf.writestr("/tmp/escape.gbr", "x"))
    return Case(target, "evil.zip", "absolute path")


@case
def zip_entry_symbolic_link(tmp):
    def link(zf):
        info = zipfile.ZipInfo("board-In1_Cu.gbr")
        info.external_attr = (stat.S_IFLNK | 0o777) << 16
        zf.writestr(info, "/etc/passwd")
    return Case(zip_of(write_board(tmp / "board"), tmp / "evil.zip", link), "evil.zip", "symbolic link")


@case
def zip_bomb(tmp):
    """One entry of 501 MiB of zeros (compressed to about 2 MB), past the 500 MiB expansion limit."""
    path = tmp / "bomb.zip"
    chunk = bytes(1 << 24)
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=1) as zf:
        with zf.open("board-F_Cu.gbr", "w", force_zip64=True) as out:
            for _ in range(501 // 16):
                out.write(chunk)
            out.write(bytes((501 % 16) << 20))
    return Case(path, "bomb.zip", "limit")


@case
def zip_with_too_many_entries(tmp):
    def many(zf):
        for i in range(5001):
            zf.writestr(f"n/{i}.txt", "")
    return Case(zip_of(write_board(tmp / "board"), tmp / "many.zip", many), "many.zip", "entries")


@case
def zip_truncated(tmp):
    path = zip_of(write_board(tmp / "board"), tmp / "cut.zip")
    path.write_bytes(path.read_bytes()[: path.stat().st_size // 2])
    return Case(path, "cut.zip", "zip")


@case
def archive_without_copper(tmp):
    """Errors about an archive name the archive, never the temporary folder it was unpacked into."""
    board = write_board(tmp / "board")
    for name in (TOP_FILE, BOTTOM_FILE, JOB_FILE):
        (board / name).unlink()
    return Case(zip_of(board, tmp / "nocopper.zip"), "nocopper.zip", "no copper layers")


# ---------------------------------------------------------------------------------------- ODB++ jobs


def odbpp_case(tmp, layer: str, text: str, says: str, line: int | None) -> Case:
    """The small ODB++ test job with one layer's features file replaced by ``text``."""
    job = jobs.write_job(tmp, jobs.job_files(**{f"steps__pcb__layers__{layer}__features": text}))
    return Case(job, f"layers/{layer}/features", says, line)


@case
def odbpp_two_jobs_in_one_archive(tmp):
    """The refusal names the archive, not the folder it was unpacked into."""
    first, second = jobs.write_job(tmp / "a"), jobs.write_job(tmp / "b")
    path = tmp / "two.zip"
    with zipfile.ZipFile(path, "w") as zf:
        for prefix, job in (("one", first), ("two", second)):
            for f in sorted(job.rglob("*")):
                if f.is_file():
                    zf.write(f, f"{prefix}/{f.relative_to(job).as_posix()}")
    return Case(path, "two.zip", "expected one ODB++ job, found 2")


@case
def odbpp_units_changed_mid_features(tmp):
    text = jobs.TOP.replace("P 35 20 2 P 0 0", "UNITS=INCH\nP 35 20 2 P 0 0")
    return odbpp_case(tmp, "top", text, "units changed from MM to INCH", text.splitlines().index("UNITS=INCH") + 1)


@case
def odbpp_copper_far_off_board(tmp):
    """Coordinates of a metric layer read as inches: all of the layer lies far outside the step profile."""
    return odbpp_case(tmp, "top", jobs.TOP.replace("UNITS=MM", "UNITS=INCH"), "copper objects of layer L01 lie off",
                      None)


# ---------------------------------------------------------------------------------------- links and names


@case
def symbolic_link_in_folder(tmp):
    board = write_board(tmp / "board")
    outside = write_lines(tmp / "elsewhere.gbr", bottom_lines())
    (board / "board-In1_Cu.gbr").symlink_to(outside)
    return Case(board, "board-In1_Cu.gbr", "symbolic link")


@case
def symbolic_link_to_folder(tmp):
    board = write_board(tmp / "board")
    (tmp / "more").mkdir()
    (board / "more").symlink_to(tmp / "more", target_is_directory=True)
    return Case(board, "more", "symbolic link")


def renamed_truncated_top(tmp, new_name: bytes) -> Path:
    """The board with a truncated top layer renamed (no job file, which would name the old file)."""
    board = board_with(tmp, TOP_FILE, top_lines()[:-1])
    (board / JOB_FILE).unlink()
    os.rename(os.fsencode(board / TOP_FILE), os.fsencode(board) + b"/" + new_name)
    return board


@case
def newline_in_a_broken_file_name(tmp):
    return Case(renamed_truncated_top(tmp, b"board-F_Cu\n.gbr"), "board-F_Cu\\n.gbr", "M02")


@case
def control_and_undecodable_bytes_in_a_broken_file_name(tmp):
    board = renamed_truncated_top(tmp, b"board-F_Cu-\xff\x1b[2J\xe2\x80\xae.gbr")
    return Case(board, "board-F_Cu-\\xff\\x1b[2J\\u202e.gbr", "M02")


# ---------------------------------------------------------------------------------------- recoverable


@recoverable
def unreadable_profile(tmp):
    board = board_with(tmp, PROFILE_FILE, profile_lines()[:-1])
    return Recoverable(board, PROFILE_FILE, "profile not used")


@recoverable
def garbage_silkscreen(tmp):
    return Recoverable(board_with_bytes(tmp, SILK_FILE, bytes(range(256)) * 4), SILK_FILE, "not read")


@recoverable
def netlist_point_off_board(tmp):
    """One point of 15 off the board: a warning (more than a small share would make the import incomplete)."""
    lines = netlist_lines()
    lines[-1:-1] = [netlist_point(327, "CLK", 2 + i, 10, 1) for i in range(10)]
    lines.insert(-1, netlist_point(327, "DATA", 940, 10.3, 1))
    return Recoverable(board_with(tmp, NETLIST_FILE, lines, x2=False), NETLIST_FILE, f"line {len(lines) - 1}")


@recoverable
def region_contour_left_open(tmp):
    lines = bottom_lines()
    del lines[index_of(lines, "G37*") - 1]
    return Recoverable(board_with(tmp, BOTTOM_FILE, lines), BOTTOM_FILE, "not closed")


@recoverable
def soldermask_without_permittivity(tmp):
    board = board_with_job(tmp, lambda d: d["MaterialStackup"][0].pop("DielectricConstant"))
    return Recoverable(board, JOB_FILE, "solder mask left out")


@recoverable
def zero_size_aperture_flash(tmp):
    board, _ = top_with(tmp, "M02*", ["%ADD20C,0*%", "D20*", f"X{mm(20)}Y{mm(15)}D03*"])
    return Recoverable(board, TOP_FILE, "no area")


@recoverable
def zero_area_region(tmp):
    lines = bottom_lines()
    lines[-1:-1] = region([(60, 0), (70, 0), (60, 0)])
    return Recoverable(board_with(tmp, BOTTOM_FILE, lines), BOTTOM_FILE, "no area")
