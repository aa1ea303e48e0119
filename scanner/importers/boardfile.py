"""``nearfar-board.toml``: an explicit copper order and file roles for boards without X2 attributes.

    layers = ["top.gbr", "in1.gbr", "in2.gbr", "bottom.gbr"]   # stack order, top first
    planes = ["in1.gbr"]                                       # optional: file names or L01-style names
    netlist = "board.ipc"                                      # optional IPC-D-356 netlist
    drills = ["plated.drl", { file = "tooling.drl", plated = false }]   # optional
"""
from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from scanner.errors import InputError
from scanner.input_limits import read_input

BOARD_FILE_NAME = "nearfar-board.toml"


@dataclass
class DrillEntry:
    file: str
    plated: bool | None = None


@dataclass
class BoardFile:
    path: str
    layers: list[str] = field(default_factory=list)
    planes: list[str] = field(default_factory=list)
    netlist: str | None = None
    drills: list[DrillEntry] | None = None


def _strings(value, key: str, path: str) -> list[str]:
    if not isinstance(value, list) or not all(isinstance(v, str) and v for v in value):
        raise InputError(f"'{key}' must be a list of file names", path=path)
    return list(value)


def read_board_file(path: Path, display_name: str | None = None) -> BoardFile:
    name = display_name or str(path)
    try:
        data = tomllib.loads(read_input(path, name, "board file").decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"board file is not valid TOML: {exc}", path=name) from exc
    known = {"layers", "planes", "netlist", "drills"}
    unknown = sorted(set(data) - known)
    if unknown:
        raise InputError(f"unknown key(s) {', '.join(unknown)}; expected {', '.join(sorted(known))}", path=name)
    board = BoardFile(name)
    if "layers" in data:
        board.layers = _strings(data["layers"], "layers", name)
        if len(set(board.layers)) != len(board.layers):
            raise InputError("'layers' names a file twice", path=name)
    if "planes" in data:
        board.planes = _strings(data["planes"], "planes", name)
    if "netlist" in data:
        if not isinstance(data["netlist"], str) or not data["netlist"]:
            raise InputError("'netlist' must be a file name", path=name)
        board.netlist = data["netlist"]
    if "drills" in data:
        entries = []
        for item in data["drills"] if isinstance(data["drills"], list) else [None]:
            if isinstance(item, str) and item:
                entries.append(DrillEntry(item))
            elif isinstance(item, dict) and isinstance(item.get("file"), str) and set(item) <= {"file", "plated"} \
                    and isinstance(item.get("plated", True), bool):
                entries.append(DrillEntry(item["file"], item.get("plated")))
            else:
                raise InputError("'drills' entries must be file names or { file = \"...\", plated = true|false }",
                                 path=name)
        board.drills = entries
    return board
