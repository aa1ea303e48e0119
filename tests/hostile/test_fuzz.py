"""Property-based tests: mutated input files reach the importers and the rules parser, and the only
exception that may escape is InputError (one line, naming the file)."""
from __future__ import annotations

import json
import math
import os
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import scanner
from scanner.errors import InputError
from scanner.importers.excellon import read_drills
from scanner.importers.gerber_copper import read_copper
from scanner.importers.ipc356 import read_ipc356
from scanner.importers.jobfile import read_job_file
from scanner.rules import load_rules, parse_rules
from tests.hostile import corpus

#: numeric warnings (overflow, invalid values) would reach the terminal: each one is a failure here
pytestmark = pytest.mark.filterwarnings("error::RuntimeWarning")

#: examples per property; set HOSTILE_FUZZ_EXAMPLES for a longer search
EXAMPLES = int(os.environ.get("HOSTILE_FUZZ_EXAMPLES", "100"))
FUZZ = settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
FEW = settings(FUZZ, max_examples=max(60, EXAMPLES // 2))

#: bytes that mean something in the formats under test, mixed into the random ones
SIGNIFICANT = list(b"%*XYIJDGM0123456789-+.,$LPTCAN \n") + [0, 0xFF]


def _lines(data: bytes) -> list[bytes]:
    return data.split(b"\n")


def _delete_line(draw, data: bytes) -> bytes:
    lines = _lines(data)
    del lines[draw(st.integers(0, len(lines) - 1))]
    return b"\n".join(lines)


def _duplicate_line(draw, data: bytes) -> bytes:
    lines = _lines(data)
    i = draw(st.integers(0, len(lines) - 1))
    lines.insert(draw(st.integers(0, len(lines))), lines[i])
    return b"\n".join(lines)


def _swap_lines(draw, data: bytes) -> bytes:
    lines = _lines(data)
    i, j = draw(st.integers(0, len(lines) - 1)), draw(st.integers(0, len(lines) - 1))
    lines[i], lines[j] = lines[j], lines[i]
    return b"\n".join(lines)


def _flip_byte(draw, data: bytes) -> bytes:
    if not data:
        return data
    k = draw(st.integers(0, len(data) - 1))
    new = draw(st.sampled_from(SIGNIFICANT) | st.integers(0, 255))
    return data[:k] + bytes([new]) + data[k + 1:]


def _truncate(draw, data: bytes) -> bytes:
    return data[: draw(st.integers(0, len(data)))]


def _insert_bytes(draw, data: bytes) -> bytes:
    k = draw(st.integers(0, len(data)))
    return data[:k] + draw(st.binary(min_size=1, max_size=24)) + data[k:]


def _insert_digits(draw, data: bytes) -> bytes:
    """Long runs of digits: absurd coordinates, sizes and counts."""
    k = draw(st.integers(0, len(data)))
    return data[:k] + b"9" * draw(st.integers(1, 400)) + data[k:]


MUTATIONS = (_delete_line, _duplicate_line, _swap_lines, _flip_byte, _truncate, _insert_bytes, _insert_digits)


@st.composite
def mutated(draw, lines: list[str]) -> bytes:
    """``lines`` as a file, damaged by one to four random edits."""
    data = ("\n".join(lines) + "\n").encode()
    for _ in range(draw(st.integers(1, 4))):
        data = draw(st.sampled_from(MUTATIONS))(draw, data)
    return data


def _only_input_errors(read, path: Path, data: bytes) -> None:
    """``read(path)`` either succeeds or raises InputError with a one-line message naming the file."""
    path.write_bytes(data)
    try:
        read(path)
    except InputError as exc:
        text = exc.one_line()
        assert "\n" not in text and text.isprintable()
        assert exc.message
        assert exc.path is None or path.name in exc.path


@FUZZ
@given(data=st.one_of(mutated(corpus.rich_lines()), mutated(corpus.top_lines()), mutated(corpus.bottom_lines()),
                      mutated(corpus.top_lines(x2=False))))
def test_mutated_gerber(tmp_path, data):
    _only_input_errors(read_copper, tmp_path / "fuzz.gbr", data)


@FUZZ
@given(data=mutated(corpus.netlist_lines()))
def test_mutated_netlist(tmp_path, data):
    _only_input_errors(read_ipc356, tmp_path / "fuzz.ipc", data)


@FEW
@given(data=mutated(corpus.drill_lines()))
def test_mutated_drill_file(tmp_path, data):
    _only_input_errors(read_drills, tmp_path / "fuzz.drl", data)


@FEW
@given(data=mutated(json.dumps(corpus.job_data(), indent=1).splitlines()))
def test_mutated_job_file(tmp_path, data):
    _only_input_errors(read_job_file, tmp_path / "fuzz.gbrjob", data)


@FUZZ
@given(data=mutated(corpus.RULES_LINES))
def test_mutated_rules_text(tmp_path, data):
    _only_input_errors(load_rules, tmp_path / "fuzz.toml", data)


# --- rules documents damaged in their structure (the text stays valid TOML)

TOML_SCALARS = st.one_of(st.integers(-10**20, 10**20), st.floats(allow_nan=True, allow_infinity=True),
                         st.text(max_size=12), st.booleans())
TOML_VALUES = st.recursive(TOML_SCALARS, lambda inner: st.lists(inner, max_size=4)
                           | st.dictionaries(st.text(max_size=10), inner, max_size=4), max_leaves=12)


def _places(doc, path=()):
    """Every (container path, key) in a parsed TOML document."""
    items = doc.items() if isinstance(doc, dict) else enumerate(doc)
    for key, value in items:
        yield path, key
        if isinstance(value, (dict, list)):
            yield from _places(value, path + (key,))


def _at(doc, path):
    for key in path:
        doc = doc[key]
    return doc


@st.composite
def damaged_rules(draw):
    """The valid rules document with values replaced, keys removed or unknown keys added."""
    doc = tomllib.loads("\n".join(corpus.RULES_LINES))
    for _ in range(draw(st.integers(1, 3))):
        places = list(_places(doc))
        path, key = draw(st.sampled_from(places))
        container = _at(doc, path)
        action = draw(st.sampled_from(("replace", "delete", "add")))
        if action == "replace":
            container[key] = draw(TOML_VALUES)
        elif action == "delete":
            del container[key]
        elif isinstance(container, dict):
            container[draw(st.text(max_size=10))] = draw(TOML_VALUES)
        else:
            container.append(draw(TOML_VALUES))
    return doc


@FUZZ
@given(doc=damaged_rules())
def test_damaged_rules_document(doc):
    try:
        rules = parse_rules(doc, "fuzz.toml")
    except InputError as exc:
        assert exc.path == "fuzz.toml" and "\n" not in exc.one_line()
        return
    # accepted rules hold only usable numbers
    for cls in rules.classes:
        assert cls.rise_time_ns > 0 and cls.swing_v > 0 and math.isfinite(cls.rise_time_ns)
    if rules.stackup is not None:
        assert all(0 < s.thickness_mm < 10 for s in rules.stackup.layers)


@FEW
@given(data=mutated(corpus.top_lines()))
def test_board_with_mutated_copper_layer(tmp_path, data):
    """The whole import (layer order, planes, net map) on a board whose top layer is damaged."""
    board = corpus.write_board(tmp_path / "board")
    (board / corpus.TOP_FILE).write_bytes(data)
    try:
        scanner.load_board(board)
    except InputError as exc:
        assert "\n" not in exc.one_line() and exc.message
