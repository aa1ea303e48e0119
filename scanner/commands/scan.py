"""``nearfar scan``: the main job."""
from __future__ import annotations

import dataclasses
import sys
import time
from pathlib import Path

import click

from scanner.commands.options import stackup_option, stackup_override
from scanner.errors import InputError
from scanner.outputs import replace_file
from scanner.report.text import render
from scanner.scan_job import check_output, scan_board, write_outputs
from scanner.signoff.compare import compare_reports
from scanner.signoff.junit import junit_xml
from scanner.signoff.records import read_report
from scanner.signoff.rules_input import rules_with_waivers


@click.command("scan")
@click.argument("board", type=click.Path(path_type=Path))
@click.option("--rules", "rules_path", type=click.Path(path_type=Path), default=None,
              help="Rules file (TOML): net classes, budgets, pairs, stackup. Defaults are used and printed without one.")
@click.option("--board-file", type=click.Path(path_type=Path), default=None,
              help="Board description (TOML) naming layers in stack order, planes and netlist, for files nothing can guess.")
@stackup_option
@click.option("--out", "out_dir", type=click.Path(path_type=Path, file_okay=False), default=None,
              help="Folder for report.json, hotspots.csv, images and report.html.")
@click.option("--top", type=click.IntRange(min=1), default=20, show_default=True,
              help="Hotspots listed on the terminal.")
@click.option("--json", "as_json", is_flag=True, help="Print report.json to standard output instead of the table.")
@click.option("--no-images", is_flag=True, help="Skip overlay images, waveform plots and the report page.")
@click.option("--waivers", "waivers_path", type=click.Path(path_type=Path, dir_okay=False), default=None,
              help="Waivers file (TOML, [[waiver]] tables): accepted risks, added to any in the rules file.")
@click.option("--baseline", "baseline_dir", type=click.Path(path_type=Path), default=None,
              help="Report folder of an earlier scan: list what got fixed, new, worse or better since then.")
@click.option("--junit", "junit_path", type=click.Path(path_type=Path, dir_okay=False), default=None,
              help="Also write the result as JUnit XML (one test case per victim) for CI systems.")
@click.option("--step", default=None, metavar="NAME", help="The step of an ODB++ job to read, when it has several.")
def command(board, rules_path, board_file, stackup_path, out_dir, top, as_json, no_images, waivers_path, baseline_dir,
            junit_path, step):
    """Find parallel runs between nets on BOARD (a folder or .zip of Gerber, drill and netlist files, or an
    ODB++ job folder or .tgz), predict NEXT and FEXT on every victim, check the net-class budgets and rank
    the hotspots.

    Every layer with traces is scanned: against its nearest plane, or, on a board without planes, against
    the far side of the board (said in the report). The first line gives the verdict and how much signal
    trace was checked.

    \b
    Exit status:
      0  pass: the whole board checked, every victim within budget
      1  fail: some victim over budget, or a geometric limit broken (waived findings excepted)
      2  bad input (one line naming the file)
      3  incomplete: nothing over budget, but part of the board was not checked
         (a layer skipped by the rules, trace without a net, an import gap)
      4  internal error in nearfar
    """
    show_progress = not as_json and sys.stderr.isatty()
    started = time.perf_counter()

    def progress(msg: str) -> None:
        if show_progress:
            click.echo(f"[{time.perf_counter() - started:6.1f} s] {msg}", err=True)

    if junit_path is not None and not junit_path.parent.is_dir():
        raise InputError("the folder for the JUnit file does not exist", path=junit_path)
    if out_dir is not None:
        check_output(board, out_dir)  # before the long part: a folder that cannot be written stops the run now
    rules = rules_with_waivers(rules_path, waivers_path)
    rules = dataclasses.replace(rules, stackup=stackup_override(stackup_path, rules.stackup))
    baseline = read_report(baseline_dir) if baseline_dir is not None else None
    the_board, result = scan_board(board, rules, board_file=board_file, step=step, progress=progress)
    if baseline is not None:
        result.comparison = compare_reports(baseline, result.to_dict(), str(baseline_dir), "this scan")
    report = write_outputs(result, the_board, out_dir, images=not no_images, progress=progress)
    if junit_path is not None:
        replace_file(junit_path, junit_xml(result, time.perf_counter() - started))
    if as_json:
        click.echo(report, nl=False)
    else:
        click.echo(render(result, top=top))
    progress("done")
    return result.exit_code

