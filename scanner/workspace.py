"""Private working folders: locked while a run uses them, removed when it ends, swept when a killed run left one.

A run holds an exclusive ``flock`` on each folder it makes. The kernel drops the lock when the
process ends in any way (SIGKILL included), so a folder whose lock can be taken belongs to no
live run: the next run that makes a folder of the same kind removes it. Making and sweeping
happen under a lock on the parent folder, so two runs never race for one name. POSIX only, as
the rest of nearfar (the importers fork worker processes).
"""
from __future__ import annotations

import contextlib
import fcntl
import os
import shutil
import signal
import tempfile
from pathlib import Path

#: signals that stop a run; held back while a folder is swapped or removed, so none is left half done
STOP_SIGNALS = (signal.SIGINT, signal.SIGTERM)

#: name start of the folders archives are unpacked into, in the system's temporary folder
UNPACK_PREFIX = "nearfar-unpack-"


class Stopped(BaseException):
    """SIGTERM reached the run: raised where the run is, so every folder it made is cleaned on the way out.

    A BaseException, as KeyboardInterrupt is: no ``except Exception`` on the way may swallow it."""

    def __init__(self, signum: int):
        self.signum = signum
        super().__init__(signal.Signals(signum).name)


def raise_stopped(signum, _frame) -> None:
    """Signal handler: turn a stop signal into :class:`Stopped`."""
    raise Stopped(signum)


@contextlib.contextmanager
def signals_held():
    """Hold back SIGINT and SIGTERM for the block; a signal that came meanwhile acts after it."""
    previous = signal.pthread_sigmask(signal.SIG_BLOCK, STOP_SIGNALS)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)


def _open_folder(path: Path) -> int:
    return os.open(path, os.O_RDONLY | os.O_DIRECTORY | os.O_NOFOLLOW)


@contextlib.contextmanager
def locked(folder: Path):
    """An exclusive lock on ``folder`` itself for the block (other nearfar runs wait for it)."""
    fd = _open_folder(folder)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
        yield
    finally:
        os.close(fd)


def sweep(parent: Path, prefix: str) -> None:
    """Remove folders in ``parent`` named ``prefix…`` that no live run holds (left by a killed run).

    Call with ``parent`` locked. Folders that cannot be opened (another user's) are left alone."""
    try:
        names = [n for n in os.listdir(parent) if n.startswith(prefix)]
    except OSError:
        return
    for name in names:
        path = parent / name
        try:
            fd = _open_folder(path)
        except OSError:
            continue
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            os.close(fd)
            continue  # held: a live run's folder
        try:
            with signals_held():
                shutil.rmtree(path, ignore_errors=True)
        finally:
            os.close(fd)


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


class WorkFolder:
    """A new folder ``<parent>/<prefix><random>`` of this run's own, locked until :meth:`remove` or
    :meth:`release`, or until the process ends. Stale folders of the same prefix are swept first."""

    def __init__(self, parent: Path, prefix: str):
        with locked(parent):
            sweep(parent, prefix)
            self.path = Path(tempfile.mkdtemp(prefix=prefix, dir=parent))
            self._fd: int | None = _open_folder(self.path)
            fcntl.flock(self._fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        os.chmod(self.path, 0o777 & ~_umask())  # mkdtemp makes 0700; an output folder gets the usual mode

    def release(self) -> None:
        """Drop the lock (the folder now belongs to nobody: the next sweep may take it)."""
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None

    def remove(self) -> None:
        with signals_held():
            shutil.rmtree(self.path, ignore_errors=True)
            self.release()


@contextlib.contextmanager
def unpack_folder():
    """A private folder in the system's temporary folder to unpack an archive into, removed on the way out
    (exception, SIGINT or SIGTERM); one left by a killed run is removed by the next run that unpacks."""
    folder = None
    try:
        with signals_held():  # a stop signal that comes while the folder is made acts once it is ours to remove
            folder = WorkFolder(Path(tempfile.gettempdir()), UNPACK_PREFIX)
        yield folder.path
    finally:
        if folder is not None:
            folder.remove()
