"""Small fabrication files written by the tests themselves (Gerber X1/X2, Excellon, IPC-D-356A)."""
from __future__ import annotations

from pathlib import Path

import numpy as np


def _c(v: float) -> str:
    return str(int(round(v * 1e6)))


def _xy(p) -> str:
    return f"X{_c(p[0])}Y{_c(p[1])}"


def gerber_text(items: list[dict], file_function: str | None = None, x2: bool = True) -> str:
    """A copper Gerber (mm, 4.6 format) drawing ``items``; X2 attributes only when ``x2``."""
    out = ["G04 test artwork*"]
    if x2 and file_function:
        out.append(f"%TF.FileFunction,{file_function}*%")
    out += ["%FSLAX46Y46*%", "%MOMM*%", "%LPD*%", "G75*", "G01*"]
    apertures: dict[tuple, int] = {}

    def aperture(shape: str, size, function: str | None) -> int:
        key = (shape, size, function if x2 else None)
        if key not in apertures:
            number = 10 + len(apertures)
            if x2 and function:
                out.append(f"%TA.AperFunction,{function}*%")
            mods = "X".join(f"{v:g}" for v in (size if isinstance(size, tuple) else (size,)))
            out.append(f"%ADD{number}{shape},{mods}*%")
            if x2 and function:
                out.append("%TD.AperFunction*%")
            apertures[key] = number
        return apertures[key]

    body = []
    for item in items:
        net = item.get("net") if x2 else None
        polarity = item.get("polarity", "D")
        body.append(f"%LP{polarity}*%")
        if net:
            body.append(f"%TO.N,{net}*%")
        kind = item["kind"]
        if kind == "line":
            d = aperture(item.get("shape", "C"), item["w"], item.get("function", "Conductor"))
            body.append(f"D{d}*")
            pts = item["pts"]
            body.append(f"{_xy(pts[0])}D02*")
            body += [f"{_xy(p)}D01*" for p in pts[1:]]
        elif kind == "arc":
            d = aperture("C", item["w"], item.get("function", "Conductor"))
            sx, sy = item["start"]
            cx, cy = item["center"]
            body += [f"D{d}*", f"{_xy(item['start'])}D02*", "G02*" if item["cw"] else "G03*",
                     f"{_xy(item['end'])}I{_c(cx - sx)}J{_c(cy - sy)}D01*", "G01*"]
        elif kind == "flash":
            d = aperture(item.get("shape", "C"), item["d"], item.get("function", "SMDPad,CuDef"))
            body += [f"D{d}*", f"{_xy(item['at'])}D03*"]
        elif kind == "region":
            if x2:
                body.append(f"%TA.AperFunction,{item.get('function', 'Conductor')}*%")
            pts = item["pts"]
            body += ["G36*", f"{_xy(pts[0])}D02*"] + [f"{_xy(p)}D01*" for p in pts[1:] + pts[:1]] + ["G37*"]
            if x2:
                body.append("%TD.AperFunction*%")
        if net:
            body.append("%TD*%")
    return "\n".join(out + body + ["M02*", ""])


def excellon_text(holes: list[tuple[float, float, float]], plated: bool | None = None) -> str:
    """Metric Excellon with decimal points; a KiCad-style X2 plating attribute when ``plated`` is given."""
    out = ["M48"]
    if plated is not None:
        out.append(f"; #@! TF.FileFunction,{'Plated' if plated else 'NonPlated'},1,2,{'PTH' if plated else 'NPTH'}")
    out.append("METRIC")
    tools = {}
    for _, _, d in holes:
        tools.setdefault(d, len(tools) + 1)
    out += [f"T{n}C{d:.3f}" for d, n in tools.items()]
    out += ["%", "G05"]
    for d, n in tools.items():
        out.append(f"T{n}")
        out += [f"X{x:.3f}Y{y:.3f}" for x, y, dd in holes if dd == d]
    out.append("M30")
    return "\n".join(out) + "\n"


def ipc356_point(code: int, net: str, x: float, y: float, access: int, hole_mm: float = 0.0,
                 refdes: str = "U1", pin: str = "1", step_mm: float = 1e-3) -> str:
    hole = f"D{int(round(hole_mm / step_mm)):04d}P" if hole_mm else " " * 6
    xs = f"{int(round(x / step_mm)):+07d}"
    ys = f"{int(round(y / step_mm)):+07d}"
    line = f"{code}{net:<14}   {refdes:<6}-{pin:<4} {hole}A{access:02d}X{xs}Y{ys}X0600Y0600R000 S0"
    return line


