"""Inputs small on disk but absurd in size or range, written by code: each must end in one line, within a
memory and a time limit.

Each entry of ``BOUNDED`` makes one case in a folder the test gives: the command line to run, environment
variables (limits lowered so that the files stay small), the exit status expected (2 bad input, 4 for the
one deliberate out-of-memory case) and a phrase the one error line must hold. The cases follow the attacks
that once took the whole machine down: absurd single values, outlines that cross themselves millions of
times, archives that expand a thousandfold, copper drawn many times over one spot, patterns of many ``*``.
"""
from __future__ import annotations

import io
import math
import tarfile
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from tests.hostile import corpus
from tests.hostile.corpus import mm
from tests.importers_odbpp.jobs import job_files, write_job


@dataclass(frozen=True)
class Bounded:
    """``nearfar *args`` with ``env`` must exit with ``status`` and one line on stderr holding ``says``."""

    args: tuple[str, ...]
    says: str
    status: int = 2
    env: dict[str, str] = field(default_factory=dict)
    memory_mb: int = 1536  # address-space limit of the process


BOUNDED: dict[str, Callable[[Path], Bounded]] = {}


def bounded(fn):
    BOUNDED[fn.__name__] = fn
    return fn


def scan(board: Path, tmp: Path, *more: str) -> tuple[str, ...]:
    return ("scan", str(board), "--out", str(tmp / "out"), "--no-images", *more)


def star(n: int, cx: float = 25.0, cy: float = 10.0, r: float = 8.0) -> list[tuple[float, float]]:
    """A closed star outline of ``n`` points: each edge jumps almost half way round, crossing most others."""
    step = n // 2
    points = [(cx + r * math.cos(2 * math.pi * k * step / n), cy + r * math.sin(2 * math.pi * k * step / n))
              for k in range(n)]
    return points + points[:1]


def circle(n: int, cx: float = 25.0, cy: float = 10.0, r: float = 8.0) -> list[tuple[float, float]]:
    points = [(cx + r * math.cos(2 * math.pi * k / n), cy + r * math.sin(2 * math.pi * k / n)) for k in range(n)]
    return points + points[:1]


def bottom_with_region(tmp: Path, points) -> Path:
    lines = corpus.bottom_lines()
    lines[-1:-1] = corpus.region(points)
    return corpus.board_with(tmp, corpus.BOTTOM_FILE, lines)


def rules_with(tmp: Path, old: str, new: str) -> Path:
    lines = [line.replace(old, new) for line in corpus.RULES_LINES]
    assert lines != corpus.RULES_LINES, old
    return corpus.write_lines(tmp / corpus.RULES_FILE, lines)


# ---------------------------------------------------------------------------------------- single absurd values


@bounded
def nan_aperture_everywhere(tmp):
    """Every aperture NaN: once a false pass (no copper, no finding, no warning)."""
    lines = [line.replace("C,0.150000", "C,nan").replace("C,0.600000", "C,nan") for line in corpus.top_lines()]
    return Bounded(scan(corpus.board_with(tmp, corpus.TOP_FILE, lines), tmp), "not a finite number")


@bounded
def one_metre_aperture(tmp):
    lines = [line.replace("C,0.150000", "C,1000") for line in corpus.top_lines()]
    return Bounded(scan(corpus.board_with(tmp, corpus.TOP_FILE, lines), tmp), "outside the aperture size range")


@bounded
def negative_aperture(tmp):
    lines = [line.replace("C,0.150000", "C,-0.15") for line in corpus.top_lines()]
    return Bounded(scan(corpus.board_with(tmp, corpus.TOP_FILE, lines), tmp), "outside the aperture size range")


@bounded
def zero_aperture_draws_a_conductor(tmp):
    lines = [line.replace("C,0.150000", "C,0") for line in corpus.top_lines()]
    return Bounded(scan(corpus.board_with(tmp, corpus.TOP_FILE, lines), tmp), "zero-size aperture D10")


def _job_with_copper_thickness(tmp, value) -> Path:
    return corpus.board_with_job(tmp, lambda d: d["MaterialStackup"][1].update(Thickness=value))


@bounded
def copper_one_nanometre_thick(tmp):
    return Bounded(scan(_job_with_copper_thickness(tmp, 1e-9), tmp), "outside the copper thickness range")


@bounded
def dielectric_one_nanometre_thick(tmp):
    rules = rules_with(tmp, "thickness_mm = 0.2,", "thickness_mm = 1e-9,")
    return Bounded(scan(corpus.write_board(tmp / "board"), tmp, "--rules", str(rules)),
                   "thickness_mm 1e-09 mm is outside the dielectric thickness range")


