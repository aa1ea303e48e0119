"""The ``nearfar`` command: a thin shell over the library."""
from __future__ import annotations

import importlib
import sys
import traceback

import click

from scanner.errors import InputError, being_read, printable

#: subcommands, each a module in scanner.commands exposing a click command named ``command``
COMMAND_MODULES = ("inspect", "section", "scan")


#: exit status of an internal error (a bug in nearfar, not bad input)
INTERNAL_ERROR = 4

#: set by ``--debug``: internal errors print their traceback
_debug = {"on": False}


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="nearfar")
@click.option("--debug", is_flag=True, help="On an internal error, print the Python traceback as well.")
def cli(debug):
    """Audit a routed board for crosstalk from its fabrication files.

    Exit status: 0 pass, 1 violations found, 2 bad input, 4 internal error (please report it)."""
    _debug["on"] = debug


for _name in COMMAND_MODULES:
    try:
        _module = importlib.import_module(f"scanner.commands.{_name}")
    except ModuleNotFoundError as exc:
        if exc.name != f"scanner.commands.{_name}":
            raise
        continue
    cli.add_command(_module.command)


def main(argv=None) -> int:
    """Entry point: bad input becomes one line on stderr and exit status 2; an internal error one line and 4."""
    _debug["on"] = False
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
    except OSError as exc:
        where = f"{exc.filename}: " if exc.filename else ""
        click.echo(f"nearfar: error: {printable(f'{where}{exc.strerror or exc}')}", err=True)
        return _exit(2)
    except Exception as exc:  # a bug: one line (the traceback with --debug), never the code for violations
        return _exit(_internal_error(exc))
    return _exit(rv if isinstance(rv, int) else 0)


def _internal_error(exc: Exception) -> int:
    if _debug["on"]:
        traceback.print_exception(exc, file=sys.stderr)
    where = being_read(exc)
    what = printable(" ".join(f"{type(exc).__name__}: {exc}".split()))[:200]
    click.echo(f"nearfar: internal error{' while reading ' + where if where else ''}: {what}; please report "
               f"this with the files (run with --debug for the traceback)", err=True)
    return INTERNAL_ERROR


def _exit(code: int) -> int:
    sys.exit(code)