def ipc356_text(points: list[str], units: str = "CUST 1") -> str:
    return "\n".join(["C  test netlist", "P  JOB   TEST", f"P  UNITS {units}"] + points + ["999", ""])


# --- a two-layer test board -------------------------------------------------------------------

TOP = [
    {"kind": "flash", "at": (10, 10), "d": 0.6, "net": "SIG_A"},
    {"kind": "line", "pts": [(10, 10), (30, 10)], "w": 0.2, "net": "SIG_A"},
    {"kind": "flash", "at": (30, 10), "d": 0.6, "net": "SIG_A", "function": "ViaPad"},
    {"kind": "flash", "at": (10, 12), "d": 0.6, "net": "SIG_B"},
    {"kind": "line", "pts": [(10, 12), (30, 12)], "w": 0.2, "net": "SIG_B"},
    {"kind": "flash", "at": (30, 12), "d": 0.6, "net": "SIG_B", "function": "ViaPad"},
    {"kind": "line", "pts": [(5, 45), (20, 45)], "w": 0.5, "net": "GND"},
    {"kind": "flash", "at": (5, 45), "d": 0.6, "net": "GND", "function": "ViaPad"},
    {"kind": "line", "pts": [(20, 30), (25, 30)], "w": 0.2},
]
BOTTOM = [
    {"kind": "flash", "at": (30, 10), "d": 0.6, "net": "SIG_A", "function": "ViaPad"},
    {"kind": "line", "pts": [(30, 10), (40, 20)], "w": 0.2, "net": "SIG_A"},
    {"kind": "flash", "at": (40, 20), "d": 0.6, "net": "SIG_A"},
    {"kind": "flash", "at": (30, 12), "d": 0.6, "net": "SIG_B", "function": "ViaPad"},
    {"kind": "arc", "start": (30, 12), "end": (34, 16), "center": (34, 12), "cw": True, "w": 0.2, "net": "SIG_B"},
    {"kind": "region", "pts": [(0, 40), (50, 40), (50, 50), (0, 50)], "net": "GND"},
]
PLATED = [(30, 10, 0.3), (30, 12, 0.3), (5, 45, 0.3)]
NON_PLATED = [(2, 2, 3.0)]
NETLIST = [
    ipc356_point(327, "SIG_A", 10, 10, 1),
    ipc356_point(327, "SIG_B", 10, 12, 1, refdes="U1", pin="2"),
    ipc356_point(317, "GND", 5, 45, 0, hole_mm=0.3, refdes="VIA", pin=""),
    ipc356_point(327, "SIG_A", 40, 20, 2, refdes="U2"),
]


def write_board(folder: Path, x2: bool, netlist: bool | None = None, top=None, bottom=None,
                netlist_lines=None) -> Path:
    """The two-layer test board as X2 (attributes, no netlist) or X1 (+ IPC-D-356A netlist by default)."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "board-top.gbr").write_text(gerber_text(top or TOP, "Copper,L1,Top,Signal", x2))
    (folder / "board-bottom.gbr").write_text(gerber_text(bottom or BOTTOM, "Copper,L2,Bot,Mixed", x2))
    (folder / "board-PTH.drl").write_text(excellon_text(PLATED, True if x2 else None))
    (folder / "board-NPTH.drl").write_text(excellon_text(NON_PLATED, False if x2 else None))
    with_netlist = (not x2) if netlist is None else netlist
    if with_netlist:
        (folder / "board.ipc").write_text(ipc356_text(netlist_lines or NETLIST))
    return folder


# --- comparing boards -------------------------------------------------------------------------

def segment_rows(board, layer):
    s = layer.segments
    names = np.array(board.nets + [None], dtype=object)[np.where(s.net >= 0, s.net, -1)]
    return sorted(zip(*(np.round(v, 4) for v in (s.x0, s.y0, s.x1, s.y1, s.width)), names))


def assert_same_segments(a, b):
    for la, lb in zip(a.layers, b.layers, strict=True):
        ra, rb = segment_rows(a, la), segment_rows(b, lb)
        assert len(ra) == len(rb)
        for p, q in zip(ra, rb):
            assert np.allclose(p[:5], q[:5], atol=1e-4) and p[5] == q[5]
