"""``nearfar waive``: write a waiver entry from a finding of a report."""
from __future__ import annotations

import datetime as dt
import tomllib
from pathlib import Path

import click

from scanner.errors import InputError
from scanner.outputs import replace_file
from scanner.signoff.records import read_report, report_path
from scanner.signoff.waiver_entry import next_waiver_id, pick_finding, waiver_entry
from scanner.signoff.waiver_match import utc_today
from scanner.signoff.waivers import DEFAULT_MARGIN_PCT, load_waivers, waivers_document


class DateType(click.ParamType):
    name = "DATE"

    def convert(self, value, param, ctx):
        if isinstance(value, dt.date):
            return value
        try:
            return dt.date.fromisoformat(value)
        except ValueError:
            self.fail(f"{value!r} is not a date (2026-03-01)", param, ctx)


@click.command("waive")
@click.argument("report_dir", type=click.Path(path_type=Path))
@click.option("--rank", type=click.IntRange(min=1), default=None, help="The finding's rank in the report.")
@click.option("--victim", default=None, help="The finding's victim net (with --aggressor, instead of --rank).")
@click.option("--aggressor", default=None, help="The finding's aggressor net.")
@click.option("--reason", required=True, help="Why the risk is accepted.")
@click.option("--by", "accepted_by", required=True, help="Who accepted it.")
@click.option("--on", "accepted_on", type=DateType(), default=None, help="When it was accepted [default: today].")
@click.option("--expires", "expires_on", type=DateType(), default=None, help="Last day the waiver holds.")
@click.option("--margin", "margin_pct", type=click.FloatRange(min=0, max=100, max_open=True),
              default=DEFAULT_MARGIN_PCT, show_default=True,
              help="Percent by which the run may grow longer, come closer or use more budget and stay covered.")
@click.option("--id", "waiver_id", default=None, help="The waiver's id [default: the next free W<n>].")
@click.option("--no-area", is_flag=True, help="Cover the net pair on that layer anywhere, not just around this run.")
@click.option("--to", "to_file", type=click.Path(path_type=Path, dir_okay=False), default=None,
              help="Waivers file to add the entry to (made when missing); without it the entry is printed.")
def command(report_dir, rank, victim, aggressor, reason, accepted_by, accepted_on, expires_on, margin_pct,
            waiver_id, no_area, to_file):
    """Write a [[waiver]] entry for one finding of the report in REPORT_DIR, named by its rank or by its
    victim and aggressor. The entry records the run as it is now (coupled length, closest spacing, budget
    used): the waiver stops covering the finding when the run gets worse than that by more than the margin.
    """
    report = read_report(report_dir)
    source = str(report_path(report_dir))
    finding = pick_finding(report, source, rank, victim, aggressor)
    accepted_on = accepted_on or utc_today()
    if expires_on is not None and expires_on < accepted_on:
        raise click.BadParameter("the expiry date is before the acceptance date", param_hint="--expires")
    existing = load_waivers(to_file) if to_file is not None and to_file.exists() else ()
    ids = {w.id for w in existing}
    waiver_id = waiver_id or next_waiver_id(ids)
    if waiver_id in ids:
        raise InputError(f"waiver id '{waiver_id}' is already used", to_file)
    entry = waiver_entry(finding, report, waiver_id, reason, accepted_by, accepted_on, expires_on, margin_pct,
                         with_area=not no_area)
    if to_file is None:
        click.echo(entry, nl=False)
        return 0
    before = to_file.read_text(encoding="utf-8") if to_file.exists() else ""
    text = before + ("\n" if before and not before.endswith("\n\n") else "") + entry
    waivers_document(tomllib.loads(text), str(to_file))  # the file as it will be reads back whole
    replace_file(to_file, text)
    click.echo(f"waiver {waiver_id} for {finding.victim} <- {finding.aggressor} added to {to_file}", err=True)
    return 0
