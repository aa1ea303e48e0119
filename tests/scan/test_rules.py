"""Rules file parsing, net roles and differential pairing."""
import pytest

from scanner.errors import InputError
from scanner.board.roles import assign_roles
from scanner.rules import Rules, load_rules, parse_rules

GOOD = """
[scan]
search_distance_mm = 0.8
min_coupled_length_mm = 3
budget_basis = "rss"

[[class]]
name = "sensor-bus"
nets = ["SNS_*"]
rise_time_ns = 0.6
swing_v = 1.8
next_budget_mv = 60
fext_budget_pct = 4
termination = "matched"

[power]
nets = ["VMOTOR"]

[[diff_pair]]
positive = "CAM*_DATP"
negative = "CAM*_DATM"

[stackup]
layers = [
  { kind = "soldermask", thickness_mm = 0.02, epsilon_r = 3.6 },
  { kind = "copper", thickness_mm = 0.035 },
  { kind = "dielectric", thickness_mm = 0.1, epsilon_r = 3.9 },
  { kind = "copper", thickness_mm = 0.035 },
]
"""


def test_full_file_parses(tmp_path):
    p = tmp_path / "rules.toml"
    p.write_text(GOOD)
    r = load_rules(p)
    assert r.scan.search_distance_mm == 0.8 and r.scan.budget_basis == "rss"
    c = r.class_of("sns_clk")  # patterns match case-insensitively
    assert c.name == "sensor-bus"
    assert c.next_budget_v() == pytest.approx(0.060)
    assert c.fext_budget_v() == pytest.approx(0.04 * 1.8)
    assert r.class_of("OTHER").name == "default"
    assert r.is_power("VMOTOR") and r.is_power("GND") and r.is_power("+5V")
    assert [l.kind for l in r.stackup.layers] == ["soldermask", "copper", "dielectric", "copper"]
    assert r.stackup.layers[3].copper_index == 1


@pytest.mark.parametrize("text, needle", [
    ("[scan]\nsearch_radius = 1\n", "unknown key 'search_radius'"),
    ("[scan]\nmin_coupled_length_mm = \"long\"\n", "must be float"),
    ("[[class]]\nname = \"x\"\n", "needs 'name' and 'nets'"),
    ("[[class]]\nname = \"x\"\nnets = [\"A*\"]\ntermination = \"open\"\n", "termination must be one of"),
    ("[[class]]\nname = \"x\"\nnets = [\"A*\"]\nrise_time_ns = -1\n", "rise_time_ns -1 ns is outside the rise time range"),
    ("colour = 1\n", "unknown key(s) colour"),
    ("[stackup]\nlayers = [{ kind = \"dielectric\", thickness_mm = 0.1, epsilon_r = 0.5 }]\n", "epsilon_r 0.5 is outside the relative permittivity range"),
    ("[stackup]\nlayers = [{ kind = \"copper\", thickness_mm = -0.1 }]\n", "thickness_mm -0.1 mm is outside the copper thickness range"),
    ("[[diff_pair]]\npositive = \"A*_P\"\nnegative = \"A_N\"\n", "same number of '*'"),
    ("[scan]\npair_by_geometry = \"always\"\n", "pair_by_geometry must be one of"),
    ("[[class]]\nname = \"x\"\nnets = [\"A*\"]\ntermination = \"high_z\"\n", "termination must be one of"),
])
def test_bad_rules_name_the_problem(tmp_path, text, needle):
    p = tmp_path / "r.toml"
    p.write_text(text)
    with pytest.raises(InputError) as e:
        load_rules(p)
    assert needle in str(e.value)
    assert str(p) in str(e.value)


def test_toml_syntax_error_names_the_line(tmp_path):
    p = tmp_path / "r.toml"
    p.write_text("[scan]\nsearch_distance_mm = = 2\n")
    with pytest.raises(InputError) as e:
        load_rules(p)
    assert e.value.line == 2


def test_roles_power_and_pairs():
    names = ["GND", "DQ0", "USB_P", "USB_N", "+3V3", "LVDS0+", "LVDS0-", "CAM1_DATP", "CAM1_DATM", "lone_p"]
    rules = parse_rules({"diff_pair": [{"positive": "CAM*_DATP", "negative": "CAM*_DATM"}]}, "t")
    roles = assign_roles(names, rules, plane_nets={"DQ0"})
    assert list(roles.active) == [False, False, True, True, False, True, True, True, True, True]
    assert roles.partner[2] == 3 and roles.partner[3] == 2
    assert roles.partner[5] == 6 and roles.polarity[5] == 1 and roles.polarity[6] == -1
    assert roles.partner[7] == 8
    assert roles.partner[9] == -1


def test_defaults_are_stated():
    d = Rules().to_dict()
    assert d["source"] == "defaults"
    assert d["default_class"]["rise_time_ns"] > 0
    assert d["scan"]["min_coupled_length_mm"] > 0


def test_api_functions_survive_their_modules_being_imported():
    import scanner
    import scanner.pipeline  # noqa: F401
    assert callable(scanner.scan) and callable(scanner.load_board)


def test_patterns_that_match_no_net_are_warnings_naming_the_nearest_nets():
    names = ["CTL_RESET", "CTL_LED", "CTL_EN", "DBUS_D0", "USB_P", "USB_N", "VIN"]
    rules = parse_rules({"class": [{"name": "control", "nets": ["CTRL_*"]}, {"name": "bus", "nets": ["DBUS_*"]}],
                         "power": {"nets": ["VIN", "VBATT"]},
                         "diff_pair": [{"positive": "CAM*_P", "negative": "CAM*_N"}]}, "t")
    warnings = assign_roles(names, rules).warnings
    assert len(warnings) == 3
    control = next(w for w in warnings if "'control'" in w)
    assert "'CTRL_*' matches no net" in control
    assert all(n in control for n in ("CTL_RESET", "CTL_LED", "CTL_EN")) and "DBUS_D0" not in control
    assert any("[power]" in w and "'VBATT'" in w and "no net name is close" in w for w in warnings)
    assert any("[[diff_pair]]" in w and "CAM*_P" in w for w in warnings)
    # the built-in power patterns matching nothing are not the user's mistake: no warning for them
    assert not any("GND*" in w for w in warnings)


def test_scan_carries_the_pattern_warnings():
    from scanner import scan
    from tests.scan.synthetic import board_from, polyline
    board = board_from({0: polyline([(0, 0), (10, 0)], 0)}, ["CTL_LED"])
    rules = parse_rules({"class": [{"name": "control", "nets": ["CTRL_*"]}]}, "t")
    result = scan(board, rules)
    assert any("CTRL_*" in w and "CTL_LED" in w for w in result.warnings)
