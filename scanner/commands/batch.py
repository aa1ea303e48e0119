"""``nearfar batch``: many boards at once on a Dask cluster, one report folder each and a summary."""
from __future__ import annotations

import dataclasses
import sys
from pathlib import Path

import click

from scanner.batch.boards import expand_boards
from scanner.batch.rows import counts, exit_status, worst_first
from scanner.batch.run import run_batch
from scanner.batch.summary import CSV_FILE, INDEX_FILE, JSON_FILE
from scanner.commands.options import stackup_option, stackup_override
from scanner.errors import printable
from scanner.rules import load_rules
from scanner.scoring.results import CAUTION

#: boards listed on the terminal at the end (all are in batch.csv)
SHOWN_ROWS = 25


@click.command("batch")
@click.argument("boards", nargs=-1, required=True)
@click.option("--rules", "rules_path", type=click.Path(path_type=Path), default=None,
              help="Rules file (TOML) for every board. Defaults are used without one.")
@stackup_option
@click.option("--out", "out_dir", type=click.Path(path_type=Path, file_okay=False), default=Path("nearfar-batch"),
              show_default=True, help="Folder for one report folder per board and batch.json, batch.csv, index.html.")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Run on an existing Dask cluster (tcp://host:port). Its workers need nearfar installed and "
                   "must see the boards and --out at the same paths.")
@click.option("--workers", type=click.IntRange(min=1), default=None,
              help="Worker processes of the local cluster [default: one per core].")
@click.option("--force", is_flag=True, help="Scan every board again, even when its files and the rules are unchanged.")
@click.option("--no-images", is_flag=True, help="Only report.json and hotspots.csv per board: no images or page.")
def command(boards, rules_path, stackup_path, out_dir, scheduler, workers, force, no_images):
    """Scan many BOARDS (folders or archives, as for `nearfar scan`; @FILE reads board paths from FILE, one a
    line) on Dask: a local cluster of worker processes, or the cluster at --scheduler. Each board gets its
    report folder under --out; batch.json, batch.csv and index.html list them all, worst first. Boards
    whose files and rules are unchanged since their last report are not scanned again.

    \b
    Exit status:
      0  every board checked completely and within budget
      1  some board fails
      2  bad input to the command itself (rules, stackup, list file, scheduler)
      3  none fails, but some board is incomplete or refused as bad input
      4  none fails, but nearfar hit an internal error on some board
    """
    if scheduler is not None and workers is not None:
        raise click.UsageError("--workers sets the size of the local cluster; it does not apply with --scheduler")
    entries, notes = expand_boards(list(boards))
    for note in notes:
        click.echo(f"note: {printable(note)}", err=True)
    rules = load_rules(rules_path)
    rules = dataclasses.replace(rules, stackup=stackup_override(stackup_path, rules.stackup))
    rows, run = run_batch(entries, rules, rules_path, out_dir, stackup_path=stackup_path, scheduler=scheduler, workers=workers,
                          images=not no_images, force=force, progress_stream=sys.stderr, live=sys.stderr.isatty())
    click.echo(_terminal_summary(rows, run, out_dir))
    return exit_status(rows)


def _terminal_summary(rows, run, out_dir: Path) -> str:
    tally = ", ".join(f"{n} {v}" for v, n in counts(rows).items() if n)
    reused = sum(1 for r in rows if r.reused)
    lines = [f"nearfar batch: {len(rows)} boards ({tally}) on {run['cluster']} in {run['seconds']:.1f} s"
             + (f"; {reused} unchanged since the last run" if reused else "")]
    header = ("verdict", "board", "worst victim", "used", "why")
    table = [(r.verdict.upper() if r.verdict == "fail" else r.verdict, _trim_start(r.board, 40), _trim(r.worst_victim or "-", 18),
              "-" if r.worst_budget_used is None else f"{100 * r.worst_budget_used:.0f}%", _trim(r.reason, 70))
             for r in worst_first(rows)[:SHOWN_ROWS]]
    widths = [max(len(row[i]) for row in table + [header]) for i in range(len(header))]
    lines += ["  ".join(c.rjust(w) if i == 3 else c.ljust(w) for i, (c, w) in enumerate(zip(row, widths))).rstrip()
              for row in [header] + table]
    if len(rows) > SHOWN_ROWS:
        lines.append(f"… {len(rows) - SHOWN_ROWS} more boards in {CSV_FILE}")
    lines.append(f"summary: {printable(str(out_dir / INDEX_FILE))} ({JSON_FILE}, {CSV_FILE} beside it)")
    lines.append(f"caution: {CAUTION}")
    return "\n".join(lines)


def _trim(text: str, width: int) -> str:
    text = printable(text)
    return text if len(text) <= width else text[: width - 1] + "…"


def _trim_start(text: str, width: int) -> str:
    """Long paths lose their start: the end names the board."""
    text = printable(text)
    return text if len(text) <= width else "…" + text[-(width - 1):]
