"""report.json and hotspots.csv, written atomically."""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from scanner.outputs import write_atomic
from scanner.scoring.results import ScanResult

CSV_COLUMNS = ("rank", "status", "victim", "aggressor", "victim_class", "aggressor_class", "layer", "structure",
               "coupled_length_mm", "min_spacing_mm", "mean_spacing_mm", "x_mm", "y_mm", "next_mv", "fext_mv",
               "next_pct", "fext_pct", "next_budget_mv", "fext_budget_mv", "budget_used", "aggressor_model",
               "fix_spacing_needed_mm", "fix_max_length_mm", "fix_layer")


def report_json(result: ScanResult) -> str:
    return json.dumps(result.to_dict(), indent=1, allow_nan=False) + "\n"


def hotspots_csv(result: ScanResult) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for h in result.hotspots:
        d = h.to_dict()
        fix = h.fix or {}
        d["fix_spacing_needed_mm"] = fix.get("spacing_needed_mm")
        d["fix_max_length_mm"] = fix.get("max_length_mm")
        d["fix_layer"] = (fix.get("alternative_layer") or {}).get("layer")
        w.writerow(["" if d.get(k) is None else d.get(k) for k in CSV_COLUMNS])
    return buf.getvalue()


def write_tables(result: ScanResult, out_dir: Path) -> list[Path]:
    return [write_atomic(out_dir / "hotspots.csv", hotspots_csv(result)),
            write_atomic(out_dir / "report.json", report_json(result))]
