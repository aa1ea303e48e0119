"""report.json and hotspots.csv (one row per coupled run, its worse direction first), written atomically."""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from scanner.outputs import write_atomic
from scanner.scoring.results import ScanResult

CSV_COLUMNS = ("rank", "id", "status", "victim", "aggressor", "victim_class", "aggressor_class", "layer", "structure",
               "coupled_length_mm", "min_spacing_mm", "mean_spacing_mm", "x_mm", "y_mm", "next_mv", "fext_mv",
               "next_pct", "fext_pct", "next_budget_mv", "fext_budget_mv", "budget_used_pct", "aggressor_model",
               "other_way_status", "other_way_budget_used_pct", "fix_spacing_needed_mm", "fix_max_length_mm",
               "fix_layer", "fix_together_with")


def report_json(result: ScanResult) -> str:
    return json.dumps(result.to_dict(), indent=1, allow_nan=False) + "\n"


def hotspots_csv(result: ScanResult) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
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
        w.writerow(["" if d.get(k) is None else d.get(k) for k in CSV_COLUMNS])
    return buf.getvalue()


def write_tables(result: ScanResult, out_dir: Path) -> list[Path]:
    return [write_atomic(out_dir / "hotspots.csv", hotspots_csv(result)),
            write_atomic(out_dir / "report.json", report_json(result))]
