"""Runs in their own process, as a busy CI farm has them: two scans into one folder at once, a scan killed at
several stages, stopped by SIGTERM or SIGINT, or refused a write by the file-size limit. Afterwards the output
folder holds one run's complete set (the old one or the new one) and no staging or unpacking folder is left
for the next run to trip on."""
import os
import resource
import signal
import subprocess
import time
from pathlib import Path

import pytest

from tests.hostile import corpus
from tests.hostile.cli import run_main
from tests.hostile.folders import debris, one_run, tree_digest
from tests.hostile.test_subprocess import nearfar_command

#: how long to wait for a run to reach a stage before giving up on it (s)
STAGE_TIMEOUT_S = 60


def start(args, tmp_path: Path, **kwargs) -> subprocess.Popen:
    env = {k: v for k, v in os.environ.items() if not k.startswith("NEARFAR_")}
    env["TMPDIR"] = str(tmp_path / "tmp")  # the run's unpacking folders land where the test can see them
    (tmp_path / "tmp").mkdir(exist_ok=True)
    return subprocess.Popen(nearfar_command() + [str(a) for a in args], stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE, env=env, **kwargs)


def staging_with(parent: Path, file_name: str | None) -> bool:
    """A staging folder beside the output folder holds ``file_name`` (any file when None)."""
    for entry in os.scandir(parent):
        if ".nearfar-" in entry.name and entry.is_dir():
            try:
                names = os.listdir(entry.path)
            except FileNotFoundError:
                continue
            if (file_name in names) if file_name else names:
                return True
    return False


def unpacking(tmp_path: Path) -> bool:
    """Some run's unpacking folder is in the runs' temporary folder (nothing else goes there)."""
    return any(n.startswith("nearfar-unpack-") for n in os.listdir(tmp_path / "tmp"))


def wait_for(process: subprocess.Popen, reached) -> bool:
    """Poll until ``reached()``; False when the run ended first."""
    deadline = time.monotonic() + STAGE_TIMEOUT_S
    while time.monotonic() < deadline:
        if reached():
            return True
        if process.poll() is not None:
            return False
        time.sleep(0.001)
    raise AssertionError("the run never reached the stage")


@pytest.fixture
def board(tmp_path) -> Path:
    return corpus.write_board(tmp_path / "board")


@pytest.fixture
def previous(board, tmp_path, capsys) -> tuple[Path, str, dict]:
    out_dir = tmp_path / "out"
    assert run_main(["scan", board, "--out", out_dir, "--no-images"], capsys)[0] == 1
    return out_dir, one_run(out_dir), tree_digest(out_dir)


def test_two_scans_into_one_folder_at_once(board, tmp_path):
    """Two runs with images finishing at about the same time: the folder holds one of them whole."""
    out_dir = tmp_path / "out"
    runs = [start(["scan", board, "--out", out_dir], tmp_path) for _ in range(2)]
    assert [r.wait(timeout=120) for r in runs] == [1, 1]
    one_run(out_dir)
    assert (out_dir / "report.html").is_file()
    assert debris(tmp_path) == []


@pytest.mark.parametrize("stage", ["writing", "report.json written"])
def test_killed_at_any_stage_leaves_one_run(previous, board, tmp_path, capsys, stage):
    """SIGKILL cannot be caught: the folder still holds one whole run, and the next run clears what was left."""
    out_dir, old_run, old_digest = previous
    run = start(["scan", board, "--out", out_dir], tmp_path)
    reached = {"writing": lambda: staging_with(tmp_path, None),
               "report.json written": lambda: staging_with(tmp_path, "report.json")}[stage]
    wait_for(run, reached)
    run.kill()
    run.wait(timeout=60)
    if one_run(out_dir) == old_run:
        assert tree_digest(out_dir) == old_digest
    assert run_main(["scan", board, "--out", out_dir, "--no-images"], capsys)[0] == 1
    one_run(out_dir)
    assert debris(tmp_path) == []


def test_sigterm_while_writing_cleans_staging(previous, board, tmp_path):
    """SIGTERM unwinds the run as an interrupt does (SIGINT's path is tested in-process, test_outputs.py)."""
    out_dir, _, old_digest = previous
    run = start(["scan", board, "--out", out_dir], tmp_path)
    assert wait_for(run, lambda: staging_with(tmp_path, None))
    run.send_signal(signal.SIGTERM)
    err = run.communicate(timeout=60)[1].decode()
    assert run.returncode == 143 and "stopped by SIGTERM" in err and "Traceback" not in err, err
    assert tree_digest(out_dir) == old_digest and debris(tmp_path) == []


def test_unpacking_folders_removed_on_sigterm_and_swept_after_sigkill(board, tmp_path):
    """A run killed while unpacking an archive leaves its folder; the next run sweeps it, and removes its own
    when SIGTERM stops it."""
    archive = corpus.zip_of(board, tmp_path / "board.zip")
    killed = start(["inspect", archive], tmp_path)
    assert wait_for(killed, lambda: unpacking(tmp_path))
    killed.kill()
    killed.wait(timeout=60)
    left = set(os.listdir(tmp_path / "tmp"))
    assert unpacking(tmp_path)
    stopped = start(["inspect", archive], tmp_path)
    assert wait_for(stopped, lambda: set(os.listdir(tmp_path / "tmp")) - left)
    stopped.send_signal(signal.SIGTERM)
    err = stopped.communicate(timeout=60)[1].decode()
    assert stopped.returncode == 143 and "stopped by SIGTERM" in err, err
    assert debris(tmp_path) == []


def test_file_size_limit_keeps_the_previous_report(previous, board, tmp_path):
    """A write refused by RLIMIT_FSIZE (report.json is about 6 kB, the limit 4 kB): one line naming the file."""
    out_dir, _, old_digest = previous

    def limit_file_size():
        resource.setrlimit(resource.RLIMIT_FSIZE, (4096, 4096))
    run = start(["scan", board, "--out", out_dir, "--no-images"], tmp_path, preexec_fn=limit_file_size)
    err = run.communicate(timeout=120)[1].decode()
    assert run.returncode == 2, err
    assert err == f"nearfar: error: {out_dir / 'report.json'}: File too large\n"
    assert tree_digest(out_dir) == old_digest and debris(tmp_path) == []
