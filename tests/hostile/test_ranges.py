"""The physical-range table, the self-meeting count of outlines and the wildcard matchers, checked against
sources outside the project."""
import math
import re

import numpy as np
import pytest
import shapely

from scanner.importers.crossings import self_meetings
from scanner.input_limits import RANGES, check_range, range_problem
from scanner.errors import InputError
from scanner.patterns import MAX_PATTERN_WILDCARDS, compile_capture, compile_patterns, pattern_problem


def test_every_range_is_documented_with_its_bounds_unit_and_reason():
    """docs/validation.md keeps one row per kind of number: name, range and unit as the table has them."""
    with open("docs/validation.md", encoding="utf-8") as fh:
        doc = fh.read()
    for kind, allowed in RANGES.items():
        row = next((line for line in doc.splitlines() if line.startswith(f"| {kind} |")), None)
        assert row is not None, kind
        assert allowed.text() in row and allowed.why in row, row


@pytest.mark.parametrize("kind, value", [("rise time", 1e-300), ("swing", 1e300), ("noise budget", 1e-300),
                                         ("copper thickness", 1e-9), ("dielectric thickness", 1e-9),
                                         ("search distance", 1e6), ("aperture size", -0.1),
                                         ("relative permittivity", 0.5), ("drill diameter", 0.002)])
def test_absurd_values_refused_with_value_and_range(kind, value):
    with pytest.raises(InputError) as info:
        check_range(kind, value, "key", path="rules.toml", line=3)
    text = str(info.value)
    assert text.startswith("rules.toml:3: key ") and f"{value:.6g}" in text and RANGES[kind].text() in text


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf, "nan", True, None, "3 V"])
def test_non_numbers_and_non_finite_values_refused(value):
    assert "not a finite number" in range_problem("swing", value, "swing_v")


def test_values_at_the_ends_of_a_closed_range_are_accepted():
    allowed = RANGES["relative permittivity"]
    assert range_problem("relative permittivity", allowed.low, "er") is None
    assert range_problem("relative permittivity", allowed.high, "er") is None
    assert range_problem("search distance", 0.0, "d") is not None  # open at 0


def regular_star(n: int, m: int) -> np.ndarray:
    angle = 2 * np.pi * np.arange(n) * m / n
    return np.column_stack([np.cos(angle), np.sin(angle)])


@pytest.mark.parametrize("n", [5, 7, 11, 101, 301])
def test_star_polygon_crossings(n):
    """A regular star polygon {n/m} (n and m coprime) crosses itself at n(m - 1) points (a fact of plane
    geometry, from memory: the pentagram {5/2} at 5, the heptagram {7/3} at 14)."""
    m = n // 2
    assert self_meetings(regular_star(n, m), 10**9, 10**9) == (n * (m - 1), True)


def test_counting_stops_past_the_cap():
    """A {5001/2500} star crosses itself 5001 x 2499 times; the count stops after the chunk that passes the cap."""
    found, complete = self_meetings(regular_star(5001, 2500), 1000, 10**9)
    assert complete and 1000 < found < 5001 * 2499


def test_simple_rings_agree_with_geos():
    """Random small rings on a coarse grid (many touching and collinear edges): no meeting point exactly when
    GEOS (shapely.is_simple) finds the ring simple."""
    rng = np.random.default_rng(7)
    for _ in range(300):
        points = rng.integers(0, 6, size=(int(rng.integers(4, 30)), 2)).astype(float)
        if (np.abs(np.diff(points, axis=0)).sum(axis=1) == 0).any():
            continue  # repeated consecutive points: a zero-length edge GEOS treats as its own case
        found, _ = self_meetings(points, 10**9, 10**9)
        assert (found == 0) == shapely.is_simple(shapely.LinearRing(points)), points.tolist()


def test_large_simple_outline_is_checked_with_few_candidate_pairs():
    """A million-point circle: every edge overlaps only its neighbours, so the sweep examines about one pair
    per edge and finds no meeting (the work is linear in the points, not quadratic)."""
    ring = regular_star(1_000_000, 1)
    assert self_meetings(ring, 10_000, 3_000_000) == (0, True)


@pytest.mark.parametrize("pattern, name, expected", [
    ("CLK*", "clk_main", True), ("*_P", "USB_D_P", True), ("D?", "D3", True), ("D?", "D33", False),
    ("DATA[3]", "data[3]", True), ("DATA[3]", "DATA3", False), ("A*B*C", "AXBYC", True), ("A*B*C", "ACB", False),
    ("*AB*B", "ABB", True), ("*AB*B", "AB", False), ("*", "", True)])
def test_wildcards_match_as_documented(pattern, name, expected):
    """Reference: the shell wildcard rules of POSIX fnmatch (common practice), with brackets taken literally."""
    assert bool(compile_patterns((pattern,)).match(name.upper())) is expected


def test_matching_agrees_with_a_backtracking_reference():
    """Random patterns of many stars against random names: the same answers as a plain regular expression
    (Python's re with greedy groups, which backtracks but is exact)."""
    rng = np.random.default_rng(3)
    for _ in range(500):
        pattern = "".join(rng.choice(list("AB*?"), size=int(rng.integers(1, 12))))
        name = "".join(rng.choice(list("AB"), size=int(rng.integers(0, 12))))
        reference = re.fullmatch("".join(".*" if c == "*" else "." if c == "?" else c for c in pattern), name)
        assert bool(compile_patterns((pattern,)).match(name)) is (reference is not None), (pattern, name)


def test_many_stars_on_a_long_name_finish_at_once():
    """Forty wildcards would backtrack for ages in a naive matcher; here a match is one pass per piece."""
    pattern = "*A" * 30 + "*B"
    assert compile_patterns((pattern,)).match("A" * 20_000 + "B")
    assert not compile_patterns((pattern,)).match("A" * 20_000 + "C")
    capture = compile_capture("SENSOR*_TXA").match("sensor12_txa")
    assert capture.groups() == ("12",)


def test_pattern_limits():
    assert pattern_problem("*" * (MAX_PATTERN_WILDCARDS + 1)) is not None
    assert pattern_problem("X" * 300) is not None
    assert pattern_problem("CLK_*") is None
