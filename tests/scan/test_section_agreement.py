"""``nearfar section`` and ``nearfar scan`` give the same NEXT and FEXT for one geometry: one termination model,
named the same way in both (docs/physics.md, terminations)."""
import json

import pytest
from click.testing import CliRunner

from scanner import scan
from scanner.commands.section import command as section
from scanner.rules import parse_rules
from tests.scan.synthetic import WIDTH, board_from, polyline

GAP, LENGTH = 0.2, 30.0


@pytest.mark.parametrize("termination", ["matched", "high-z-receiver"])
def test_section_and_scan_agree_on_one_geometry(termination):
    # the synthetic build's top layer: 0.035 mm copper on 0.2 mm of er 4.2 over a plane, 0.02 mm mask of er 3.8
    rows = polyline([(0, 0), (LENGTH, 0)], 0) + polyline([(0, WIDTH + GAP), (LENGTH, WIDTH + GAP)], 1)
    rules = parse_rules({"scan": {"search_distance_mm": 0.8, "min_coupled_length_mm": 1.0},
                         "class": [{"name": "all", "nets": ["*"], "rise_time_ns": 0.7, "swing_v": 3.3,
                                    "termination": termination}]}, "agreement")
    h = scan(board_from({0: rows}, ["A", "B"]), rules).hotspots[0]
    out = CliRunner().invoke(section, [
        "--width", str(WIDTH), "--spacing", str(GAP), "--copper", "0.035", "--height-below", "0.2",
        "--er-below", "4.2", "--mask", "0.02", "--mask-er", "3.8", "--rise-time", "0.7", "--length", str(LENGTH),
        "--swing", "3.3", "--termination", termination, "--json"])
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    assert data["termination"] == h.termination == termination
    # the scan interpolates tables over spacing (within 1 % of a direct solve, docs/physics.md)
    assert h.next_mv == pytest.approx(1e3 * data["next_v"], rel=0.02)
    assert h.fext_mv == pytest.approx(1e3 * data["fext_v"], rel=0.02)
