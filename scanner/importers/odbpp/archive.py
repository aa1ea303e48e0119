"""Safe extraction of an ODB++ job archive: ``.tgz``/``.tar.gz``/``.tar`` here, ``.zip`` by the board-archive helper.

Tar entries get the same refusals and limits as zip entries (``scanner.importers.archive``):
absolute paths or drive letters, ``..``, links (symbolic and hard), device files and
FIFOs, more than ``MAX_ENTRIES`` entries, a member larger than the file-size limit, more
than ``MAX_EXPANDED_BYTES`` expanded (counted from the headers and again while writing),
a compressed archive expanding more than ``MAX_RATIO`` times its size. Long-name and
extended headers are bounded before they are read. A truncated or damaged archive is an
InputError naming it.
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
#: largest long-name or extended (pax) header: names and attributes, never megabytes of them
MAX_HEADER_BYTES = 64 * 1024


class _HeaderTooLarge(Exception):
    """A long-name or extended header record larger than MAX_HEADER_BYTES (its size in bytes)."""


class _BoundedHeader(tarfile.TarInfo):
    """A tar header whose long-name or extended records are refused when larger than MAX_HEADER_BYTES,
    before tarfile reads them into memory."""

    def _proc_member(self, tf):
        if self.type in (tarfile.GNUTYPE_LONGNAME, tarfile.GNUTYPE_LONGLINK, tarfile.XHDTYPE, tarfile.XGLTYPE,
                         tarfile.SOLARIS_XHDTYPE) and self.size > MAX_HEADER_BYTES:
            raise _HeaderTooLarge(self.size)
        return super()._proc_member(tf)


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
    compressed = archive.stat().st_size
    try:
        with tarfile.open(archive, "r:*", tarinfo=_BoundedHeader) as tf:
            for member in tf:
                entries += 1
                if entries > limits.MAX_ENTRIES:
                    raise InputError(f"archive holds more than the limit of {limits.MAX_ENTRIES} entries", path=name)
                rel = _member_path(member, name)
                if rel is None:
                    continue
                if (problem := limits.member_size_problem(member.size, f"archive entry {member.name!r}")):
                    raise InputError(problem, path=name)
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
                        if (problem := limits.expansion_problem(written, compressed, "the archive")):
                            raise InputError(problem, path=name)
                        out.write(chunk)
    except _HeaderTooLarge as exc:
        raise InputError(f"archive holds a {exc.args[0]:,}-byte name or header record, more than the "
                         f"{MAX_HEADER_BYTES:,} bytes a header may use", path=name) from None
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
