"""Running the command in-process and checking what reaches the terminal."""
from __future__ import annotations

import pytest

from scanner.cli import main
from tests.hostile.corpus import Case


def run_main(args, capsys) -> tuple[int, str, str]:
    """``nearfar *args`` through ``scanner.cli.main``: (exit status, stdout, stderr)."""
    with pytest.raises(SystemExit) as info:
        main([str(a) for a in args])
    captured = capsys.readouterr()
    return info.value.code, captured.out, captured.err


def assert_one_line_error(err: str, case: Case) -> None:
    """Exactly one line on stderr, no traceback, naming the file (and line) and saying what is wrong."""
    assert err.endswith("\n") and err.count("\n") == 1, err
    text = err[:-1]
    assert text.startswith("nearfar: error: ") and "Traceback" not in text
    assert text.isprintable(), text
    assert "nearfar-unpack-" not in text, text  # a file in an archive is named archive!entry
    assert case.names in text, text
    assert case.says in text, text
    if case.line is not None:
        assert f":{case.line}: " in text, text
