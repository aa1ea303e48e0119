"""``nearfar compare``: what changed between two revisions of a board."""
from __future__ import annotations

import dataclasses
import sys
import time
from pathlib import Path

import click

from scanner import load_board, scan
from scanner.commands.options import stackup_option, stackup_override
from scanner.report.files import json_text
from scanner.signoff.compare import MOVE_TOLERANCE_MM, THRESHOLD_PCT, compare_reports
from scanner.signoff.compare_text import render_comparison
from scanner.signoff.records import is_report, read_report
from scanner.signoff.rules_input import rules_with_waivers


@click.command("compare")
@click.argument("old", type=click.Path(path_type=Path))
@click.argument("new", type=click.Path(path_type=Path))
@click.option("--rules", "rules_path", type=click.Path(path_type=Path), default=None,
              help="Rules file for scanning OLD or NEW when either is a board rather than a report folder.")
@stackup_option
@click.option("--waivers", "waivers_path", type=click.Path(path_type=Path, dir_okay=False), default=None,
              help="Waivers file (TOML) for scanning a board given as OLD or NEW.")
@click.option("--tolerance", "move_tolerance_mm", type=click.FloatRange(min=0), default=MOVE_TOLERANCE_MM,
              show_default=True, help="How far (mm) a run may move and still be the same finding.")
@click.option("--threshold", "threshold_pct", type=click.FloatRange(min=0, min_open=True), default=THRESHOLD_PCT,
              show_default=True, help="Change in budget used (percentage points) that counts as worse or better.")
@click.option("--top", type=click.IntRange(min=1), default=40, show_default=True, help="Changed findings listed.")
@click.option("--json", "as_json", is_flag=True, help="Print the comparison as JSON instead of the table.")
def command(old, new, rules_path, stackup_path, waivers_path, move_tolerance_mm, threshold_pct, top, as_json):
    """Compare two revisions: OLD and NEW are report folders written by `nearfar scan --out`, or boards
    (scanned here with the same rules). Lists findings fixed, new, worse and better, matched by net pair
    and location, and victims whose status changed.

    Exit status: 1 when a finding got worse, a new finding is over or near budget, a victim's status or the
    verdict got worse; 0 otherwise; 2 bad input.
    """
    started = time.perf_counter()
    show_progress = not as_json and sys.stderr.isatty()
    rules = None

    def report_of(path: Path) -> dict:
        nonlocal rules
        if is_report(path):
            return read_report(path)
        if rules is None:
            rules = rules_with_waivers(rules_path, waivers_path)
            rules = dataclasses.replace(rules, stackup=stackup_override(stackup_path, rules.stackup))
        if show_progress:
            click.echo(f"[{time.perf_counter() - started:6.1f} s] scanning {path}", err=True)
        return scan(load_board(path), rules).to_dict()

    comparison = compare_reports(report_of(old), report_of(new), str(old), str(new), move_tolerance_mm,
                                 threshold_pct)
    if as_json:
        click.echo(json_text(comparison, "comparison", indent=1), nl=False)
    else:
        click.echo(render_comparison(comparison, top=top))
    return 1 if comparison["regressed"] else 0
