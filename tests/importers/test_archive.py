"""Board archives: extraction limits and refusal of escaping entries."""
import stat
import zipfile

import pytest

import scanner
from scanner.errors import InputError
from scanner.importers import archive

from artwork import write_board


def _zip_board(tmp_path, name="board.zip"):
    folder = write_board(tmp_path / "src", x2=True)
    path = tmp_path / name
    with zipfile.ZipFile(path, "w") as zf:
        for f in folder.iterdir():
            zf.write(f, f"gerbers/{f.name}")
    return path


def test_zip_loads_like_folder(tmp_path):
    board = scanner.load_board(_zip_board(tmp_path))
    assert [layer.name for layer in board.layers] == ["L01", "L02"]
    assert board.layers[0].path.startswith("board.zip!gerbers/")
    assert {"SIG_A", "SIG_B", "GND"} <= set(board.nets)


@pytest.mark.parametrize("member, message", [("../evil.gbr", "outside"), ("/abs/evil.gbr", "absolute"),
                                             ("C:/evil.gbr", "absolute")])
def test_escaping_entries_refused(tmp_path, member, message):
    path = tmp_path / "bad.zip"
    with zipfile.ZipFile(path, "w") as zf:
        zf.writestr(member, "x")
    with pytest.raises(InputError, match=message) as info:
        scanner.load_board(path)
    assert info.value.path == str(path)


def test_symlink_refused(tmp_path):
    path = tmp_path / "link.zip"
    info = zipfile.ZipInfo("link.gbr")
    info.external_attr = (stat.S_IFLNK | 0o777) << 16
    with zipfile.ZipFile(path, "w") as zf:
        zf.writestr(info, "/etc/passwd")
    with pytest.raises(InputError, match="symbolic link"):
        scanner.load_board(path)


def test_expansion_limit(tmp_path, monkeypatch):
    path = tmp_path / "big.zip"
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        zf.writestr("a.gbr", "0" * 200_000)
    monkeypatch.setattr(archive, "MAX_EXPANDED_BYTES", 100_000)
    with pytest.raises(InputError, match="expand"):
        scanner.load_board(path)


def test_entry_limit(tmp_path, monkeypatch):
    path = tmp_path / "many.zip"
    with zipfile.ZipFile(path, "w") as zf:
        for i in range(5):
            zf.writestr(f"f{i}.txt", "x")
    monkeypatch.setattr(archive, "MAX_ENTRIES", 4)
    with pytest.raises(InputError, match="entries"):
        scanner.load_board(path)


def test_not_a_zip(tmp_path):
    path = tmp_path / "fake.zip"
    path.write_text("hello")
    with pytest.raises(InputError, match="zip"):
        scanner.load_board(path)
