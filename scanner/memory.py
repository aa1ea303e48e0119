"""The memory a run may use: a check before each heavy step, and the one line an out-of-memory failure leaves.

Each step whose memory grows with its input (parsed objects, placed flashes, outlines, spatial indexes,
candidate pairs, cross-section solves) estimates the bytes it needs from the input's sizes and calls
:func:`check_memory` first: more than is free stops the run with one line naming the step and the input
(exit status 2). What is free: ``NEARFAR_MAX_MEMORY_MB`` (megabytes for the whole process) less what the
process holds, when set; otherwise the least of the machine's available memory, the room left under the
process's address-space limit and the room left in its control group. A ``MemoryError`` that happens
anyway (an estimate that fell short) carries the stage it happened in, from :func:`stage`, so the command
line can name the stage and the input size.
"""
from __future__ import annotations

import math
import os
import resource
from contextlib import contextmanager
from pathlib import Path

from scanner.errors import InputError
from scanner.input_limits import limit

#: (environment variable, default): megabytes (2**20 bytes) the whole process may use, in place of the
#: machine's free memory (the default, None)
MEMORY_MB = ("NEARFAR_MAX_MEMORY_MB", None)
#: share of the free memory a single step may plan to use (the rest covers what estimates leave out)
HEADROOM = 0.8
#: attribute a MemoryError carries: (stage, input size) where it happened
STAGE_ATTRIBUTE = "nearfar_stage"

_stages: list[tuple[str, str]] = []


def _proc_kb(path: str, key: str) -> float | None:
    """A ``key:  N kB`` value of a /proc file, in bytes; None where the file or key is missing."""
    try:
        for line in Path(path).read_text().splitlines():
            if line.startswith(key + ":"):
                return float(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        return None
    return None


def _cgroup_room() -> float:
    """Bytes left under the control group's memory limit (version 2), or infinity."""
    try:
        most = Path("/sys/fs/cgroup/memory.max").read_text().strip()
        used = Path("/sys/fs/cgroup/memory.current").read_text().strip()
    except OSError:
        return math.inf
    return math.inf if not most.isdigit() else max(0.0, float(most) - float(used))


def _address_room() -> float:
    """Bytes of address space left under RLIMIT_AS, or infinity."""
    soft, _ = resource.getrlimit(resource.RLIMIT_AS)
    if soft == resource.RLIM_INFINITY:
        return math.inf
    size = _proc_kb("/proc/self/status", "VmSize")
    return max(0.0, soft - size) if size is not None else float(soft)


def _machine_available() -> float:
    available = _proc_kb("/proc/meminfo", "MemAvailable")
    if available is not None:
        return available
    try:
        return float(os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return math.inf


def free_bytes() -> float:
    """Bytes the next step may still use (see the module docstring)."""
    setting = limit(MEMORY_MB)
    if setting is not None:
        held = _proc_kb("/proc/self/status", "VmRSS") or 0.0
        return max(0.0, setting * 2.0**20 - held)
    return min(_machine_available(), _address_room(), _cgroup_room())


def check_memory(needed_bytes: float, what: str, path: str | Path | None = None, line: int | None = None) -> None:
    """Refuse a step that would need ``needed_bytes`` (an estimate) when that is more than it may use.

    ``what`` names the step and its input size, e.g. "placing 2,000,000 flashes of aperture D11".
    """
    free = HEADROOM * free_bytes()
    if needed_bytes <= free:
        return
    where = (f"{MEMORY_MB[0]}={limit(MEMORY_MB)}" if limit(MEMORY_MB) is not None
             else f"what this machine has free; set {MEMORY_MB[0]} to change it")
    raise InputError(f"{what} needs about {_mb(needed_bytes)} of memory, more than the {_mb(free)} "
                     f"available ({where})", path=path, line=line)


def _mb(n: float) -> str:
    return f"{n / 2**20:,.0f} MB" if n >= 2**20 else f"{n / 2**10:,.0f} kB"


@contextmanager
def stage(name: str, size: str):
    """Run the block as stage ``name`` working on input of ``size`` (words, e.g. "3 copper layers,
    1,200,000 trace segments"); a MemoryError leaving it carries both (innermost stage first)."""
    _stages.append((name, size))
    try:
        yield
    except MemoryError as exc:
        if getattr(exc, STAGE_ATTRIBUTE, None) is None:
            setattr(exc, STAGE_ATTRIBUTE, _stages[-1])
        raise
    except Exception as exc:
        if _is_allocation_failure(exc):
            error = MemoryError(str(exc))
            setattr(error, STAGE_ATTRIBUTE, _stages[-1])
            raise error from exc
        raise
    finally:
        _stages.pop()


def _is_allocation_failure(exc: Exception) -> bool:
    """A geometry library reporting that it could not allocate (GEOS raises C++ std::bad_alloc as an error)."""
    return type(exc).__name__ == "GEOSException" and "bad_alloc" in str(exc)


def out_of_memory_line(exc: MemoryError) -> str:
    """The one line for a run that ran out of memory: the stage and the input size."""
    name, size = getattr(exc, STAGE_ATTRIBUTE, None) or (_stages[-1] if _stages else ("a step", "unknown size"))
    return (f"nearfar: error: out of memory while {name} ({size}); free memory or give the run more "
            f"(the estimate before this step fell short, please report it)")
