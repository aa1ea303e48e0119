"""Options several commands share."""
from __future__ import annotations

from pathlib import Path

import click

from scanner.board.model import Stackup
from scanner.importers.stackup_file import read_stackup_file

stackup_option = click.option(
    "--stackup", "stackup_path", type=click.Path(path_type=Path), default=None,
    help="Stackup file: a CSV table as fabricators publish it (name, type, thickness with its unit in the header, "
         "dielectric constant, copper weight in oz) or a TOML [stackup] table. Replaces the board's own and the "
         "rules' stackup.")


def stackup_override(path: Path | None, fallback: Stackup | None = None) -> Stackup | None:
    """The stackup read from ``path`` when given, else ``fallback`` (the rules' ``[stackup]``)."""
    return read_stackup_file(path) if path is not None else fallback
