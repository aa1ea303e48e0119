"""Safe extraction of an ODB++ job archive: ``.tgz``/``.tar.gz``/``.tar`` here, ``.zip`` by the board-archive helper.

Tar entries get the same refusals and limits as zip entries (``scanner.importers.archive``):
absolute paths or drive letters, ``..``, links (symbolic and hard), device files and
FIFOs, more than ``MAX_ENTRIES`` entries, more than ``MAX_EXPANDED_BYTES`` expanded
(counted from the headers and again while writing). A truncated or damaged archive is
an InputError naming it.
"""
from __future__ import annotations

import tarfile
import zlib
from pathlib import Path, PurePosixPath

from scanner.errors import InputError
from scanner.importers import archive as limits
from scanner.importers.archive import extract_archive

TAR_SUFFIXES = (".tgz", ".tar.gz", ".tar")
ARCHIVE_SUFFIXES = TAR_SUFFIXES + (".zip",)
_CHUNK = 1 << 20


def is_job_archive(path: Path) -> bool:
    return path.name.lower().endswith(ARCHIVE_SUFFIXES)


def _member_path(member: tarfile.TarInfo, name: str) -> PurePosixPath | None:
    entry = member.name.replace("\\", "/")
    path = PurePosixPath(entry)
    if entry.startswith("/") or (len(entry) > 1 and entry[1] == ":"):
        raise InputError(f"archive entry {member.name!r} has an absolute path", path=name)
    if ".." in path.parts:
        raise InputError(f"archive entry {member.name!r} points outside the archive folder", path=name)
    if member.issym() or member.islnk():
        raise InputError(f"archive entry {member.name!r} is a link", path=name)
    if member.isdir():
        return None
    if not member.isfile():
        raise InputError(f"archive entry {member.name!r} is a device file or pipe, not a regular file", path=name)
    return path


def extract_tar(archive: Path, target: Path) -> None:
    """Extract a (gzip-compressed) tar archive into ``target`` within the board-archive limits."""
    name = str(archive)
    entries = declared = written = 0
    try:
        with tarfile.open(archive, "r:*") as tf:
            for member in tf:
                entries += 1
                if entries > limits.MAX_ENTRIES:
                    raise InputError(f"archive holds more than the limit of {limits.MAX_ENTRIES} entries", path=name)
                rel = _member_path(member, name)
                if rel is None:
                    continue
                declared += member.size
                if declared > limits.MAX_EXPANDED_BYTES:
                    raise InputError(f"archive would expand to more than the limit of {limits.MAX_EXPANDED_BYTES} "
                                     "bytes", path=name)
                dest = target.joinpath(*rel.parts)
                dest.parent.mkdir(parents=True, exist_ok=True)
                with tf.extractfile(member) as src, open(dest, "wb") as out:
                    while chunk := src.read(_CHUNK):
                        written += len(chunk)
                        if written > limits.MAX_EXPANDED_BYTES:
                            raise InputError(f"archive expands beyond the limit of {limits.MAX_EXPANDED_BYTES} bytes",
                                             path=name)
                        out.write(chunk)
    except (tarfile.TarError, EOFError, zlib.error, OSError) as exc:
        raise InputError(f"archive is truncated or damaged: {exc}", path=name) from exc


def extract_job_archive(archive: Path, target: Path) -> None:
    """Extract a job archive by its suffix: tar forms here, zip through the board-archive helper."""
    if archive.name.lower().endswith(TAR_SUFFIXES):
        extract_tar(archive, target)
    elif archive.suffix.lower() == ".zip":
        extract_archive(archive, target)
    else:
        raise InputError("expected an ODB++ job folder or a .tgz, .tar.gz, .tar or .zip archive", path=archive)
