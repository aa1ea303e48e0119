"""ODB++: choosing a step by name (``--step``) and jobs that state no units in misc/info."""
import pytest

import scanner
from scanner.cli import main
from scanner.errors import InputError

from tests.importers_odbpp.jobs import job_files, matrix_text, write_job


def _two_steps(tmp_path):
    files = job_files(matrix__matrix=matrix_text(steps=("main", "coupon")))
    for step in ("main", "coupon"):
        files.update({k.replace("steps/pcb/", f"steps/{step}/"): v for k, v in files.items()
                      if k.startswith("steps/pcb/")})
    return write_job(tmp_path, {k: v for k, v in files.items() if not k.startswith("steps/pcb/")})


def test_step_named_on_the_command_line(tmp_path, capsys):
    job = _two_steps(tmp_path)
    with pytest.raises(InputError, match="several board steps .*--step NAME"):
        scanner.load_board(job)
    assert scanner.load_board(job, step="coupon").layers[0].path.endswith("steps/coupon/layers/top/features")
    with pytest.raises(InputError, match=r"step 'panel' is not in the matrix \(steps: MAIN, COUPON\)"):
        scanner.load_board(job, step="panel")
    with pytest.raises(SystemExit) as info:
        main(["inspect", str(job), "--step", "main"])
    assert info.value.code == 0 and "L01" in capsys.readouterr().out


def test_step_refused_for_gerber_folders(tmp_path):
    (tmp_path / "a-F_Cu.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nM02*\n")
    with pytest.raises(InputError, match="--step names a step of an ODB\\+\\+ job"):
        scanner.load_board(tmp_path, step="pcb")


def test_units_from_the_profile_line_when_misc_info_has_none(tmp_path):
    board = scanner.load_board(write_job(tmp_path, job_files(misc__info="JOB_NAME=testjob\n")))
    assert any("taken as MM from the profile's UNITS line" in w for w in board.warnings)
    assert board.outline.area == pytest.approx(50 * 40)


def test_units_from_the_profile_size_when_nothing_states_them(tmp_path):
    files = {k: v.replace("UNITS=MM\n", "") for k, v in job_files(misc__info="JOB_NAME=testjob\n").items()}
    board = scanner.load_board(write_job(tmp_path, files))
    # the 50 x 40 profile is too big to be inches for a board of this kind: millimetres, with a warning
    assert any("taken as MM from the size of the step profile (50 across" in w for w in board.warnings)
    assert board.outline.area == pytest.approx(50 * 40)
