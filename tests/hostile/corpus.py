"""Hostile and broken board inputs, written by code into a folder the test gives (no binary files in the repository).

``write_board`` lays down a small valid board (two copper layers, X2 or X1 with an
IPC-D-356A netlist, a drill file, a profile and a job file with the stackup). Each
entry of ``CASES`` damages one part of it, or builds an archive or rules file, and
says which file the error must name and on which line, where that is known.
"""
from __future__ import annotations

import json
import os
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

# ---------------------------------------------------------------------------------------- a valid board

TOP_FILE = "board-F_Cu.gbr"
BOTTOM_FILE = "board-B_Cu.gbr"
PROFILE_FILE = "board-Edge_Cuts.gbr"
DRILL_FILE = "board-PTH.drl"
NETLIST_FILE = "board.ipc"
JOB_FILE = "board.gbrjob"

#: Gerber header lines (mm, 4.6 format); X2 files add a .FileFunction line in front
HEADER = ["G04 hostile corpus*", "%FSLAX46Y46*%", "%MOMM*%", "%LPD*%", "%ADD10C,0.150000*%",
          "%ADD11C,0.600000*%", "G01*"]


def _mm(v: float) -> str:
    return str(int(round(v * 1e6)))


def _net(name: str, body: list[str], x2: bool) -> list[str]:
    return ([f"%TO.N,{name}*%"] + body + ["%TD*%"]) if x2 else body


def top_lines(x2: bool = True) -> list[str]:
    """Two 39 mm traces 0.3 mm apart (CLK and DATA), a pad at each start and a via at each end."""
    body = []
    for name, y in (("CLK", 10.0), ("DATA", 10.3)):
        body += _net(name, ["D10*", f"X{_mm(1)}Y{_mm(y)}D02*", f"X{_mm(40)}Y{_mm(y)}D01*",
                            "D11*", f"X{_mm(1)}Y{_mm(y)}D03*", f"X{_mm(40)}Y{_mm(y)}D03*"], x2)
    head = ["%TF.FileFunction,Copper,L1,Top,Signal*%"] if x2 else []
    return head + HEADER + body + ["M02*"]


def bottom_lines(x2: bool = True) -> list[str]:
    """A ground pour over the whole board, with two via lands."""
    outline = [(0, 0), (50, 0), (50, 20), (0, 20), (0, 0)]
    region = ["G36*", f"X{_mm(outline[0][0])}Y{_mm(outline[0][1])}D02*"]
    region += [f"X{_mm(x)}Y{_mm(y)}D01*" for x, y in outline[1:]] + ["G37*"]
    body = _net("GND", region, x2)
    for name, y in (("CLK", 10.0), ("DATA", 10.3)):
        body += _net(name, ["D11*", f"X{_mm(40)}Y{_mm(y)}D03*"], x2)
    head = ["%TF.FileFunction,Copper,L2,Bot,Plane*%"] if x2 else []
    return head + HEADER + body + ["M02*"]


def profile_lines() -> list[str]:
    pts = [(0, 0), (50, 0), (50, 20), (0, 20), (0, 0)]
    return (["%TF.FileFunction,Profile,NP*%"] + HEADER + [f"X{_mm(pts[0][0])}Y{_mm(pts[0][1])}D02*", "D10*"]
            + [f"X{_mm(x)}Y{_mm(y)}D01*" for x, y in pts[1:]] + ["M02*"])


def drill_lines() -> list[str]:
    return ["M48", "; #@! TF.FileFunction,Plated,1,2,PTH", "METRIC", "T1C0.300", "%", "G05", "T1",
            "X40.000Y10.000", "X40.000Y10.300", "M30"]


def netlist_lines() -> list[str]:
    """IPC-D-356A in CUST 1 (0.001 mm steps): a surface point at each trace start, a via at each end."""
    def point(code, net, x, y, access, hole=""):
        hole_field = f"D{hole}P" if hole else " " * 6
        return (f"{code}{net:<14}   {'U1':<6}-{'1':<4} {hole_field}A{access:02d}"
                f"X{int(x * 1000):+07d}Y{int(y * 1000):+07d}X0600Y0600R000 S0")
    return ["C  hostile corpus netlist", "P  JOB   HOSTILE", "P  UNITS CUST 1",
            point(327, "CLK", 1, 10, 1), point(327, "DATA", 1, 10.3, 1),
            point(317, "CLK", 40, 10, 0, "0300"), point(317, "DATA", 40, 10.3, 0, "0300"), "999"]


def job_data() -> dict:
    return {"Header": {"GenerationSoftware": {"Application": "hostile corpus"}},
            "FilesAttributes": [{"Path": TOP_FILE, "FileFunction": "Copper,L1,Top,Signal"},
                                {"Path": BOTTOM_FILE, "FileFunction": "Copper,L2,Bot,Plane"}],
            "MaterialStackup": [{"Type": "Copper", "Name": "top", "Thickness": 0.035},
                                {"Type": "Dielectric", "Name": "core", "Thickness": 0.2, "DielectricConstant": 4.2},
                                {"Type": "Copper", "Name": "bottom", "Thickness": 0.035}]}


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


# ---------------------------------------------------------------------------------------- the hostile cases


@dataclass(frozen=True)
class Case:
    """What to run and what the one-line error must say.

    ``target`` is the board argument; ``args`` go after it. ``names`` is a piece of
    text the error line must contain (the file it blames); ``line`` the line number
    it must give, when known.
    """

    target: Path
    names: str
    line: int | None = None
    args: tuple[str, ...] = ()
    says: str = ""  # a word or phrase the message must contain (what is wrong)