@bounded
def search_distance_of_a_kilometre(tmp):
    rules = rules_with(tmp, "search_distance_mm = 0.8", "search_distance_mm = 1e6")
    return Bounded(scan(corpus.write_board(tmp / "board"), tmp, "--rules", str(rules)),
                   "search_distance_mm 1e+06 mm is outside the search distance range")


@bounded
def swing_of_1e300_volts(tmp):
    rules = rules_with(tmp, "swing_v = 3.3", "swing_v = 1e300")
    return Bounded(scan(corpus.write_board(tmp / "board"), tmp, "--rules", str(rules)), "outside the swing range")


@bounded
def rise_time_of_1e_300_ns(tmp):
    rules = rules_with(tmp, "rise_time_ns = 0.5", "rise_time_ns = 1e-300")
    return Bounded(scan(corpus.write_board(tmp / "board"), tmp, "--rules", str(rules)), "outside the rise time range")


@bounded
def budget_of_1e_300_mv(tmp):
    rules = rules_with(tmp, "next_budget_mv = 60", "next_budget_mv = 1e-300")
    return Bounded(scan(corpus.write_board(tmp / "board"), tmp, "--rules", str(rules)),
                   "outside the noise budget range")


def board_with_8m_slot(tmp: Path, tool_mm: str) -> Path:
    """The board's drill file plus an 8 m routed slot (plunge, route, retract) of a tool of ``tool_mm``."""
    lines = corpus.drill_lines()
    lines[lines.index("T1C0.300")] = f"T1C0.300\nT2C{tool_mm}"
    lines[-1:-1] = ["T2", "G00X0.0Y0.0", "M15", "G01X8000.0Y0.0", "M16", "G05"]
    return corpus.board_with(tmp, corpus.DRILL_FILE, lines)


@bounded
def eight_metre_slot_with_a_two_micron_tool(tmp):
    return Bounded(scan(board_with_8m_slot(tmp, "0.002"), tmp), "outside the drill diameter range")


@bounded
def eight_metre_slot_counted_as_holes(tmp):
    """An 8 m slot of a 0.1 mm tool is 160,000 holes: counted against the object limit before any is made."""
    return Bounded(scan(board_with_8m_slot(tmp, "0.100"), tmp), "routed slots counted as rows of holes",
                   env={"NEARFAR_MAX_OBJECTS": "10000"})


# ---------------------------------------------------------------------------------------- outlines


@bounded
def star_region_of_5001_points(tmp):
    return Bounded(scan(bottom_with_region(tmp, star(5001)), tmp), "too tangled")


@bounded
def star_region_of_20001_points(tmp):
    return Bounded(scan(bottom_with_region(tmp, star(20001)), tmp), "too tangled")


@bounded
def star_region_of_1001_points(tmp):
    """Few enough candidate pairs to count the crossings exactly: refused for crossing itself too often."""
    return Bounded(scan(bottom_with_region(tmp, star(1001)), tmp), "crosses or touches itself at more than")


@bounded
def large_region_beyond_the_point_limit(tmp):
    """Refused while parsing, at the first check past the limit, not after the whole outline is held."""
    return Bounded(scan(bottom_with_region(tmp, circle(100_000)), tmp), "more than 50,000 points in one region",
                   env={"NEARFAR_MAX_SEGMENTS": "50000"})


# ---------------------------------------------------------------------------------------- archives


@bounded
def zip_of_many_large_members(tmp):
    """Twenty members of 5 MiB of zeros each, 100 kB compressed: refused before the first is extracted."""
    path = tmp / "many.zip"
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=1) as zf:
        for k in range(20):
            zf.writestr(f"board/layer{k}.gbr", bytes(5 << 20))
    return Bounded(scan(path, tmp), "expands")


@bounded
def tgz_expanding_a_thousandfold(tmp):
    """A compressed tar whose members declare their true sizes, each within the limits, but which expands
    from about 20 kB to 16 MB of zeros: stopped as the expansion passes the ratio, not at the end."""
    path = tmp / "zeros.tgz"
    with tarfile.open(path, "w:gz", compresslevel=1) as tf:
        for k in range(2):
            info = tarfile.TarInfo(f"job/steps/pcb/layers/l{k}/features")
            info.size = 8 << 20
            tf.addfile(info, io.BytesIO(bytes(info.size)))
    return Bounded(scan(path, tmp), "times fabrication files do")


