"""Outputs are written atomically and inputs are never changed: a failed or interrupted run leaves no
half-written report and no temporary files, and keeps the previous report as it was."""
import errno
import hashlib
import os
from pathlib import Path

import pytest

import scanner.report.files
from tests.hostile import corpus
from tests.hostile.cli import run_main

REAL_REPLACE = os.replace
#: images are left out where the test is not about them (they take most of a run's time)
QUICK = ("--no-images",)


def tree_digest(root: Path) -> dict[str, tuple[int, str]]:
    """Every file below ``root`` (hidden ones too): mode and SHA-256 of the content."""
    out = {}
    for folder, _, names in os.walk(root):
        for name in names:
            path = Path(folder) / name
            out[str(path.relative_to(root))] = (path.stat().st_mode, hashlib.sha256(path.read_bytes()).hexdigest())
    return out


def temporary_files(root: Path) -> list[str]:
    return [name for _, _, names in os.walk(root) for name in names if name.endswith(".part")]


def fail_when_placing(monkeypatch, file_name: str, exc: BaseException) -> None:
    """Make the final rename of ``file_name`` (the last step of ``write_atomic``) raise ``exc``."""
    def replace(src, dst, *args, **kwargs):
        if Path(dst).name == file_name:
            raise exc
        return REAL_REPLACE(src, dst, *args, **kwargs)
    monkeypatch.setattr(os, "replace", replace)


def disk_full(name: str) -> OSError:
    return OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), name)


@pytest.fixture
def board(tmp_path) -> Path:
    return corpus.write_board(tmp_path / "board")


@pytest.fixture
def previous(board, tmp_path, capsys) -> tuple[Path, dict]:
    """An output folder holding a complete earlier report, and its digest."""
    out_dir = tmp_path / "out"
    code, _, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 1 and (out_dir / "report.json").is_file(), err
    return out_dir, tree_digest(out_dir)


@pytest.mark.parametrize("damage", [None, "truncated"])
@pytest.mark.parametrize("as_zip", [False, True])
def test_input_files_never_changed(board, tmp_path, capsys, damage, as_zip):
    if damage:
        corpus.write_lines(board / corpus.TOP_FILE, corpus.top_lines()[:-1])
    target = corpus.zip_of(board, tmp_path / "board.zip") if as_zip else board
    before = tree_digest(tmp_path)
    code, _, _ = run_main(["scan", target, "--out", tmp_path / "out", *QUICK], capsys)
    assert code == (2 if damage else 1)
    after = tree_digest(tmp_path)
    assert {k: v for k, v in after.items() if not k.startswith("out/")} == before


def test_refused_input_leaves_previous_report(previous, board, capsys):
    out_dir, digest = previous
    corpus.write_lines(board / corpus.TOP_FILE, corpus.top_lines()[:-1])
    code, _, _ = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 2 and tree_digest(out_dir) == digest


def test_disk_full_at_report_json_leaves_none(board, tmp_path, capsys, monkeypatch):
    out_dir = tmp_path / "out"
    fail_when_placing(monkeypatch, "report.json", disk_full(str(out_dir / "report.json")))
    code, _, err = run_main(["scan", board, "--out", out_dir], capsys)
    assert code == 2 and err.count("\n") == 1 and "report.json: No space left on device" in err
    assert not (out_dir / "report.json").exists() and not (out_dir / "report.html").exists()
    assert temporary_files(out_dir) == []


def test_disk_full_keeps_previous_report(previous, board, capsys, monkeypatch):
    out_dir, digest = previous
    fail_when_placing(monkeypatch, "report.json", disk_full(str(out_dir / "report.json")))
    code, _, _ = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 2
    assert tree_digest(out_dir)["report.json"] == digest["report.json"]
    assert temporary_files(out_dir) == []


def test_interrupted_write_keeps_previous_report(previous, board, capsys, monkeypatch):
    out_dir, digest = previous
    fail_when_placing(monkeypatch, "report.json", KeyboardInterrupt())
    code, _, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 130 and "aborted" in err and "Traceback" not in err
    assert tree_digest(out_dir)["report.json"] == digest["report.json"]
    assert temporary_files(out_dir) == []


def test_json_serialisation_failure_writes_no_report(board, tmp_path, capsys, monkeypatch):
    def refuse(result):
        raise ValueError("Out of range float values are not JSON compliant")
    monkeypatch.setattr(scanner.report.files, "report_json", refuse)
    out_dir = tmp_path / "out"
    code, _, err = run_main(["scan", board, "--out", out_dir, *QUICK], capsys)
    assert code == 4  # a program fault, not bad input (2) and not violations found (1)
    assert err.count("\n") == 1 and "internal error" in err and "Traceback" not in err
    assert not (out_dir / "report.json").exists() and temporary_files(out_dir) == []


def test_image_writer_failure_writes_no_report(board, tmp_path, capsys, monkeypatch):
    out_dir = tmp_path / "out"
    fail_when_placing(monkeypatch, "overlay-all.svg", disk_full(str(out_dir / "overlay-all.svg")))
    code, _, _ = run_main(["scan", board, "--out", out_dir], capsys)
    assert code == 2
    assert not (out_dir / "report.json").exists() and not (out_dir / "report.html").exists()
    assert temporary_files(out_dir) == []
    for png in out_dir.glob("*.png"):  # images placed before the failure are whole files
        data = png.read_bytes()
        assert data.startswith(b"\x89PNG\r\n\x1a\n") and data.endswith(b"IEND\xaeB`\x82")


def test_output_folder_that_cannot_be_made(board, tmp_path, capsys):
    """--out below a file (here one with a newline in its name): one escaped line, exit status 2."""
    blocker = tmp_path / "not\na folder"
    blocker.write_text("")
    code, out, err = run_main(["scan", board, "--out", blocker / "out", *QUICK], capsys)
    assert code == 2 and err.count("\n") == 1 and "not\\na folder/out" in err and "Traceback" not in err
