"""Gerber job files (``.gbrjob``, JSON): stackup and per-file functions."""
from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

from scanner.board import Stackup, StackupLayer
from scanner.errors import InputError


@dataclass
class JobFile:
    path: str
    stackup: Stackup | None
    #: file name -> ``FileFunction`` split on commas, e.g. ("Copper", "L2", "Inr", "Plane")
    file_functions: dict[str, tuple[str, ...]] = field(default_factory=dict)


def _thickness(item: dict, path: str) -> float:
    value = item.get("Thickness", 0.0)
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise InputError(f"job file stackup layer {item.get('Name', '?')!r} has thickness {value!r}", path=path) from None
    if value < 0:
        raise InputError(f"job file stackup layer {item.get('Name', '?')!r} has negative thickness", path=path)
    return value


def read_job_file(path: Path, display_name: str | None = None) -> JobFile:
    """Read ``MaterialStackup`` (mm, top to bottom) and ``FilesAttributes``."""
    name = display_name or str(path)
    try:
        data = json.loads(path.read_bytes().decode("utf-8-sig"))
    except OSError as exc:
        raise InputError(f"cannot read job file: {exc.strerror or exc}", path=name) from exc
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"job file is not valid JSON: {getattr(exc, 'msg', exc)}", path=name,
                         line=getattr(exc, "lineno", None)) from exc
    if not isinstance(data, dict):
        raise InputError("job file is not a JSON object", path=name)

    functions = {}
    for entry in data.get("FilesAttributes", []) or []:
        if isinstance(entry, dict) and entry.get("Path") and entry.get("FileFunction"):
            functions[Path(str(entry["Path"])).name] = tuple(p.strip() for p in str(entry["FileFunction"]).split(","))

    layers = []
    copper_index = 0
    for item in data.get("MaterialStackup", []) or []:
        if not isinstance(item, dict):
            continue
        kind = str(item.get("Type", "")).lower()
        label = str(item.get("Name", kind))
        eps = item.get("DielectricConstant")
        eps = float(eps) if isinstance(eps, (int, float)) or (isinstance(eps, str) and _is_float(eps)) else None
        if kind == "copper":
            layers.append(StackupLayer("copper", label, _thickness(item, name), None, copper_index))
            copper_index += 1
        elif kind == "dielectric":
            layers.append(StackupLayer("dielectric", label, _thickness(item, name), eps))
        elif kind == "soldermask":
            layers.append(StackupLayer("soldermask", label, _thickness(item, name), eps))
    stackup = Stackup(tuple(layers), "job-file") if copper_index else None
    return JobFile(name, stackup, functions)


def _is_float(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True
