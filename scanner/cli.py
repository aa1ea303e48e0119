"""The ``nearfar`` command: a thin shell over the library."""
from __future__ import annotations

import importlib
import os
import signal
import sys
import traceback

import click

from scanner.errors import InputError, InternalError, being_read, printable
from scanner.memory import out_of_memory_line
from scanner.workspace import Stopped, raise_stopped

#: exit status when nearfar itself fails (0 pass, 1 fail, 2 bad input, 3 incomplete come from the commands)
INTERNAL_ERROR = 4
#: set to 1 to print the traceback of an internal error (as ``nearfar --debug`` does)
DEBUG_VARIABLE = "NEARFAR_DEBUG"

#: set by ``--debug``: internal errors print their traceback
_debug = {"on": False}

#: subcommands, each a module in scanner.commands exposing a click command named ``command``
COMMAND_MODULES = ("inspect", "section", "scan", "stackup", "compare", "waive", "batch")


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="nearfar")
@click.option("--debug", is_flag=True, help="On an internal error, print the Python traceback as well.")
def cli(debug):
    """Audit a routed board for crosstalk from its fabrication files.

    Exit status: 0 pass, 1 violations found, 2 bad input, 3 incomplete, 4 internal error (please report it)."""
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
    """Entry point: bad input becomes one line on stderr and exit status 2.

    SIGTERM unwinds the run like an interrupt (SIGINT) does, so its staging and unpacking folders are
    removed on the way out; exit status 128 + the signal's number."""
    previous = signal.signal(signal.SIGTERM, raise_stopped)
    _debug["on"] = False
    try:
        rv = cli.main(args=argv, standalone_mode=False)
    except Stopped as exc:
        click.echo(f"nearfar: stopped by {exc}", err=True)
        return _exit(128 + exc.signum)
    except InternalError as exc:
        click.echo(f"nearfar: internal error: {printable(str(exc))}", err=True)
        return _exit(INTERNAL_ERROR)
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
        return _exit(INTERNAL_ERROR)
    except OSError as exc:
        where = f"{exc.filename}: " if exc.filename else ""
        click.echo(f"nearfar: error: {printable(f'{where}{exc.strerror or exc}')}", err=True)
        return _exit(2)
    except Exception as exc:  # noqa: BLE001 - a bug must never read as a verdict on the board
        return _exit(_internal_error(exc))
    finally:
        signal.signal(signal.SIGTERM, previous)
    return _exit(rv if isinstance(rv, int) else 0)


def _internal_error(exc: Exception) -> int:
    """One line naming the file being read, if any, and asking for a report; the traceback on request."""
    if _debug["on"] or os.environ.get(DEBUG_VARIABLE):
        traceback.print_exception(exc, file=sys.stderr)
    where = being_read(exc)
    what = printable(" ".join(f"{type(exc).__name__}: {exc}".split()))[:200]
    click.echo(f"nearfar: internal error{' while reading ' + where if where else ''}: {what} (a fault in nearfar, "
               f"not a verdict on the board; please report it with the files; --debug shows the traceback)",
               err=True)
    return INTERNAL_ERROR


def _exit(code: int) -> int:
    sys.exit(code)
