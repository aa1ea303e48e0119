"""Stackup files given with --stackup: CSV tables as fabricators publish them, and a TOML [stackup] table."""
from pathlib import Path

import pytest

from scanner.errors import InputError
from scanner.importers.stackup_file import read_stackup_file

# (name, type, thickness in mm, dielectric constant) of an invented 4-layer build, top to bottom
BUILD = [("Top mask", "Solder mask", 0.0254, 3.6), ("TOP", "Copper", 0.0381, None),
         ("PP1", "Prepreg", 0.1016, 4.05), ("GND", "Copper", 0.0254, None), ("C1", "Core", 1.2192, 4.4),
         ("PWR", "Copper", 0.0254, None), ("PP2", "Prepreg", 0.1016, 4.05), ("BOT", "Copper", 0.0381, None),
         ("Bottom mask", "Solder mask", 0.0254, 3.6)]
#: mm per unit; 1 mil = 0.0254 mm exactly (definition of the inch, common practice)
UNITS = {"(mm)": 1.0, "[µm]": 1e-3, "um": 1e-3, "(mil)": 0.0254, "mils": 0.0254}


def write(tmp_path, text, name="stack.csv", encoding="utf-8"):
    path = tmp_path / name
    path.write_text(text, encoding=encoding)
    return path


def csv_text(unit: str, per_mm: float, sep: str = ",", decimal: str = ".") -> str:
    lines = [sep.join(["Layer", "Type", f"Thickness {unit}", "Dk @ 1 GHz", "Df"])]
    for name, kind, t_mm, er in BUILD:
        t = f"{t_mm / per_mm:.6g}".replace(".", decimal)
        lines.append(sep.join([name, kind, t, "" if er is None else f"{er:g}".replace(".", decimal), "0.02"]))
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("unit", list(UNITS))
def test_each_thickness_unit_gives_the_same_stackup(tmp_path, unit):
    stack = read_stackup_file(write(tmp_path, csv_text(unit, UNITS[unit])))
    assert stack.source == "stackup-file" and stack.path.endswith("stack.csv")
    assert [s.kind for s in stack.layers] == ["soldermask", "copper", "dielectric", "copper", "dielectric", "copper",
                                              "dielectric", "copper", "soldermask"]
    assert [s.thickness_mm for s in stack.layers] == pytest.approx([b[2] for b in BUILD], rel=1e-5)
    assert [s.epsilon_r for s in stack.layers] == [b[3] for b in BUILD]
    assert [s.copper_index for s in stack.copper()] == [0, 1, 2, 3]
    assert [s.name for s in stack.copper()] == ["TOP", "GND", "PWR", "BOT"]


def test_semicolons_decimal_commas_title_line_and_comments(tmp_path):
    text = "Stackup for the invented Harrow Lane sensor hub, rev C\n# thicknesses after lamination\n"
    stack = read_stackup_file(write(tmp_path, text + csv_text("(mm)", 1.0, sep=";", decimal=",")))
    assert [s.thickness_mm for s in stack.layers] == pytest.approx([b[2] for b in BUILD])
    assert stack.layers[2].epsilon_r == pytest.approx(4.05)


def test_copper_weight_in_oz_when_no_thickness(tmp_path):
    text = ("name,type,thickness (mm),er,copper weight (oz)\n"
            "L1,copper,,,1\nd,dielectric,0.2,4.3,\nL2,copper,,,0.5\nd2,dielectric,0.2,4.3,\nL3,copper,0.07,,1\n")
    stack = read_stackup_file(write(tmp_path, text))
    # 1 oz/ft² of copper taken as 1.35 mil = 0.03429 mm (common practice in fabrication tools)
    assert [s.thickness_mm for s in stack.copper()] == pytest.approx([0.03429, 0.017145, 0.07])


def test_spreadsheet_export_in_windows_1252(tmp_path):
    path = tmp_path / "stack.csv"
    path.write_bytes(csv_text("(µm)", 1e-3).encode("cp1252"))
    assert read_stackup_file(path).layers[1].thickness_mm == pytest.approx(0.0381)


def test_toml_stackup_table_alone(tmp_path):
    text = ('[stackup]\nlayers = [\n  { kind = "copper", thickness_mm = 0.035, name = "A" },\n'
            '  { kind = "dielectric", thickness_mm = 0.2, epsilon_r = 4.3 },\n'
            '  { kind = "copper", thickness_mm = 0.035, name = "B" },\n]\n')
    stack = read_stackup_file(write(tmp_path, text, "stack.toml"))
    assert stack.source == "stackup-file" and [s.name for s in stack.copper()] == ["A", "B"]


@pytest.mark.parametrize("text,needle,line", [
    ("Layer,Type,Thickness,Dk\nL1,copper,0.035,\n", "unit in the header", 1),
    ("Layer,Type,Thickness (mm),Dk\nL1,copper,0.035,\nX,silkscreen,0.01,4\n", "not copper, dielectric", 3),
    ("Layer,Type,Thickness (mm),Dk\nL1,copper,0.035,\nd,prepreg,0.1,\n", "no dielectric constant", 3),
    ("Layer,Type,Thickness (mm),Dk\nL1,copper,0.035,\nd,prepreg,abc,4\n", "not a number", 3),
    ("Layer,Type,Thickness (mm),Dk\nL1,copper,0.035,\nd,prepreg,-0.1,4\n", "outside", 3),
    ("Layer,Type,Thickness (mm),Dk\nL1,copper,0.035,\nd,prepreg,0.1,0.5\n", "outside", 3),
    ("Layer,Type,Thickness (mm),Dk\nL1,copper,,\n", "no thickness or copper weight", 2),
    ("Layer,Type,Thickness (mm),Dk\nd,core,1.5,4.4\n", "no copper rows", None),
    ("Layer,Thickness (mm),Dk\nL1,0.035,\n", "lacks a column for type", 1),
    ("Layer,Type,Thickness (mm),Dk\nL1,,0.035,\n", "no layer type", 2),
])
def test_bad_tables_are_refused_with_file_and_line(tmp_path, text, needle, line):
    with pytest.raises(InputError) as exc:
        read_stackup_file(write(tmp_path, text))
    assert needle in exc.value.message and exc.value.path.endswith("stack.csv") and exc.value.line == line


def test_toml_with_more_than_the_stackup_is_refused(tmp_path):
    text = '[scan]\nmin_coupled_length_mm = 2\n[stackup]\nlayers = [{ kind = "copper", thickness_mm = 0.035 }]\n'
    with pytest.raises(InputError, match="alone"):
        read_stackup_file(write(tmp_path, text, "stack.toml"))


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="not found"):
        read_stackup_file(tmp_path / "nothing.csv")


def test_the_documented_example_reads(tmp_path):
    doc = (Path(__file__).resolve().parents[2] / "docs/rules.md").read_text()
    example = doc.split("```csv\n", 1)[1].split("```", 1)[0]
    stack = read_stackup_file(write(tmp_path, example))
    assert [s.name for s in stack.copper()] == ["TOP", "GND", "PWR", "BOT"]
    assert stack.layers[2].thickness_mm == pytest.approx(0.09) and stack.layers[2].epsilon_r == 3.95
    assert stack.copper()[0].thickness_mm == pytest.approx(0.03429)  # 1 oz as 1.35 mil (common practice)
