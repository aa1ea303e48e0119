"""Excellon plating, job-file stackup and the board TOML file."""
import json

import numpy as np
import pytest

from scanner.errors import InputError
from scanner.importers.boardfile import read_board_file
from scanner.importers.excellon import plating_from_name, read_drills
from scanner.importers.jobfile import read_job_file

from artwork import excellon_text


def test_plating_from_x2_attribute_and_units(tmp_path):
    path = tmp_path / "holes.drl"
    path.write_text(excellon_text([(1.0, 2.0, 0.3), (3.0, 4.0, 0.8)], plated=False))
    drills = read_drills(path)
    assert drills.plating_source == "file"
    assert not drills.holes.plated.any()
    assert drills.holes.diameter == pytest.approx([0.3, 0.8])
    assert np.column_stack([drills.holes.x, drills.holes.y]) == pytest.approx(np.array([[1, 2], [3, 4]]))


@pytest.mark.parametrize("name, plated", [("b-NPTH.drl", False), ("b-PTH.drl", True), ("nonplated.xln", False),
                                          ("board.drl", None)])
def test_plating_from_name(name, plated):
    assert plating_from_name(name) is plated


def test_unknown_plating_assumed_plated_with_warning(tmp_path):
    path = tmp_path / "board.drl"
    path.write_text(excellon_text([(1.0, 2.0, 0.3)]))
    drills = read_drills(path)
    assert drills.plating_source == "assumed" and drills.holes.plated.all()
    assert any("plating not stated" in t for t in drills.log.counts)


def test_override_wins(tmp_path):
    path = tmp_path / "board-PTH.drl"
    path.write_text(excellon_text([(1.0, 2.0, 0.3)], plated=True))
    drills = read_drills(path, plated=False, plated_source="board-file")
    assert not drills.holes.plated.any() and drills.plating_source == "board-file"


def test_routed_slot_becomes_row_of_holes(tmp_path):
    path = tmp_path / "slots-PTH.drl"
    path.write_text("M48\nMETRIC\nT1C1.000\n%\nG05\nT1\nG00X0.0Y0.0\nM15\nG01X4.0Y0.0\nM16\nM30\n")
    drills = read_drills(path)
    assert drills.slot_count == 1
    assert drills.holes.x.min() == pytest.approx(0) and drills.holes.x.max() == pytest.approx(4)
    assert np.diff(np.sort(drills.holes.x)).max() <= 0.5 + 1e-9  # spaced at most half a diameter


def test_bad_drill_file(tmp_path):
    path = tmp_path / "bad.drl"
    path.write_text("M48\nMETRIC\nT1C0.3\n%\nT1\nX1Y2\nM30\n")  # integers without a number format
    with pytest.raises(InputError) as info:
        read_drills(path)
    assert info.value.path == str(path)


JOB = {
    "Header": {"GenerationSoftware": {"Application": "test"}},
    "FilesAttributes": [{"Path": "a.gbr", "FileFunction": "Copper,L1,Top", "FilePolarity": "Positive"},
                        {"Path": "b.gbr", "FileFunction": "Copper,L2,Bot,Plane", "FilePolarity": "Positive"}],
    "MaterialStackup": [
        {"Type": "Legend", "Name": "silk"},
        {"Type": "SolderMask", "Thickness": 0.02, "DielectricConstant": 3.8, "Name": "mask top"},
        {"Type": "Copper", "Thickness": 0.035, "Name": "L1"},
        {"Type": "Dielectric", "Thickness": 1.5, "DielectricConstant": 4.6, "Name": "core"},
        {"Type": "Copper", "Thickness": 0.035, "Name": "L2"},
    ],
}


def test_job_file_stackup(tmp_path):
    path = tmp_path / "b.gbrjob"
    path.write_text(json.dumps(JOB))
    job = read_job_file(path)
    kinds = [(s.kind, s.thickness_mm, s.epsilon_r, s.copper_index) for s in job.stackup.layers]
    assert kinds == [("soldermask", 0.02, 3.8, None), ("copper", 0.035, None, 0),
                     ("dielectric", 1.5, 4.6, None), ("copper", 0.035, None, 1)]
    assert job.stackup.source == "job-file"
    assert job.file_functions["b.gbr"] == ("Copper", "L2", "Bot", "Plane")


def test_job_file_bad_json_names_line(tmp_path):
    path = tmp_path / "b.gbrjob"
    path.write_text('{\n  "Header": {,\n}')
    with pytest.raises(InputError) as info:
        read_job_file(path)
    assert info.value.line == 2


def test_board_file(tmp_path):
    path = tmp_path / "nearfar-board.toml"
    path.write_text('layers = ["t.gbr", "b.gbr"]\nplanes = ["b.gbr"]\nnetlist = "n.ipc"\n'
                    'drills = ["p.drl", { file = "n.drl", plated = false }]\n')
    cfg = read_board_file(path)
    assert cfg.layers == ["t.gbr", "b.gbr"] and cfg.planes == ["b.gbr"] and cfg.netlist == "n.ipc"
    assert [(d.file, d.plated) for d in cfg.drills] == [("p.drl", None), ("n.drl", False)]


@pytest.mark.parametrize("text, message", [
    ('layers = "t.gbr"\n', "list of file names"),
    ('layers = ["a", "a"]\n', "twice"),
    ('colour = "green"\n', "unknown key"),
    ('layers = [\n', "not valid TOML"),
    ('drills = [{ file = "x", plated = "yes" }]\n', "drills"),
])
def test_board_file_errors(tmp_path, text, message):
    path = tmp_path / "nearfar-board.toml"
    path.write_text(text)
    with pytest.raises(InputError, match=message) as info:
        read_board_file(path)
    assert info.value.path == str(path)