@dataclass(frozen=True)
class Recoverable:
    """A board that still imports, leaving out one part and saying so in a warning that names ``names``."""

    target: Path
    names: str
    says: str = ""
    args: tuple[str, ...] = field(default_factory=tuple)


CaseMaker = Callable[[Path], Case]
CASES: dict[str, CaseMaker] = {}
RECOVERABLE: dict[str, Callable[[Path], Recoverable]] = {}


def case(fn: CaseMaker) -> CaseMaker:
    CASES[fn.__name__] = fn
    return fn


def recoverable(fn):
    RECOVERABLE[fn.__name__] = fn
    return fn


def _replace_lines(path: Path, lines: list[str]) -> int:
    """Write ``lines`` to ``path``; returns the number of the last line."""
    write_lines(path, lines)
    return len(lines)


def _edit_top(folder: Path, edit: Callable[[list[str]], list[str]], x2: bool = True) -> Path:
    write_board(folder, x2)
    write_lines(folder / TOP_FILE, edit(top_lines(x2)))
    return folder / TOP_FILE


def _index(lines: list[str], text: str) -> int:
    """0-based index of the first line starting with ``text``."""
    return next(i for i, line in enumerate(lines) if line.startswith(text))


# --- empty and garbage files


@case
def empty_copper_file(tmp: Path) -> Case:
    board = write_board(tmp / "board")
    (board / TOP_FILE).write_bytes(b"")
    return Case(board, TOP_FILE, says="empty")


@case
def binary_garbage_copper_file(tmp: Path) -> Case:
    board = write_board(tmp / "board")
    (board / TOP_FILE).write_bytes(bytes(range(256)) * 8 + b"\x00\xff" * 100)
    return Case(board, TOP_FILE)


@case
def empty_folder(tmp: Path) -> Case:
    (tmp / "board").mkdir()
    return Case(tmp / "board", "board", says="no files")


@case
def only_garbage_files(tmp: Path) -> Case:
    board = tmp / "board"
    board.mkdir()
    (board / "noise.bin").write_bytes(os.urandom(4096))
    return Case(board, "board", says="no importer")


# --- truncated and malformed Gerber


@case
def truncated_mid_block(tmp: Path) -> Case:
    lines = top_lines()
    cut = _index(lines, "X40000000Y10000000D01")
    path = _edit_top(tmp / "board", lambda _: lines[:cut] + [lines[cut][:9]])
    return Case(path.parent, TOP_FILE, line=None)


@case
def truncated_mid_macro(tmp: Path) -> Case:
    lines = top_lines()
    at = _index(lines, "G01*")
    path = _edit_top(tmp / "board", lambda _: lines[:at] + ["%AMPADSHAPE*", "1,1,0.5,0,0*", "21,1,0.8,0.4,"])
    return Case(path.parent, TOP_FILE)


@case
def missing_end_marker(tmp: Path) -> Case:
    path = _edit_top(tmp / "board", lambda lines: lines[:-1])
    return Case(path.parent, TOP_FILE, says="M02")


@case
def undefined_aperture(tmp: Path) -> Case:
    lines = top_lines()
    at = _index(lines, "D10*")
    lines[at] = "D77*"
    _edit_top(tmp / "board", lambda _: lines)
    return Case(tmp / "board", TOP_FILE, line=at + 1, says="D77")


@case
def bad_aperture_macro(tmp: Path) -> Case:
    lines = top_lines()
    at = _index(lines, "G01*")
    lines[at:at] = ["%AMBROKEN*", "1,1,$1,0,0,zz*%", "%ADD20BROKEN,0.5*%"]
    flash = _index(lines, "D11*")
    lines[flash:flash] = ["D20*", "X5000000Y5000000D03*"]
    _edit_top(tmp / "board", lambda _: lines)
    return Case(tmp / "board", TOP_FILE)


@case
def absurd_coordinates(tmp: Path) -> Case:
    lines = top_lines()
    at = _index(lines, "X40000000Y10000000D01")
    lines[at] = "%FSLAX66Y66*%"  # noqa: placeholder replaced below
    lines[at] = f"X{10**15}Y10000000D01*"  # 1e9 mm
    _edit_top(tmp / "board", lambda _: lines)
    return Case(tmp / "board", TOP_FILE, line=at + 1, says="coordinate")


@case
def missing_units(tmp: Path) -> Case:
    _edit_top(tmp / "board", lambda lines: [line for line in lines if not line.startswith("%MO")])
    return Case(tmp / "board", TOP_FILE, says="unit")


@case
def mixed_units(tmp: Path) -> Case:
    lines = top_lines()
    at = _index(lines, "%TO.N,DATA")
    lines[at:at] = ["%MOIN*%"]
    _edit_top(tmp / "board", lambda _: lines)
    return Case(tmp / "board", TOP_FILE, line=at + 1, says="unit")


@case
def region_never_closes(tmp: Path) -> Case:
    write_board(tmp / "board")
    lines = bottom_lines()
    lines.remove("G37*")
    write_lines(tmp / "board" / BOTTOM_FILE, lines)
    return Case(tmp / "board", BOTTOM_FILE, says="region")


@case
def region_open_outline(tmp: Path) -> Case:
    """A region whose last vertex is not its first (G37 without closing the contour)."""
    write_board(tmp / "board")
    lines = bottom_lines()
    last = _index(lines, "G37*") - 1
    del lines[last]
    write_lines(tmp / "board" / BOTTOM_FILE, lines)
    return Case(tmp / "board", BOTTOM_FILE, says="region")
