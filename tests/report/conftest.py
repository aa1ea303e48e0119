"""Shared fixtures: the demo board scanned once, and one full ``nearfar scan --out`` run.

With ``NEARFAR_TEST_OUT`` set (``.ci/run`` sets it), the report folder is written to
``$NEARFAR_TEST_OUT/demo-report`` and kept, so a reviewer can open the page and its screenshots.
"""
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

import scanner
from scanner.cli import cli
from scanner.rules import load_rules

ROOT = Path(__file__).resolve().parents[2]
DEMO_BOARD = ROOT / "fixtures" / "demo-board" / "x2"
DEMO_RULES = ROOT / "fixtures" / "demo-rules.toml"


@pytest.fixture(scope="session")
def scan_args() -> list[str]:
    """Arguments of ``nearfar scan`` for the demo board (with the demo rules when present)."""
    return [str(DEMO_BOARD)] + (["--rules", str(DEMO_RULES)] if DEMO_RULES.is_file() else [])


@pytest.fixture(scope="session")
def demo_scan():
    """(result, board) of the demo board with the demo rules when present."""
    board = scanner.load_board(DEMO_BOARD)
    return scanner.scan(board, load_rules(DEMO_RULES if DEMO_RULES.is_file() else None)), board


@pytest.fixture(scope="session")
def report_dir(tmp_path_factory, scan_args) -> Path:
    """A report folder written by the command, images and page included."""
    if os.environ.get("NEARFAR_TEST_OUT"):
        out = Path(os.environ["NEARFAR_TEST_OUT"]) / "demo-report"
        shutil.rmtree(out, ignore_errors=True)
    else:
        out = tmp_path_factory.mktemp("report") / "out"
    run = CliRunner().invoke(cli, ["scan", *scan_args, "--out", str(out)])
    assert run.exception is None or isinstance(run.exception, SystemExit), run.output
    return out
