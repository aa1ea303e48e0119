"""The stackup an ODB++ job carries: matrix rows in order plus thickness and permittivity from layer attributes.

The ODB++ matrix orders copper, ``DIELECTRIC`` and ``SOLDER_MASK`` rows physically, but
the specification (as far as we know it) has no fixed attribute for a dielectric's
thickness or permittivity. nearfar reads, from each row's ``attrlist``
(``steps/<step>/layers/<layer>/attrlist``):

* ``thickness_mm`` — a user attribute of our own, millimetres;
* ``epsilon_r`` — a user attribute of our own, relative permittivity;
* ``.copper_weight`` — the system attribute (oz/ft²) for copper rows without ``thickness_mm``.

A stackup is built only when every copper row has a thickness and every dielectric row
a thickness and a permittivity; otherwise none, with a warning saying what is missing.
"""
from __future__ import annotations

from typing import Callable

from scanner.board.model import Stackup, StackupLayer
from scanner.input_limits import check_range
from scanner.importers.odbpp.matrix import Matrix, MatrixLayer
from scanner.importers.odbpp.text import JobFile, read_structured
from scanner.units import MM_PER_OZ_COPPER

STACKUP_SOURCE = "odbpp-job"

_KINDS = {"DIELECTRIC": "dielectric", "SOLDER_MASK": "soldermask"}


def _value(values: dict, lines: dict, key: str, src: JobFile, kind: str) -> float | None:
    """The attribute ``key`` within the physical range of ``kind``; None when absent."""
    text = values.get(key)
    if text is None or text == "":
        return None
    return check_range(kind, text, f"layer attribute {key.lower()}", src.name, lines.get(key))


_KEYS = ("THICKNESS_MM", "EPSILON_R", ".COPPER_WEIGHT")


def _row(layer: MatrixLayer, src: JobFile, copper_index: int | None) -> tuple[StackupLayer | None, list[str], bool]:
    """One stackup entry from a row's attrlist (or None with what it lacks), and whether it gave any stackup value."""
    values, lines = {}, {}
    if src.path.is_file():
        data = read_structured(src, "layer attribute list")
        values, lines = data.values, data.value_lines
    given = any(values.get(key) for key in _KEYS)
    kind = "copper" if copper_index is not None else _KINDS[layer.type]
    thickness = _value(values, lines, "THICKNESS_MM", src, f"{kind} thickness")
    eps = _value(values, lines, "EPSILON_R", src, "relative permittivity")
    if copper_index is not None:
        if thickness is None and (weight := _value(values, lines, ".COPPER_WEIGHT", src, "copper weight")) is not None:
            thickness = weight * MM_PER_OZ_COPPER
        if thickness is None:
            return None, [f"{layer.name}: thickness"], given
        return StackupLayer("copper", layer.name, thickness, None, copper_index), [], given
    missing = [f"{layer.name}: {what}" for what, v in (("thickness", thickness), ("epsilon_r", eps)) if v is None]
    if missing:
        return None, missing if kind == "dielectric" else [], given
    return StackupLayer(kind, layer.name, thickness, eps), [], given


def read_stackup(matrix: Matrix, layer_file: Callable[[str, str], JobFile]) -> tuple[Stackup | None, list[str]]:
    """The job's stackup top to bottom (or None) and warnings."""
    entries, missing, found_any = [], [], False
    copper_index = 0
    for layer in matrix.layers:
        if not (layer.is_copper or (layer.on_board and layer.type in _KINDS)):
            continue
        src = layer_file(layer.name, "attrlist")
        entry, lacks, given = _row(layer, src, copper_index if layer.is_copper else None)
        copper_index += layer.is_copper
        found_any |= given
        missing += lacks
        if entry is not None:
            entries.append(entry)
    if not found_any:
        return None, []
    if not any(e.kind == "dielectric" for e in entries):
        missing.append("no DIELECTRIC rows in the matrix")
    if missing:
        return None, ["stackup in the job is incomplete (missing " + "; ".join(missing) + "); not used"]
    return Stackup(tuple(entries), STACKUP_SOURCE), []
