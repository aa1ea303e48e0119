"""A few hostile inputs through the installed ``nearfar`` script in its own process: exit status 2 and one
line on stderr, with nothing else (no traceback, no stray warnings) reaching the terminal."""
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from tests.hostile import corpus
from tests.hostile.corpus import CASES


def nearfar_command() -> list[str]:
    """The console script next to this Python (the test venv), else on PATH, else the entry point itself."""
    beside = Path(sys.executable).with_name("nearfar")
    found = str(beside) if beside.is_file() else shutil.which("nearfar")
    return [found] if found else [sys.executable, "-c", "from scanner.cli import main; main()"]


def run(args) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if not k.startswith("NEARFAR_")}
    return subprocess.run(nearfar_command() + [str(a) for a in args], capture_output=True, timeout=120, env=env)


@pytest.mark.parametrize("name", ["truncated_mid_block", "rules_wrong_type",
                                  "control_and_undecodable_bytes_in_a_broken_file_name"])
def test_refused_in_a_real_process(name, tmp_path):
    case = CASES[name](tmp_path)
    done = run(["scan", case.target, *case.args])
    err = done.stderr.decode("utf-8")  # escaped names leave plain UTF-8 text
    assert done.returncode == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    assert err.startswith("nearfar: error: ") and case.names in err and case.says in err
    assert done.stdout == b""


def test_good_board_in_a_real_process(tmp_path):
    done = run(["scan", corpus.write_board(tmp_path / "board")])
    assert done.returncode == 1  # the corpus board's two traces exceed the default budgets
    assert done.stderr == b""
    assert b"Overall: FAIL" in done.stdout
