"""batch.json, batch.csv and index.html: the boards of a batch, worst first, written atomically."""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from scanner.batch.index_page import render_index
from scanner.batch.rows import COLUMNS, BoardRow, counts, exit_status, worst_first
from scanner.outputs import replace_file
from scanner.scoring.results import CAUTION

SCHEMA = "nearfar.batch/1"
JSON_FILE = "batch.json"
CSV_FILE = "batch.csv"
INDEX_FILE = "index.html"


def batch_dict(rows: list[BoardRow], run: dict) -> dict:
    """``run`` says how the batch ran (nearfar version, rules, images, cluster, started_utc, seconds)."""
    return {"schema": SCHEMA, "caution": CAUTION, **run, "counts": counts(rows), "exit_status": exit_status(rows),
            "boards": [r.to_dict() for r in worst_first(rows)]}


def batch_csv(rows: list[BoardRow]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    for r in worst_first(rows):
        w.writerow(["" if v is None else v for v in r.to_dict().values()])
    return buf.getvalue()


def write_summary(rows: list[BoardRow], run: dict, out_dir: Path) -> list[Path]:
    """The three summary files in ``out_dir``; the page last, once the data it links is there."""
    summary = batch_dict(rows, run)
    return [replace_file(out_dir / JSON_FILE, json.dumps(summary, indent=1, allow_nan=False) + "\n"),
            replace_file(out_dir / CSV_FILE, batch_csv(rows)),
            replace_file(out_dir / INDEX_FILE, render_index(summary, out_dir, data_files=(JSON_FILE, CSV_FILE)))]
