"""The ``section`` command, invoked directly through click's test runner."""
import json

import pytest
from click.testing import CliRunner

from scanner.cli import main
from scanner.commands.section import command
from scanner.physics import cohn_coupled_stripline


def run(*args):
    return CliRunner().invoke(command, list(args))


def test_json_figures_for_a_centred_stripline_pair():
    result = run("--width", "0.2", "--spacing", "0.2", "--copper", "0", "--height-below", "0.25",
                 "--height-above", "0.25", "--er-below", "4.0", "--rise-time", "0.1", "--length", "50",
                 "--termination", "matched", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    for key in ("L_per_m", "C_per_m", "z0_ohm", "z_even_ohm", "z_odd_ohm", "kb", "kf_s_per_m",
                "saturation_length_mm"):
        assert key in data
    z_even, z_odd = cohn_coupled_stripline(0.2, 0.2, 0.5, 4.0)
    # S. B. Cohn, IRE Trans. MTT-3, 1955 (exact, zero thickness)
    assert data["z_even_ohm"] == pytest.approx(z_even, rel=0.01)
    assert data["z_odd_ohm"] == pytest.approx(z_odd, rel=0.01)
    assert abs(data["kf_s_per_m"]) < 1e-15
    # v T / 2 with v = c / 2 and T = 0.1 ns / 0.8 (docs/physics.md §3)
    assert data["saturation_length_mm"] == pytest.approx(299.792458 / 2 * 0.125 / 2, rel=1e-6)
    assert data["next_v"] == pytest.approx(data["kb"], rel=1e-9)  # 50 mm is beyond saturation
    assert data["termination"] == "matched"


def test_default_termination_is_the_rules_default_and_doubles_what_arrives():
    args = ["--width", "0.2", "--spacing", "0.2", "--height-below", "0.25", "--rise-time", "0.5", "--length", "40",
            "--json"]
    default = json.loads(run(*args).output)
    matched = json.loads(run(*args, "--termination", "matched").output)
    assert default["termination"] == "high-z-receiver"
    # an open input doubles the arriving wave (reflection coefficient +1, any transmission-line text)
    assert default["next_v"] == pytest.approx(2 * matched["next_v"], rel=1e-9)
    assert default["fext_v"] == pytest.approx(2 * matched["fext_v"], rel=1e-9)


def test_the_old_option_word_is_gone():
    result = run("--width", "0.15", "--spacing", "0.15", "--height-below", "0.1", "--receiver", "high_z")
    assert result.exit_code == 2


def test_text_output_for_a_masked_microstrip():
    result = run("--width", "0.15", "--spacing", "0.15", "--height-below", "0.1", "--mask", "0.02",
                 "--rise-time", "0.1", "--length", "30", "--termination", "high-z-receiver")
    assert result.exit_code == 0, result.output
    for text in ("L (nH/m)", "C (pF/m)", "even / odd impedance", "Kb", "Kf", "saturation length", "NEXT", "FEXT",
                 "receiver on the aggressor's driver end", "receiver on the far end", "confirm critical nets"):
        assert text in result.output


def test_single_trace_has_no_coupling_figures():
    data = json.loads(run("--width", "0.3", "--height-below", "0.2", "--json").output)
    assert data["traces"] == 1 and data["kb"] is None and data["z_even_ohm"] is None
    assert 30 < data["z0_ohm"][0] < 80


@pytest.mark.parametrize("args", [
    ["--width", "0.1", "--height-below", "0.1", "--planes", "both"],
    ["--width", "0.1", "--spacing", "0.1", "--height-below", "0.1", "--height-above", "0.1", "--mask", "0.02"],
    ["--width", "0.1", "--width", "0.1", "--width", "0.1", "--spacing", "0.1", "--spacing", "0.1",
     "--spacing", "0.1", "--height-below", "0.1"],
    ["--width", "0.1", "--width", "0.1", "--height-below", "0.1"],
    ["--width", "0.1", "--spacing", "0.1", "--height-below", "0.1", "--victim", "5"],
    ["--width", "0.1", "--spacing", "0.1", "--height-below", "0.1", "--length", "10"],
    ["--width", "-0.1", "--height-below", "0.1"],
    ["--width", "0.1", "--spacing", "0.1", "--height-below", "0.1", "--height-above", "0.02", "--planes", "both"],
])
def test_bad_option_combinations_exit_with_status_2(args, capsys):
    with pytest.raises(SystemExit) as info:
        main(["section", *args])
    assert info.value.code == 2
    assert "Traceback" not in capsys.readouterr().err
