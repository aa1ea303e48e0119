"""Gerber job files (``.gbrjob``): stackup and per-file functions from the JSON form; board facts from the
older form written in Gerber syntax (``%TF.FileFunction,JobInfo*%`` with ``%TJ…*%`` attributes)."""
from __future__ import annotations

import json
import re
from dataclasses import dataclass, field
from pathlib import Path

from scanner.board.model import Stackup, StackupLayer
from scanner.errors import InputError, printable
from scanner.input_limits import check_range, read_input


@dataclass
class JobFile:
    path: str
    stackup: Stackup | None
    #: file name -> ``FileFunction`` split on commas, e.g. ("Copper", "L2", "Inr", "Plane")
    file_functions: dict[str, tuple[str, ...]] = field(default_factory=dict)
    #: what was left out of the stackup, and why
    warnings: list[str] = field(default_factory=list)
    #: copper layer count the job file states, if any
    copper_layers: int | None = None


_JOB_ATTRIBUTE = re.compile(r"%TJ\.(\w+),([^*%]*)\*%")


def _gerber_syntax_job(text: str, name: str) -> JobFile:
    """The Gerber-syntax job file: its board thickness and layer count, stated in a warning (no stackup in it)."""
    values = {key: value.strip() for key, value in _JOB_ATTRIBUTE.findall(text)}
    job = JobFile(name, None)
    facts = []
    if (count := values.get("B_LayerNum", "")).isdigit():
        job.copper_layers = int(count)
        facts.append(f"{count} copper layers")
    try:
        facts.append(f"board {float(values['B_Thickness']):g} mm thick")
    except (KeyError, ValueError):
        pass
    job.warnings.append(f"{name}: job file in Gerber syntax (JobInfo); it gives no stackup"
                        + (f" ({', '.join(facts)})" if facts else ""))
    return job


def _number(item: dict, key: str, kind: str, where: str, path: str) -> float | None:
    """``item[key]`` (a JSON number or numeric string) within the physical range of ``kind``; None when absent."""
    value = item.get(key)
    if value is None:
        return None
    return check_range(kind, value if isinstance(value, (int, float, str)) else repr(value),
                       f"job file {where} {key}", path)


def _thickness(item: dict, kind: str, where: str, path: str) -> float:
    value = _number(item, "Thickness", f"{kind} thickness", where, path)
    if value is None:
        raise InputError(f"job file {where} has no Thickness", path=path)
    return value


def _permittivity(item: dict, where: str, path: str) -> float | None:
    return _number(item, "DielectricConstant", "relative permittivity", where, path)


def _list(data: dict, key: str, path: str) -> list:
    value = data.get(key)
    if value is None:
        return []
    if not isinstance(value, list):
        raise InputError(f"job file {key} is not a list", path=path)
    return value


def read_job_file(path: Path, display_name: str | None = None) -> JobFile:
    """Read ``MaterialStackup`` (mm, top to bottom) and ``FilesAttributes``; every value used is checked."""
    name = display_name or str(path)
    raw = read_input(path, name, "job file").decode("utf-8-sig", errors="replace")
    if "FileFunction,JobInfo" in raw[:4096] and not raw.lstrip().startswith("{"):
        return _gerber_syntax_job(raw, name)
    try:
        data = json.loads(raw)
    except (json.JSONDecodeError, RecursionError) as exc:
        raise InputError(f"job file is not valid JSON: {getattr(exc, 'msg', exc)}", path=name,
                         line=getattr(exc, "lineno", None)) from exc
    if not isinstance(data, dict):
        raise InputError("job file is not a JSON object", path=name)

    functions = {}
    for entry in _list(data, "FilesAttributes", name):
        file, function = (entry.get("Path"), entry.get("FileFunction")) if isinstance(entry, dict) else (None, None)
        if isinstance(file, str) and isinstance(function, str):
            functions[Path(file).name] = tuple(p.strip() for p in function.split(","))

    job = JobFile(name, None, functions)
    layers = []
    copper_index = 0
    for number, item in enumerate(_list(data, "MaterialStackup", name), start=1):
        if not isinstance(item, dict):
            raise InputError(f"job file MaterialStackup item {number} is not a JSON object", path=name)
        kind = str(item.get("Type", "")).lower()
        label = printable(str(item.get("Name", kind)))
        where = f"MaterialStackup item {number} ({label!r})"
        if kind == "copper":
            layers.append(StackupLayer("copper", label, _thickness(item, kind, where, name), None, copper_index))
            copper_index += 1
        elif kind == "dielectric":
            thickness, eps = _thickness(item, kind, where, name), _permittivity(item, where, name)
            if eps is None:
                raise InputError(f"job file {where} has no DielectricConstant", path=name)
            layers.append(StackupLayer("dielectric", label, thickness, eps))
        elif kind == "soldermask":
            thickness, eps = _thickness(item, kind, where, name), _permittivity(item, where, name)
            if eps is None:
                job.warnings.append(f"{name}: {where} has no DielectricConstant; solder mask left out of the stackup")
                continue
            layers.append(StackupLayer("soldermask", label, thickness, eps))
    job.stackup = Stackup(tuple(layers), "job-file") if copper_index else None
    return job
