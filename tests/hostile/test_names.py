"""File and folder names with odd characters: spaces, non-ASCII letters, leading dashes, newlines,
terminal escapes and bytes that are not UTF-8. Good boards still scan; names print on one line."""
import json
import os

import pytest

from scanner.errors import printable
from tests.hostile import corpus
from tests.hostile.cli import run_main


@pytest.mark.parametrize("text, shown", [
    ("plain name.gbr", "plain name.gbr"),
    ("plaça-ü 基板.gbr", "plaça-ü 基板.gbr"),  # printable letters stay as they are
    ("a\nb", "a\\nb"),
    ("tab\there", "tab\\there"),
    ("\x1b[2Jred", "\\x1b[2Jred"),
    ("right\u202eto-left", "right\\u202eto-left"),  # an invisible direction override
    (os.fsdecode(b"bad-\xff-byte"), "bad-\\xff-byte"),  # surrogate escape from a non-UTF-8 file name
])
def test_printable(text, shown):
    assert printable(text) == shown
    assert printable(shown) == shown  # escaping twice changes nothing


def rename_board_files(board, names: dict[str, str]) -> None:
    """Rename files and the job file's references to them."""
    data = corpus.job_data()
    for old, new in names.items():
        (board / old).rename(board / new)
        for entry in data["FilesAttributes"]:
            if entry["Path"] == old:
                entry["Path"] = new
    (board / corpus.JOB_FILE).write_text(json.dumps(data))


def test_odd_but_legal_names_scan(tmp_path, capsys, monkeypatch):
    """A folder named with a leading dash, spaces and non-ASCII letters, holding files named likewise."""
    monkeypatch.chdir(tmp_path)
    board = corpus.write_board(tmp_path / "-my board ü")
    rename_board_files(board, {corpus.TOP_FILE: "-F Cu ü.gbr", corpus.BOTTOM_FILE: "--B Cu 基板.gbr"})
    code, out, err = run_main(["scan", "--out", "-report ü", "--no-images", "--", "-my board ü"], capsys)
    assert code == 1, err
    report = json.loads((tmp_path / "-report ü" / "report.json").read_text())
    assert [layer["segments"] for layer in report["board"]["layers"]] == [2, 0]
    code, out, err = run_main(["inspect", "--json", "--", "-my board ü"], capsys)
    assert code == 0
    assert [layer["file"] for layer in json.loads(out)["layers"]] == ["-my board ü/-F Cu ü.gbr",
                                                                      "-my board ü/--B Cu 基板.gbr"]


def test_newline_and_escape_in_good_file_names(tmp_path, capsys):
    """Names with a newline and a terminal escape are shown escaped; every line of the table stays whole."""
    board = corpus.write_board(tmp_path / "board")
    rename_board_files(board, {corpus.TOP_FILE: "top\nlayer.gbr", corpus.BOTTOM_FILE: "\x1b[2Jbottom.gbr"})
    code, out, err = run_main(["inspect", board], capsys)
    assert code == 0, err
    assert "top\\nlayer.gbr" in out and "\\x1b[2Jbottom.gbr" in out
    assert "\x1b" not in out and not any(line.startswith("layer.gbr") for line in out.splitlines())
