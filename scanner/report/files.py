"""report.json and hotspots.csv as text (one row per coupled run, its worse direction first)."""
from __future__ import annotations

import csv
import io
import json
import math

from scanner.errors import InternalError
from scanner.scoring.results import ScanResult

CSV_COLUMNS = ("rank", "id", "status", "victim", "aggressor", "victim_class", "aggressor_class", "layer", "structure",
               "coupled_length_mm", "min_spacing_mm", "mean_spacing_mm", "x_mm", "y_mm", "next_mv", "fext_mv",
               "next_pct", "fext_pct", "next_budget_mv", "fext_budget_mv", "budget_used_pct", "aggressor_model",
               "other_way_status", "other_way_budget_used_pct", "fix_spacing_needed_mm", "fix_max_length_mm",
               "fix_layer", "fix_together_with", "waived_by")

#: first characters that make a spreadsheet read a cell as a formula (or hide the start of one)
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def json_text(data, what: str, **dump_args) -> str:
    """``data`` as JSON text; a value that is not a finite number (JSON has no NaN or Infinity) is refused
    as an internal error naming where it is, before anything is written or printed."""
    try:
        return json.dumps(data, allow_nan=False, **dump_args) + "\n"
    except ValueError:
        where = not_finite_at(data)
        if where is None:
            raise
        raise InternalError(f"{what}: {where} is not a finite number; nothing was written") from None


def not_finite_at(data, where: str = "") -> str | None:
    """The first place in nested dicts and lists holding NaN or an infinity (``hotspots[3].next_mv``)."""
    if isinstance(data, float):
        return None if math.isfinite(data) else f"{where or 'the value'} ({data})"
    items = data.items() if isinstance(data, dict) else enumerate(data) if isinstance(data, (list, tuple)) else ()
    for key, value in items:
        inner = f"{where}[{key}]" if isinstance(key, int) else f"{where}.{key}" if where else str(key)
        if (found := not_finite_at(value, inner)) is not None:
            return found
    return None


def report_json(result: ScanResult) -> str:
    return json_text(result.to_dict(), "report.json", indent=1)


def spreadsheet_safe(value):
    """A text cell a spreadsheet would run as a formula gets a leading apostrophe (numbers stay numbers)."""
    if isinstance(value, str) and value.startswith(FORMULA_START):
        return "'" + value
    return value


def hotspots_csv(result: ScanResult) -> str:
    """One row per listed hotspot under a header; the first line, a comment, names the run. Lines end in CRLF
    as RFC 4180 has it, which also makes the writer quote a cell holding a carriage return."""
    buf = io.StringIO()
    buf.write(f"# nearfar run {result.run_id}, {result.created}\r\n")
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(CSV_COLUMNS)
    for h in result.hotspots:
        worse = h.directions[0]
        d = h.to_dict() | worse.to_dict()
        other = h.directions[1] if len(h.directions) > 1 else None
        fix = h.fix or {}
        d["other_way_status"] = other.status if other else None
        d["other_way_budget_used_pct"] = other.budget_used_pct if other else None
        d["fix_spacing_needed_mm"] = fix.get("spacing_needed_mm")
        d["fix_max_length_mm"] = fix.get("max_length_mm")
        d["fix_layer"] = (fix.get("alternative_layer") or {}).get("layer")
        d["fix_together_with"] = " ".join(fix.get("together_with") or []) or None
        d["waived_by"] = h.waiver["id"] if h.waived else None
        w.writerow(["" if d.get(k) is None else spreadsheet_safe(d.get(k)) for k in CSV_COLUMNS])
    return buf.getvalue()
