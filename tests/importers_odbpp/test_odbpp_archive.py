"""ODB++ job archives: tar and zip forms load like the folder; unsafe or damaged archives are refused."""
import io
import tarfile
import zipfile
from pathlib import Path

import pytest

from scanner.errors import InputError
from scanner.importers import archive as limits
from scanner.importers import load_board
from scanner.importers.odbpp import load_odbpp
from scanner.importers.odbpp.archive import extract_tar

from tests.importers_odbpp.jobs import tar_job, write_job


def _summary(board):
    return ([(layer.name, layer.kind, len(layer.segments), len(layer.shapes)) for layer in board.layers],
            sorted(board.nets), len(board.holes))


@pytest.fixture()
def job(tmp_path):
    return write_job(tmp_path / "src")


@pytest.mark.parametrize("suffix", [".tgz", ".tar.gz"])
def test_tar_archive_loads_like_the_folder(tmp_path, job, suffix):
    archive = tar_job(job, tmp_path / f"testjob{suffix}")
    board = load_odbpp(archive)
    assert _summary(board) == _summary(load_odbpp(job))
    assert board.source == str(archive) and board.name == archive.name
    assert board.layers[0].path == f"testjob{suffix}!testjob/steps/pcb/layers/top/features"


def test_zip_archive_loads_through_load_board_too(tmp_path, job):
    archive = tmp_path / "testjob.zip"
    with zipfile.ZipFile(archive, "w") as zf:
        for path in sorted(job.rglob("*")):
            if path.is_file():
                zf.write(path, path.relative_to(job.parent).as_posix())
    assert _summary(load_odbpp(archive)) == _summary(load_odbpp(job))
    assert load_board(archive).format == "odbpp"


def _tar_with(tmp_path, info: tarfile.TarInfo, data: bytes = b"") -> str:
    path = tmp_path / "bad.tgz"
    with tarfile.open(path, "w:gz") as tf:
        tf.addfile(info, io.BytesIO(data) if info.isfile() else None)
    return path


def _info(name, kind=tarfile.REGTYPE, size=0, link=""):
    info = tarfile.TarInfo(name)
    info.type, info.size, info.linkname = kind, size, link
    return info


@pytest.mark.parametrize("info, message", [
    (_info("../evil/matrix/matrix", size=1), "outside"),
    (_info("/abs/matrix/matrix", size=1), "absolute"),
    (_info("C:/job/matrix/matrix", size=1), "absolute"),
    (_info("job/matrix/matrix", tarfile.SYMTYPE, link="/etc/passwd"), "link"),
    (_info("job/matrix/matrix", tarfile.LNKTYPE, link="job/other"), "link"),
    (_info("job/dev", tarfile.CHRTYPE), "device"),
    (_info("job/fifo", tarfile.FIFOTYPE), "device"),
])
def test_unsafe_tar_entries_are_refused(tmp_path, info, message):
    archive = _tar_with(tmp_path, info, b"x" * info.size)
    with pytest.raises(InputError, match=message) as error:
        load_odbpp(archive)
    assert error.value.path == str(archive)


def test_truncated_archive(tmp_path, job):
    archive = tar_job(job, tmp_path / "testjob.tgz")
    data = archive.read_bytes()
    archive.write_bytes(data[: len(data) // 2])
    with pytest.raises(InputError, match="truncated or damaged") as error:
        load_odbpp(archive)
    assert error.value.path == str(archive)


def test_entry_and_size_limits(tmp_path, job, monkeypatch):
    archive = tar_job(job, tmp_path / "testjob.tgz")
    monkeypatch.setattr(limits, "MAX_ENTRIES", 5)
    with pytest.raises(InputError, match="more than the limit of 5 entries"):
        extract_tar(archive, tmp_path / "out1")
    monkeypatch.setattr(limits, "MAX_ENTRIES", 5000)
    monkeypatch.setattr(limits, "MAX_EXPANDED_BYTES", 500)
    with pytest.raises(InputError, match="limit of 500 bytes"):
        extract_tar(archive, tmp_path / "out2")


def test_not_an_archive(tmp_path):
    path = tmp_path / "job.rar"
    path.write_text("x")
    with pytest.raises(InputError, match="expected an ODB\\+\\+ job folder"):
        load_odbpp(path)


def test_load_board_reads_a_tgz_job(tmp_path):
    demo = Path(__file__).resolve().parents[2] / "fixtures" / "demo-board" / "odbpp"
    archive = tmp_path / "ml6-logger.tgz"
    with tarfile.open(archive, "w:gz") as tar:
        tar.add(demo / "ml6-logger", arcname="ml6-logger")
    board = load_board(archive)
    assert board.format == "odbpp" and board.name == "ml6-logger" and len(board.layers) == 6
