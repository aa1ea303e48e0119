"""IPC-D-356A fixed-column netlists: units, records, aliases, errors with line numbers."""
import numpy as np
import pytest

from scanner.errors import InputError
from scanner.importers.ipc356 import read_ipc356

from artwork import ipc356_point, ipc356_text


def _read(tmp_path, text):
    path = tmp_path / "net.ipc"
    path.write_text(text)
    return read_ipc356(path)


def test_metric_records(tmp_path):
    rec = _read(tmp_path, ipc356_text([
        ipc356_point(317, "GND", 5.0, 45.0, 0, hole_mm=0.3, refdes="VIA", pin=""),
        ipc356_point(327, "DATA0", 12.345, -6.789, 1),
        ipc356_point(327, "N/C", 1.0, 1.0, 1),
    ]))
    assert list(rec.net_name) == ["GND", "DATA0"]  # N/C points carry no net
    assert rec.x == pytest.approx([5.0, 12.345]) and rec.y == pytest.approx([45.0, -6.789])
    assert list(rec.access) == [0, 1] and list(rec.record) == [317, 327]
    assert rec.hole_mm == pytest.approx([0.3, 0.0])
    assert list(rec.line) == [4, 5]


def test_inch_units(tmp_path):
    # CUST 0: inches in units of 0.0001 in (IPC-D-356A parameter record, common practice)
    line = ipc356_point(327, "A", 1.0, 2.0, 1, step_mm=1.0)  # writes counts 1 and 2
    rec = _read(tmp_path, ipc356_text([line.replace("X+000001Y+000002", "X+010000Y+020000")], "CUST 0"))
    assert rec.x == pytest.approx([25.4]) and rec.y == pytest.approx([50.8])


def test_unknown_units_name_file_and_line(tmp_path):
    with pytest.raises(InputError) as info:
        _read(tmp_path, ipc356_text([ipc356_point(327, "A", 1, 2, 1)], "FURLONGS"))
    assert info.value.line == 3 and "FURLONGS" in info.value.message
    assert info.value.path.endswith("net.ipc")


def test_record_before_units(tmp_path):
    with pytest.raises(InputError, match="before any") as info:
        _read(tmp_path, "C  x\n" + ipc356_point(327, "A", 1, 2, 1) + "\nP  UNITS CUST 1\n999\n")
    assert info.value.line == 2


def test_bad_number_reports_line(tmp_path):
    bad = ipc356_point(327, "A", 1, 2, 1).replace("X+001000", "X+00A000")
    with pytest.raises(InputError) as info:
        _read(tmp_path, ipc356_text([ipc356_point(327, "B", 1, 2, 1), bad]))
    assert info.value.line == 5


def test_conductor_records_with_continuation_and_alias(tmp_path):
    text = "\n".join(["P  UNITS CUST 1", "P  NNAME1 VERY_LONG_NET_NAME_OVER_14",
                      "378NNAME1         L02 X0200 X+001000Y+002000 X+003000",
                      "078                    Y+004000",
                      "999"])
    rec = _read(tmp_path, text)
    assert set(rec.net_name) == {"VERY_LONG_NET_NAME_OVER_14"}
    assert list(rec.record) == [378, 378, 378]
    assert np.column_stack([rec.x, rec.y]) == pytest.approx(np.array([[1, 2], [3, 2], [3, 4]]))
    assert list(rec.access) == [2, 2, 2]


def test_empty_netlist_is_input_error(tmp_path):
    with pytest.raises(InputError, match="no 317"):
        _read(tmp_path, ipc356_text([]))
