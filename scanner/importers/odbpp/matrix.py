"""The job matrix (``matrix/matrix``): steps, and layers in stack order with their type and polarity.

Layer arrays are read whether the writer calls them ``LAYER`` or ``ROW``; ``ROW=`` gives
the order. Copper is ``CONTEXT=BOARD`` with ``TYPE=SIGNAL``, ``POWER_GROUND`` (taken as a
reference plane) or ``MIXED`` (taken as signal, as X2 ``Mixed`` is).
"""
from __future__ import annotations

from dataclasses import dataclass

from scanner.errors import InputError
from scanner.importers.odbpp.text import JobFile, integer, read_structured

#: matrix copper types -> the board model's layer kind
COPPER_KINDS = {"SIGNAL": "signal", "POWER_GROUND": "plane", "MIXED": "signal"}


@dataclass(frozen=True)
class MatrixLayer:
    row: int
    name: str
    context: str
    type: str
    polarity: str  # "POSITIVE" | "NEGATIVE"
    start_name: str
    end_name: str
    dielectric_type: str
    line: int

    @property
    def on_board(self) -> bool:
        return self.context == "BOARD"

    @property
    def is_copper(self) -> bool:
        return self.on_board and self.type in COPPER_KINDS


@dataclass(frozen=True)
class Matrix:
    src: JobFile
    steps: tuple[str, ...]
    layers: tuple[MatrixLayer, ...]  # by row

    def of_type(self, *types: str) -> list[MatrixLayer]:
        return [layer for layer in self.layers if layer.on_board and layer.type in types]

    @property
    def copper(self) -> list[MatrixLayer]:
        return [layer for layer in self.layers if layer.is_copper]


def read_matrix(src: JobFile) -> Matrix:
    data = read_structured(src, "job matrix (matrix/matrix)")
    steps, layers, rows = [], [], {}
    for block in data.blocks:
        if block.name == "STEP":
            if not block.get("NAME"):
                raise InputError("STEP array without NAME", path=src.name, line=block.line)
            steps.append((integer(block.get("COL", "0") or "0", src, block.line, "COL"), block.get("NAME")))
        elif block.name in ("LAYER", "ROW"):
            for key in ("ROW", "NAME", "TYPE"):
                if not block.get(key):
                    raise InputError(f"{block.name} array without {key}", path=src.name, line=block.line)
            row = integer(block.get("ROW"), src, block.line, "ROW number")
            if row in rows:
                raise InputError(f"ROW={row} used twice (also at line {rows[row]})", path=src.name, line=block.line)
            rows[row] = block.line
            polarity = block.get("POLARITY", "POSITIVE").upper() or "POSITIVE"
            if polarity not in ("POSITIVE", "NEGATIVE"):
                raise InputError(f"POLARITY must be POSITIVE or NEGATIVE, found {polarity!r}", path=src.name,
                                 line=block.line)
            layers.append(MatrixLayer(row, block.get("NAME"), block.get("CONTEXT", "BOARD").upper(),
                                      block.get("TYPE").upper(), polarity, block.get("START_NAME"),
                                      block.get("END_NAME"), block.get("DIELECTRIC_TYPE").upper(), block.line))
    if not steps:
        raise InputError("the matrix lists no STEP", path=src.name)
    layers.sort(key=lambda layer: layer.row)
    if not any(layer.is_copper for layer in layers):
        raise InputError("the matrix lists no copper layer (CONTEXT=BOARD, TYPE=SIGNAL, POWER_GROUND or MIXED)",
                         path=src.name)
    return Matrix(src, tuple(name for _, name in sorted(steps)), tuple(layers))
