"""The ``nearfar`` command: a thin shell over the library."""
from __future__ import annotations

import importlib
import sys

import click

from scanner.errors import InputError, printable
from scanner.memory import OUT_OF_MEMORY_STATUS, out_of_memory_line

#: subcommands, each a module in scanner.commands exposing a click command named ``command``
COMMAND_MODULES = ("inspect", "section", "scan")


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="nearfar")
def cli():
    """Audit a routed board for crosstalk from its fabrication files."""


for _name in COMMAND_MODULES:
    try:
        _module = importlib.import_module(f"scanner.commands.{_name}")
    except ModuleNotFoundError as exc:
        if exc.name != f"scanner.commands.{_name}":
            raise
        continue
    cli.add_command(_module.command)


def main(argv=None) -> int:
    """Entry point: bad input becomes one line on stderr and exit status 2."""
    try:
        rv = cli.main(args=argv, standalone_mode=False)
    except InputError as exc:
        click.echo(f"nearfar: error: {exc.one_line()}", err=True)
        return _exit(2)
    except click.exceptions.Abort:
        click.echo("nearfar: aborted", err=True)
        return _exit(130)
    except click.ClickException as exc:
        exc.show()
        return _exit(exc.exit_code)
    except MemoryError as exc:
        click.echo(out_of_memory_line(exc), err=True)
        return _exit(OUT_OF_MEMORY_STATUS)
    except OSError as exc:
        where = f"{exc.filename}: " if exc.filename else ""
        click.echo(f"nearfar: error: {printable(f'{where}{exc.strerror or exc}')}", err=True)
        return _exit(2)
    return _exit(rv if isinstance(rv, int) else 0)


def _exit(code: int) -> int:
    sys.exit(code)