@bounded
def tar_header_with_a_huge_name(tmp):
    """A GNU long-name record of 4 MiB (a gigabyte works the same way: it is refused before it is read)."""
    path = tmp / "longname.tgz"
    with tarfile.open(path, "w:gz", format=tarfile.GNU_FORMAT) as tf:
        info = tarfile.TarInfo("n" * (4 << 20))
        tf.addfile(info)
    return Bounded(scan(path, tmp), "name or header record")


# ---------------------------------------------------------------------------------------- many objects


def _top_with_draws(tmp: Path, count: int, pitch_mm: float) -> Path:
    """The top layer plus ``count`` short draws of one net, each ``pitch_mm`` right of the one before."""
    draws = []
    for k in range(count):
        x = 45 + k * pitch_mm
        draws += [f"X{mm(x)}Y{mm(1)}D02*", f"X{mm(x + 1)}Y{mm(1)}D01*"]
    board, _ = corpus.top_with(tmp, "M02*", ["%TO.N,REPEAT*%", "D10*", *draws, "%TD*%"])
    return board


@bounded
def many_segments_beyond_the_memory_limit(tmp):
    """70,000 segments with 150 MB allowed: refused while parsing, before any outline or index is built."""
    return Bounded(scan(_top_with_draws(tmp, 70_000, 0.0001), tmp), "of memory",
                   env={"NEARFAR_MAX_MEMORY_MB": "150"})


@bounded
def heavily_overlapping_draws(tmp):
    """3,000 draws of one net stacked within 3 microns: nine million overlapping pairs for the net map."""
    return Bounded(scan(_top_with_draws(tmp, 3000, 0.001), tmp), "pairs of overlapping boxes",
                   env={"NEARFAR_MAX_PAIRS": "1000000"})


@bounded
def odbpp_feature_count_beyond_the_limit(tmp):
    body = "".join(f"L {1 + i * 0.001:.3f} 5 {2 + i * 0.001:.3f} 5 0 P 0\n" for i in range(2000))
    job = write_job(tmp, job_files(steps__pcb__layers__top__features="UNITS=MM\n#\n$0 r200\n" + body))
    return Bounded(scan(job, tmp), "more than 1,000 features", env={"NEARFAR_MAX_OBJECTS": "1000"})


@bounded
def odbpp_absurd_symbol(tmp):
    top = "UNITS=MM\n#\n$0 r999999999999\nP 10 10 0 P 0 0\n"
    job = write_job(tmp, job_files(steps__pcb__layers__top__features=top))
    return Bounded(scan(job, tmp), "outside the aperture size range")


# ---------------------------------------------------------------------------------------- patterns


@bounded
def diff_pair_pattern_of_many_stars(tmp):
    many = "*A" * 40 + "*_P"
    rules = rules_with(tmp, 'positive = "*_P"', f'positive = "{many}"')
    rules.write_text(rules.read_text().replace('negative = "*_N"', f'negative = "{many[:-1]}N"'))
    return Bounded(scan(corpus.write_board(tmp / "board"), tmp, "--rules", str(rules)), "wildcards, more than")


# ---------------------------------------------------------------------------------------- section


def _section_case(name: str, width: str, height: str, says: str) -> None:
    def make(tmp):
        return Bounded(("section", "--width", width, "--spacing", "0.2", "--height-below", height), says)
    make.__name__ = name
    bounded(make)


_section_case("section_a_metre_wide", "1000", "0.1", "--width 1000 mm is outside the trace width range")
_section_case("section_a_picometre_high", "0.2", "1e-12",
              "--height-below 1e-12 mm is outside the dielectric thickness range")
_section_case("section_1e300_high", "0.2", "1e300", "outside the dielectric thickness range")


@bounded
def section_beyond_free_memory(tmp):
    """2,304 panels need about 800 MB at the solve's peak: refused by the estimate under a 512 MB address space."""
    return Bounded(("section", "--width", "0.5", "--spacing", "0.5", "--height-below", "0.001"),
                   "(2,304 panels) needs about", memory_mb=512)


@bounded
def section_out_of_memory_on_purpose(tmp):
    """The same solve with the estimate switched off by a memory setting far above the machine's: it runs out
    of memory under the address-space limit and ends in one line naming the stage and its size (status 4)."""
    return Bounded(("section", "--width", "0.5", "--spacing", "0.5", "--height-below", "0.001"),
                   "out of memory while solving a cross-section (2,304 panels)", status=4,
                   env={"NEARFAR_MAX_MEMORY_MB": "100000"}, memory_mb=512)
