"""Safe extraction of a board archive (.zip) into a temporary folder.

Every member is checked before it is extracted: its path, its kind, its declared size (against the
file-size limit and, added up, the archive limit) and how far it expands (compression ratio). Members
are copied in chunks, never held in memory whole, and the running total is checked as they are written.
"""
from __future__ import annotations

import stat
import zipfile
from pathlib import Path, PurePosixPath

from scanner.errors import InputError
from scanner.input_limits import FILE_MB, limit

#: limits on what one archive may expand to
MAX_EXPANDED_BYTES = 500 * 1024 * 1024
MAX_ENTRIES = 5000
#: how many times larger than its compressed size a member (or a compressed tar archive) may expand;
#: fabrication text compresses 3 to 30 times, a bomb of repeated bytes about a thousand times
MAX_RATIO = 200
#: members smaller than this may expand further (tiny files compress oddly)
RATIO_FROM_BYTES = 1 << 20
_CHUNK = 1 << 20


def expansion_problem(expanded: int, compressed: int, what: str) -> str | None:
    """Why ``expanded`` bytes from ``compressed`` look like a bomb, or None."""
    if expanded > RATIO_FROM_BYTES and expanded > MAX_RATIO * max(compressed, 1):
        return (f"{what} expands {expanded / max(compressed, 1):,.0f} times ({expanded:,} bytes from {compressed:,}), "
                f"more than the {MAX_RATIO} times fabrication files do")
    return None


def member_size_problem(size: int, what: str) -> str | None:
    """Why a member of ``size`` bytes cannot be an input file (larger than the file-size limit), or None."""
    most = limit(FILE_MB) * 2**20
    if size > most:
        return (f"{what} is {size:,} bytes, larger than the file-size limit of {most // 2**20} MB "
                f"(raise it with {FILE_MB[0]})")
    return None


def _checked_member(info: zipfile.ZipInfo, archive: str) -> PurePosixPath | None:
    name = info.filename.replace("\\", "/")
    path = PurePosixPath(name)
    if name.startswith("/") or (len(name) > 1 and name[1] == ":") or path.is_absolute():
        raise InputError(f"archive entry {info.filename!r} has an absolute path", path=archive)
    if ".." in path.parts:
        raise InputError(f"archive entry {info.filename!r} points outside the archive folder", path=archive)
    mode = info.external_attr >> 16
    if stat.S_ISLNK(mode):
        raise InputError(f"archive entry {info.filename!r} is a symbolic link", path=archive)
    if info.is_dir():
        return None
    what = f"archive entry {info.filename!r}"
    if (problem := member_size_problem(info.file_size, what) or
            expansion_problem(info.file_size, info.compress_size, what)) is not None:
        raise InputError(problem, path=archive)
    return path


def extract_archive(archive: Path, target: Path) -> None:
    """Extract ``archive`` into ``target``; refuse escaping paths, links and oversized contents."""
    name = str(archive)
    try:
        zf = zipfile.ZipFile(archive)
    except (zipfile.BadZipFile, OSError) as exc:
        raise InputError(f"not a readable zip archive: {exc}", path=name) from exc
    with zf:
        infos = zf.infolist()
        if len(infos) > MAX_ENTRIES:
            raise InputError(f"archive holds {len(infos)} entries, more than the limit of {MAX_ENTRIES}", path=name)
        members = [(info, _checked_member(info, name)) for info in infos]
        declared = sum(info.file_size for info, _ in members)
        if declared > MAX_EXPANDED_BYTES:
            raise InputError(f"archive would expand to {declared} bytes, more than the limit of "
                             f"{MAX_EXPANDED_BYTES}", path=name)
        written = 0
        for info, rel in members:
            if rel is None:
                continue
            dest = target.joinpath(*rel.parts)
            dest.parent.mkdir(parents=True, exist_ok=True)
            try:
                with zf.open(info) as src, open(dest, "wb") as out:
                    while chunk := src.read(_CHUNK):
                        written += len(chunk)
                        if written > MAX_EXPANDED_BYTES:
                            raise InputError(f"archive expands beyond the limit of {MAX_EXPANDED_BYTES} bytes",
                                             path=name)
                        out.write(chunk)
            except (zipfile.BadZipFile, OSError, EOFError, NotImplementedError) as exc:
                raise InputError(f"archive entry {info.filename!r} cannot be read: {exc}", path=name) from exc
