"""Reading finished reports: a report folder's report.json, and its findings in the shape comparisons use.

``finding_entries`` is the one place that reads finding records; a change to the record layout (one
entry per coupled run holding both directions, say) is adapted there.
"""
from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

from scanner.errors import InputError
from scanner.input_limits import read_input

REPORT_FILE = "report.json"
SCHEMA_PREFIX = "nearfar.report/"


@dataclass(frozen=True)
class Entry:
    """One finding of a report as a comparison sees it."""

    kind: str  # "noise" or "geometric"
    pair: tuple[str, str]  # the two net names, sorted: the same for either direction
    victim: str
    aggressor: str
    layer: str  # the layer carrying most of the run
    layers: tuple[str, ...]
    x_mm: float
    y_mm: float
    bbox_mm: tuple[float, float, float, float]
    status: str
    waived: bool
    budget_used_pct: float
    coupled_length_mm: float
    min_spacing_mm: float
    rank: int | None

    def figures(self) -> dict:
        return {"rank": self.rank, "status": self.status, "waived": self.waived,
                "budget_used_pct": round(self.budget_used_pct, 2), "coupled_length_mm": self.coupled_length_mm,
                "min_spacing_mm": self.min_spacing_mm, "x_mm": self.x_mm, "y_mm": self.y_mm}


def report_path(path: str | Path) -> Path:
    """report.json of a report folder, or the file itself when given."""
    path = Path(path)
    return path / REPORT_FILE if path.is_dir() else path


def is_report(path: str | Path) -> bool:
    """``path`` is a report folder (or a report.json), not a board."""
    p = Path(path)
    return (p.is_dir() and (p / REPORT_FILE).is_file()) or (p.is_file() and p.suffix.lower() == ".json")


def read_report(path: str | Path) -> dict:
    """The report a scan wrote; anything else is an InputError naming the file."""
    file = report_path(path)
    if not file.is_file():
        raise InputError("no report.json here (give a folder written by nearfar scan --out)", file)
    try:
        report = json.loads(read_input(file, str(file), "report"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"not a readable report: {exc}", file) from None
    if not isinstance(report, dict) or not str(report.get("schema", "")).startswith(SCHEMA_PREFIX):
        raise InputError(f"not a nearfar report (no '{SCHEMA_PREFIX}…' schema)", file)
    return report


def _budget_used_pct(record: dict) -> float:
    return float(record["budget_used_pct"]) if "budget_used_pct" in record else 100 * float(record["budget_used"])


def finding_entries(report: dict, every_direction: bool = True) -> list[Entry]:
    """The report's listed noise findings and geometric findings.

    A noise record is one coupled run holding both directions (schema 2): one entry per direction, worse
    first and sharing the run's rank, or with ``every_direction`` false only the worse one (a run compared
    as a whole). Older reports hold one direction per record."""
    out = []
    for h in report.get("hotspots", []):
        directions = h.get("directions") or [h]
        for d in directions if every_direction else directions[:1]:
            waiver = d.get("waiver") or {}
            out.append(Entry("noise", tuple(sorted((d["victim"], d["aggressor"]))), d["victim"], d["aggressor"],
                             h["layer"], tuple(h.get("layers") or [h["layer"]]), h["x_mm"], h["y_mm"],
                             tuple(h["bbox_mm"]), d["status"], waiver.get("state") == "waived", _budget_used_pct(d),
                             h["coupled_length_mm"], h["min_spacing_mm"], h.get("rank")))
    for k, g in enumerate(report.get("geometric", []), 1):
        waiver = g.get("waiver") or {}
        out.append(Entry("geometric", tuple(sorted((g["victim"], g["aggressor"]))), g["victim"], g["aggressor"],
                         g["layers"][0], tuple(g["layers"]), g["x_mm"], g["y_mm"], (g["x_mm"], g["y_mm"], g["x_mm"], g["y_mm"]),
                         g["status"], waiver.get("state") == "waived", 100 * g["parallel_mm"] / g["max_parallel_mm"],
                         g["parallel_mm"], g["min_spacing_mm"], k))
    return out


@dataclass(frozen=True)
class VictimState:
    status: str
    budget_used_pct: float
    waivers: tuple[str, ...]


def victim_states(report: dict) -> dict[str, VictimState]:
    """Each victim's status and budget used, by net name."""
    return {v["net"]: VictimState(v["status"], _budget_used_pct(v), tuple(v.get("waivers") or ()))
            for v in report.get("victims", [])}


def coupled_pairs(report: dict) -> set[tuple[str, str]]:
    """(victim, aggressor) of every scored finding, listed or not (from the victims' aggressor lists)."""
    return {(v["net"], a["aggressor"] if isinstance(a, dict) else a)
            for v in report.get("victims", []) for a in v.get("aggressors", [])}
