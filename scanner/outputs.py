"""A run's output folder, replaced whole or not at all.

Every file of a run is written into a private staging folder beside the target
(``.<name>.nearfar-XXXXXXXX``), flushed to disk, and the staging folder then takes the
target's place in one step: an atomic exchange of the two folders where the system offers
one (Linux ``renameat2``), else the old folder renamed aside and the new one renamed in. The
previous folder is removed after the swap. A reader sees the old complete set or the new
complete set; a failed or killed run leaves the old set as it was, and its staging folder is
removed on the way out or, after SIGKILL, by the next run into the same place.
"""
from __future__ import annotations

import ctypes
import errno
import os
import shutil
import tempfile
from pathlib import Path

from scanner.errors import InputError
from scanner.report.names import is_report_file
from scanner.workspace import WorkFolder, locked, signals_held

#: what a staging folder's name holds after ``.<target name>``
STAGING_MARK = ".nearfar-"
#: characters of the target's name kept in its staging folder's name (names have at most 255 bytes)
NAME_KEPT = 64
#: the first bytes of a report.json that nearfar wrote
REPORT_START = b'{\n "schema": "nearfar.report/'

_AT_FDCWD = -100
_RENAME_EXCHANGE = 2
_RENAMEAT2 = getattr(ctypes.CDLL(None, use_errno=True), "renameat2", None)


def write_file(path: Path, data: str | bytes) -> Path:
    """Write ``data`` (text as UTF-8) to ``path`` and flush it to disk; an error names the file."""
    try:
        with open(path, "wb") as fh:
            fh.write(data if isinstance(data, bytes) else data.encode("utf-8"))
            fh.flush()
            os.fsync(fh.fileno())
    except OSError as exc:
        if exc.filename is None:  # a failed write() or fsync() names no file
            raise OSError(exc.errno, exc.strerror, str(path)) from exc
        raise
    return path


def replace_file(path: str | Path, data: str | bytes) -> Path:
    """Write one file whole or not at all: into a temporary file beside it, then renamed over it."""
    path = Path(path)
    try:
        fd, temp = tempfile.mkstemp(prefix=f".{path.name[:NAME_KEPT]}.", suffix=".part", dir=path.parent)
    except OSError as exc:  # it would name the temporary file, which the user never asked for
        raise OSError(exc.errno, exc.strerror, str(path)) from exc
    os.close(fd)
    try:
        write_file(Path(temp), data)
        os.replace(temp, path)
    except OSError as exc:
        Path(temp).unlink(missing_ok=True)
        raise OSError(exc.errno, exc.strerror, str(path)) from exc
    except BaseException:
        Path(temp).unlink(missing_ok=True)
        raise
    return path


def staging_prefix(target: Path) -> str:
    return f".{target.name[:NAME_KEPT]}{STAGING_MARK}"


def check_replaceable(target: Path, shown: Path) -> None:
    """``target`` may be replaced whole: missing, or a folder holding a nearfar report (or nothing else)."""
    if target.is_symlink():
        raise InputError("the output folder is a symbolic link; give the folder it points to", path=shown)
    if not target.exists():
        return
    if not target.is_dir():
        raise InputError("exists and is not a folder", path=shown)
    foreign = sorted(n for n in os.listdir(target) if not is_report_file(n))
    if foreign and not _holds_report(target):
        listed = ", ".join(foreign[:3]) + (", …" if len(foreign) > 3 else "")
        raise InputError(f"the output folder holds files nearfar did not write ({listed}); nearfar replaces its "
                         "output folder whole, so give a new, empty or earlier report folder", path=shown)
    if not os.access(target, os.W_OK | os.X_OK):
        raise InputError("the output folder cannot be replaced: no write permission on it", path=shown)


def _holds_report(folder: Path) -> bool:
    try:
        with open(folder / "report.json", "rb") as fh:
            return fh.read(len(REPORT_START)) == REPORT_START
    except OSError:
        return False


def _exchange(a: Path, b: Path) -> bool:
    """Swap two folders in one step; False where the system or the file system cannot."""
    if _RENAMEAT2 is None:
        return False
    if _RENAMEAT2(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP):
        return False
    raise OSError(err, os.strerror(err), str(b))


def _swap(new: Path, target: Path) -> Path | None:
    """Put folder ``new`` at ``target``; returns where the previous folder now is, or None."""
    if not target.exists():
        os.rename(new, target)
        return None
    if _exchange(new, target):
        return new
    aside = new.with_name(new.name + "-old")  # keeps the staging name: swept if a kill comes before removal
    os.rename(target, aside)
    os.rename(new, target)
    return aside


def _sync(folder: Path) -> None:
    fd = os.open(folder, os.O_RDONLY | os.O_DIRECTORY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


class OutputFolder:
    """Files written into :attr:`path` reach ``target`` together on :meth:`commit`, replacing what the
    folder held; without a commit (an error, an interrupt) they are removed. Use as a context manager.

    Opening one checks that ``target`` can be replaced and that its parent can be written (it is made
    when missing). An OSError about a file in the staging folder is raised naming the file in ``target``."""

    def __init__(self, target: str | Path):
        self.shown = Path(target)
        self.target = Path(os.path.abspath(target))
        check_replaceable(self.target, self.shown)
        try:
            self.target.parent.mkdir(parents=True, exist_ok=True)
        except (FileExistsError, NotADirectoryError):
            raise InputError("the output folder cannot be made: a file stands where a folder must be",
                             path=self.shown) from None
        except OSError as exc:
            raise OSError(exc.errno, exc.strerror, str(self.shown)) from exc
        self._stage: WorkFolder | None = None
        self._committed = False

    def __enter__(self) -> "OutputFolder":
        # a stop signal held while the staging folder is made acts once it is ours to remove
        try:
            with signals_held():
                self._stage = WorkFolder(self.target.parent, staging_prefix(self.target))
                self.path = self._stage.path
        except OSError as exc:  # it would name the staging folder, which the user never asked for
            raise OSError(exc.errno, exc.strerror, str(self.shown)) from exc
        except BaseException:
            if self._stage is not None:
                self._stage.remove()
            raise
        return self

    def __exit__(self, kind, exc, tb) -> bool:
        if not self._committed:
            self._stage.remove()
        if isinstance(exc, OSError) and exc.filename is not None:
            name = Path(os.fsdecode(exc.filename))
            if name.is_relative_to(self.path):
                raise OSError(exc.errno, exc.strerror, str(self.shown / name.relative_to(self.path))) from exc
        return False

    def commit(self) -> None:
        """Put the written files in place of the folder's previous content, in one step."""
        _sync(self.path)
        try:
            with signals_held(), locked(self.target.parent):
                check_replaceable(self.target, self.shown)
                previous = _swap(self.path, self.target)
                self._committed = True
        except OSError as exc:
            raise OSError(exc.errno, exc.strerror, str(self.shown)) from exc
        self._stage.release()
        if previous is not None:
            with signals_held():
                shutil.rmtree(previous, ignore_errors=True)


def check_output_folder(target: str | Path) -> None:
    """Refuse, before any work, an output folder that could not be written or replaced."""
    with OutputFolder(target):
        pass
