"""Every hostile input is refused with one line naming the file (exit status 2), and every recoverable
one is imported with a warning, in every output, that says what was left out."""
import json

import pytest

from tests.hostile.cli import assert_one_line_error, run_main
from tests.hostile.corpus import CASES, RECOVERABLE, Case

#: a warning printed by Python would be a second line on the terminal: each one fails the test
pytestmark = pytest.mark.filterwarnings("error")


def build(maker, tmp_path):
    try:
        return maker(tmp_path)
    except OSError as exc:  # names with newlines and symbolic links need a file system that allows them
        pytest.skip(f"the file system refuses this case: {exc}")


@pytest.mark.parametrize("name", sorted(CASES))
def test_refused_with_one_line(name, tmp_path, capsys):
    case: Case = build(CASES[name], tmp_path)
    out_dir = tmp_path / "out"
    code, out, err = run_main(["scan", case.target, "--out", out_dir, *case.args], capsys)
    assert code == 2
    assert_one_line_error(err, case)
    assert out == "" and not out_dir.exists()  # nothing printed or written for a board that was refused
    if not case.args:  # the rules cases need scan's --rules
        code, out, err = run_main(["inspect", case.target], capsys)
        assert code == 2
        assert_one_line_error(err, case)


@pytest.mark.parametrize("name", sorted(RECOVERABLE))
def test_recoverable_warned_in_every_output(name, tmp_path, capsys):
    part = build(RECOVERABLE[name], tmp_path)
    out_dir = tmp_path / "out"
    code, out, err = run_main(["scan", part.target, "--out", out_dir], capsys)
    assert code in (0, 1, 3), err  # 3: imported, but what was left out leaves part of the board unchecked

    def said(text: str) -> bool:
        return part.names in text and part.says in text

    assert any(said(line) for line in out.splitlines() if line.startswith("warning: "))
    assert any(said(w) for w in json.loads((out_dir / "report.json").read_text())["warnings"])
    assert said((out_dir / "report.html").read_text())
    code, out, err = run_main(["inspect", part.target, "--json"], capsys)
    assert code == 0 and any(said(w) for w in json.loads(out)["warnings"])
