"""Differential pairs: by a polarity token in the names, by the rules' patterns, by routed geometry.

The naming forms are common practice in schematic net naming (from memory: LVDS and SerDes lanes
``_P0``/``_N0`` and ``RXP2``/``RXN2``, memory strobes ``DQS_P3``/``DQS_N3``, USB ``DP``/``DM``,
CAN ``_H``/``_L``). Geometric cases are synthetic: a length-tuned pair and a uniform bus.
"""
import numpy as np
import pytest

from scanner import scan
from scanner.board.pairing import name_pairs
from scanner.board.roles import assign_roles
from scanner.rules import Rules, parse_rules
from tests.scan.synthetic import WIDTH, board_from, polyline

NAMED_PAIRS = [("LVDS_P0", "LVDS_N0"), ("DQS_P3", "DQS_N3"), ("RXP2", "RXN2"), ("CLK-P2", "CLK-N2"),
               ("DP0", "DN0"), ("USB_DP", "USB_DM"), ("CAN_H", "CAN_L"), ("ADC_IN+", "ADC_IN-"),
               ("MGT_TX_P", "MGT_TX_N"), ("ck_t", "ck_c"), ("usb1_dp", "usb1_dn")]


@pytest.mark.parametrize("positive,negative", NAMED_PAIRS)
def test_pairs_by_one_polarity_token(positive, negative):
    names = ["GND", negative, "SPI_MISO", positive, "SPI_MOSI"]
    roles = assign_roles(names, Rules())
    p, n = names.index(positive), names.index(negative)
    assert roles.partner[p] == n and roles.partner[n] == p
    assert roles.polarity[p] == 1 and roles.polarity[n] == -1
    assert roles.pairs(names) == [{"p": positive, "n": negative, "source": "name"}]


@pytest.mark.parametrize("names", [
    ["SPI_NCS", "SPI_PCS"],        # the letter is inside a word, not a token
    ["DATAH", "DATAL"],            # H/L need a separator before them
    ["DBUS_D0", "DBUS_D1"],        # digits are not polarity
    ["LANE_P0", "LANE_N1"],        # differ in more than the token
    ["CLK_P", "CLK_N", "CLK_N"],   # ambiguous: two negatives
])
def test_names_that_are_not_pairs(names):
    assert name_pairs(names, np.ones(len(names), dtype=bool)) == []


def test_rules_patterns_pair_what_names_do_not_and_power_nets_never_pair():
    names = ["CAM1_DATA", "CAM1_DATB", "+5V", "-5V", "TXA", "TXB"]
    rules = parse_rules({"diff_pair": [{"positive": "CAM*_DATA", "negative": "CAM*_DATB"}]}, "t")
    roles = assign_roles(names, rules)
    assert roles.pairs(names) == [{"p": "CAM1_DATA", "n": "CAM1_DATB", "source": "rules"}]
    assert roles.partner[2] == -1 and roles.partner[3] == -1  # power rails named +/- are not a pair


def test_auto_pairing_can_be_switched_off():
    roles = assign_roles(["USB_P", "USB_N"], parse_rules({"scan": {"auto_diff_pairs": False}}, "t"))
    assert list(roles.partner) == [-1, -1]


GAP = 0.12
PITCH = WIDTH + GAP
RULES = parse_rules({"scan": {"search_distance_mm": 0.8, "min_coupled_length_mm": 1.0, "list_floor": 0.0},
                     "class": [{"name": "all", "nets": ["*"], "rise_time_ns": 0.3, "swing_v": 1.0}]}, "pair rules")


def meander(y, x0, x1, start, bumps, width, height, net):
    """A line along y from x0 to x1 with ``bumps`` rectangular length-tuning bumps (``width`` wide,
    ``height`` high, ``width`` apart) from x = ``start`` on."""
    points = [(x0, y)]
    for k in range(bumps):
        a = start + 2 * k * width
        points += [(a, y), (a, y + height), (a + width, y + height), (a + width, y)]
    points.append((x1, y))
    return polyline(points, net)


def unnamed(count):
    return [f"~L01@{i}.000,0.000" for i in range(count)]


def test_meandered_pair_pairs_by_geometry():
    # a pair with length-tuning bumps on its outer leg (common practice), and two lines well away
    rows = polyline([(0, 0), (60, 0)], 0) + meander(PITCH, 0, 60, 20, 8, 0.5, 0.4, 1)
    rows += polyline([(0, 3), (40, 3)], 2) + polyline([(0, 3 + WIDTH + 0.7), (40, 3 + WIDTH + 0.7)], 3)
    names = unnamed(4)
    result = scan(board_from({0: rows}, names), RULES)
    assert {"p": names[0], "n": names[1], "source": "geometry"} in result.pairs
    assert not any({d.victim, d.aggressor} == {names[0], names[1]} for h in result.hotspots for d in h.directions)
    # two lines 0.7 mm apart over 40 mm, over four widths' gap: too loose to be a routed pair
    assert not any(p["p"] in names[2:] for p in result.pairs)


def test_uniform_bus_does_not_pair():
    # eight lines at one pitch: each inner line has a neighbour at the same gap on both sides
    rows = sum((polyline([(0, i * PITCH), (50, i * PITCH)], i) for i in range(8)), [])
    names = unnamed(8)
    result = scan(board_from({0: rows}, names), RULES)
    assert result.pairs == []
    neighbours = {frozenset((h.directions[0].victim, h.directions[0].aggressor)) for h in result.hotspots
                  if h.min_spacing_mm < GAP + 0.01}
    assert len(neighbours) == 7


def test_named_nets_do_not_pair_by_geometry_unless_asked():
    rows = polyline([(0, 0), (60, 0)], 0) + polyline([(0, PITCH), (60, PITCH)], 1)
    board = board_from({0: rows}, ["SIG_A", "SIG_B"])
    assert scan(board, RULES).pairs == []
    everything = parse_rules({"scan": {"search_distance_mm": 0.8, "min_coupled_length_mm": 1.0,
                                       "pair_by_geometry": "all-nets"}}, "all")
    assert scan(board, everything).pairs == [{"p": "SIG_A", "n": "SIG_B", "source": "geometry"}]
