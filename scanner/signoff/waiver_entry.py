"""A ``[[waiver]]`` entry written from a report's finding: names, layer, area and the geometry as accepted."""
from __future__ import annotations

import datetime as dt
import json
import tomllib

from scanner.errors import InputError
from scanner.signoff.records import Entry, finding_entries
from scanner.signoff.waivers import DEFAULT_MARGIN_PCT, parse_waivers

#: the area written around a run's bounding box (mm): room for small moves, not for another run
AREA_MARGIN_MM = 1.0


def pick_finding(report: dict, source: str, rank: int | None = None, victim: str | None = None,
                 aggressor: str | None = None) -> Entry:
    """The listed noise finding of that rank, or the one of that victim and aggressor (names as in the report)."""
    findings = [e for e in finding_entries(report) if e.kind == "noise"]
    if rank is not None:
        hit = [e for e in findings if e.rank == rank]
        if not hit:
            raise InputError(f"the report lists no finding of rank {rank} (ranks 1 to {len(findings)})", source)
        if victim is not None or aggressor is not None:
            raise InputError("name a finding by its rank or by victim and aggressor, not both", source)
        return hit[0]
    if victim is None or aggressor is None:
        raise InputError("name a finding by --rank, or by --victim and --aggressor", source)
    hit = [e for e in findings if e.victim.upper() == victim.upper() and e.aggressor.upper() == aggressor.upper()]
    if not hit:
        raise InputError(f"the report lists no finding with victim {victim} and aggressor {aggressor}", source)
    if len(hit) > 1:
        ranks = ", ".join(str(e.rank) for e in hit)
        raise InputError(f"{len(hit)} findings have victim {victim} and aggressor {aggressor} (ranks {ranks}); "
                         "give --rank", source)
    return hit[0]


def _toml_text(value: str) -> str:
    """A TOML basic string (JSON's escapes are TOML's; DEL must be escaped in TOML)."""
    return json.dumps(value, ensure_ascii=False).replace("\x7f", "\\u007f")


def waiver_entry(finding: Entry, report: dict, waiver_id: str, reason: str, accepted_by: str,
                 accepted_on: dt.date, expires_on: dt.date | None = None,
                 margin_pct: float = DEFAULT_MARGIN_PCT, with_area: bool = True) -> str:
    """The TOML text of one ``[[waiver]]`` table for ``finding``; checked by reading it back."""
    x0, y0, x1, y1 = finding.bbox_mm
    lines = ["[[waiver]]",
             f"# from finding #{finding.rank} of nearfar run {report.get('run_id')} ({report.get('created')}): "
             f"{finding.status}, {finding.budget_used_pct:.0f} % of budget",
             f"id = {_toml_text(waiver_id)}",
             f"victim = {_toml_text(finding.victim)}",
             f"aggressor = {_toml_text(finding.aggressor)}",
             f"layer = {_toml_text(finding.layer)}"]
    if with_area:
        area = [round(x0 - AREA_MARGIN_MM, 3), round(y0 - AREA_MARGIN_MM, 3),
                round(x1 + AREA_MARGIN_MM, 3), round(y1 + AREA_MARGIN_MM, 3)]
        lines.append(f"area_mm = [{', '.join(f'{v:g}' for v in area)}]")
    lines += [f"reason = {_toml_text(reason)}",
              f"accepted_by = {_toml_text(accepted_by)}",
              f"accepted_on = {accepted_on.isoformat()}"]
    if expires_on is not None:
        lines.append(f"expires_on = {expires_on.isoformat()}")
    lines += [f"coupled_length_mm = {finding.coupled_length_mm:g}",
              f"min_spacing_mm = {finding.min_spacing_mm:g}",
              f"budget_used_pct = {round(finding.budget_used_pct, 2):g}",
              f"margin_pct = {margin_pct:g}"]
    text = "\n".join(lines) + "\n"
    parse_waivers(tomllib.loads(text)["waiver"], "the new waiver entry")
    return text


def next_waiver_id(existing_ids: set[str]) -> str:
    """W<n> for the smallest n not taken."""
    n = 1
    while f"W{n}" in existing_ids:
        n += 1
    return f"W{n}"
