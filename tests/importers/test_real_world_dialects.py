"""Families of real-world fabrication files, made small by the tests: drill dialects and side files, a
Gerber-syntax job file, layer names, ragged outlines, framed films, stroked and negative planes, N/C
copper, two boards in one folder, empty copper, and internal errors.

All boards are our own invention; reference values are geometry worked by hand (common practice).
"""
import json
import math

import numpy as np
import pytest

import scanner
from scanner.errors import InputError
from scanner.importers.layer_names import guess_from_name, header_names

from artwork import excellon_text, gerber_text, write_board

MIL = 0.0254  # mm per thousandth of an inch (exact, by definition of the inch)


def _pads(points, d=0.8):
    return [{"kind": "flash", "at": p, "d": d} for p in points]


# --- drills ------------------------------------------------------------------------------------

#: hole positions of the header-less drill file, in inches (2.4 format, leading zeros kept)
_HOLES_IN = [(1.095, 1.056), (1.095, 1.27), (1.309, 1.056), (2.0, 2.5)]


def _headerless_drill(folder):
    """No header, the tool defined where it is used, no units, leading zeros kept and trailing ones dropped."""
    lines = ["%", "T1C.015F095S3", "X01095Y01056", "X01095Y0127", "X01309Y01056", "X02Y025", "M30"]
    (folder / "Drill.drl").write_text("\n".join(lines) + "\n")


def _copper_on_holes(folder, x2=False):
    pads = _pads([(x * 25.4, y * 25.4) for x, y in _HOLES_IN])
    trace = [{"kind": "line", "pts": [(27.8, 26.8), (27.8, 32.3)], "w": 0.25}]
    (folder / "Top.gbr").write_text(gerber_text(pads + trace, x2=x2))
    (folder / "Bottom.gbr").write_text(gerber_text(pads, x2=x2))


def test_headerless_drill_units_inferred_from_pads(tmp_path):
    _copper_on_holes(tmp_path)
    _headerless_drill(tmp_path)
    board = scanner.load_board(tmp_path)
    expected = np.array(_HOLES_IN) * 25.4  # inch to mm, exact by definition
    got = np.column_stack([board.holes.x, board.holes.y])
    assert got[np.lexsort(got.T[::-1])] == pytest.approx(expected[np.lexsort(expected.T[::-1])], abs=1e-6)
    assert board.holes.diameter == pytest.approx([15 * MIL] * 4)
    assert any("Drill.drl" in w and "read as inch 2.4" in w and "100% of the holes" in w for w in board.warnings)
    assert not board.incomplete


def test_headerless_drill_with_side_file(tmp_path):
    _copper_on_holes(tmp_path)
    _headerless_drill(tmp_path)
    (tmp_path / "nc_param.txt").write_text("FORMAT 2.4\nUNITS ENGLISH\nSUPPRESS-LEAD-ZEROES NO\n"
                                          "SUPPRESS-TRAIL-ZEROES YES\n")
    board = scanner.load_board(tmp_path)
    assert sorted(board.holes.x) == pytest.approx(sorted(x * 25.4 for x, _ in _HOLES_IN))
    assert not any("read as inch" in w for w in board.warnings)  # the side file said it


def test_unreadable_drill_is_a_warning_and_makes_the_import_incomplete(tmp_path):
    folder = write_board(tmp_path, x2=False)
    (folder / "board-PTH.drl").write_text("M48\nMETRIC\nT1C0.3\n%\nT7\nX1.0Y2.0\nM30\n")
    board = scanner.load_board(folder)
    assert any("board-PTH.drl" in w and "drill file not used" in w for w in board.warnings)
    assert board.incomplete == [f"drill file {folder}/board-PTH.drl unreadable: layer-to-layer connections "
                                "from the netlist only"]


def test_tool_sizes_in_mils_from_leading_comments(tmp_path):
    text = ("M48\n;FILE_FORMAT=2:4\nINCH,LZ\n;T1 Holesize 1. = 15.000000 Tolerance = +2.000000/-2.000000 "
            "PLATED MILS Quantity = 1\n%\nT1\nX010000Y010000\nM30\n")
    path = tmp_path / "holes.drl"
    path.write_text(text)
    from scanner.importers.excellon import read_drills
    drill = read_drills(path)
    assert drill.holes.diameter == pytest.approx([15 * MIL])
    assert drill.holes.x == pytest.approx([25.4])


# --- side files --------------------------------------------------------------------------------

def test_gerber_syntax_job_file_is_read_for_what_it_says(tmp_path):
    folder = write_board(tmp_path, x2=True)
    (folder / "board.gbrjob").write_text("G04 job*\n%TF.FileFunction,JobInfo*%\n%MOMM*%\n%TJ.B_LayerNum,2*%\n"
                                         "%TJ.B_Thickness,1.570000*%\nM02*\n")
    (folder / "plot.gpf").write_text(".FILETYPE GerberPlotSetupFile\n")
    board = scanner.load_board(folder)
    assert board.stackup is None and len(board.layers) == 2
    assert any("board.gbrjob" in w and "Gerber syntax" in w and "1.57 mm" in w for w in board.warnings)


def test_broken_json_job_file_is_a_warning(tmp_path):
    folder = write_board(tmp_path, x2=True)
    (folder / "board.gbrjob").write_text(json.dumps({"MaterialStackup": [{"Type": "Copper"}]}))
    board = scanner.load_board(folder)
    assert any("board.gbrjob" in w and "job file not used" in w for w in board.warnings)


# --- layer names -------------------------------------------------------------------------------

@pytest.mark.parametrize("name, role, number", [
    ("EtchLayerTop.gdo", "top", None), ("EtchLayerBottom.gdo", "bottom", None), ("board.Top", "top", None),
    ("board.Bot", "bottom", None), ("board.StopTop", "other", None), ("board.g3", "inner", 3),
    ("b-In2_Cu.gbr", "inner", 2), ("b-F_Cu.gbr", "top", None), ("SoldermaskTop.gdo", "other", None),
    ("L05.gdo", "inner", 5), ("art_12.pho", "inner", 12), ("desktop.gbr", "unknown", None),
])
def test_names_in_words(name, role, number):
    guess = guess_from_name(name)
    assert (guess.role, guess.number) == (role, number)


def test_header_names_the_layer():
    names = header_names("%IN16=CoppertopL1(X.Top)*%\nG04 Layer_Physical_Order=3*\n")
    assert names.guess().role == "top" and names.physical_order == 3
    assert header_names("G04 Layer: ETCH/BOTTOM*\n").guess().role == "bottom"
    assert header_names("%IN18=Solderstopmasktop*%\n").guess().role == "other"


def test_gerbonara_second_opinion(tmp_path):
    """gerbonara's own file-name rules (here its rules for one design tool's three-letter endings)."""
    from scanner.importers.layer_names import gerbonara_guesses
    paths = []
    for name in ("b.gtl", "b.g2", "b.gbl", "b.gts", "b.gto", "b.gko"):
        paths.append(tmp_path / name)
        paths[-1].write_text(gerber_text(_pads([(5, 5)]), x2=False))
    guesses = gerbonara_guesses(paths)
    assert [(guesses[p].role, guesses[p].number) for p in paths[:3]] == [("top", None), ("inner", 2), ("bottom", None)]
    assert {guesses[p].role for p in paths[3:]} == {"other"}


def test_copper_in_subfolders_by_name_and_board_file_paths(tmp_path):
    gerber = tmp_path / "Gerber files"
    gerber.mkdir()
    (gerber / "EtchLayerTop.gdo").write_text(gerber_text(_pads([(5, 5), (20, 5)]), x2=False))
    (gerber / "EtchLayerBottom.gdo").write_text(gerber_text(_pads([(5, 5)]), x2=False))
    (gerber / "SoldermaskTop.gdo").write_text(gerber_text(_pads([(5, 5)]), x2=False))
    board = scanner.load_board(tmp_path)
    assert [l.path.rpartition("/")[2] for l in board.layers] == ["EtchLayerTop.gdo", "EtchLayerBottom.gdo"]
    (tmp_path / "nearfar-board.toml").write_text(
        'layers = ["Gerber files/EtchLayerBottom.gdo", "Gerber files/EtchLayerTop.gdo"]\n')
    board = scanner.load_board(tmp_path)
    assert board.layers[0].path.endswith("EtchLayerBottom.gdo")


def test_stack_position_from_headers(tmp_path):
    for name, order in (("a.art", 2), ("b.art", 1), ("c.art", 3)):
        head = f"%LNCOPPER_{name[0].upper()}*%\nG04 Layer_Physical_Order={order}*\n"
        (tmp_path / name).write_text(head + gerber_text(_pads([(5, 5)]), x2=False))
    board = scanner.load_board(tmp_path)
    assert [l.path.rpartition("/")[2] for l in board.layers] == ["b.art", "a.art", "c.art"]


# --- outlines ----------------------------------------------------------------------------------

def test_ragged_outline_of_lines_arcs_and_a_region(tmp_path):
    folder = write_board(tmp_path, x2=False)
    r = 5.0
    profile = [  # a 60 x 50 mm rounded rectangle: straight draws, corner arcs, and a region as a cut-out
        {"kind": "line", "pts": [(r, 0), (60 - r, 0)], "w": 0.1},
        {"kind": "arc", "start": (60 - r, 0), "end": (60, r), "center": (60 - r, r), "cw": False, "w": 0.1},
        {"kind": "line", "pts": [(60, r), (60, 50 - r)], "w": 0.1},
        {"kind": "arc", "start": (60, 50 - r), "end": (60 - r, 50), "center": (60 - r, 50 - r), "cw": False, "w": 0.1},
        {"kind": "line", "pts": [(60 - r, 50), (r, 50)], "w": 0.1},
        {"kind": "arc", "start": (r, 50), "end": (0, 50 - r), "center": (r, 50 - r), "cw": False, "w": 0.1},
        {"kind": "line", "pts": [(0, 50 - r), (0, r)], "w": 0.1},
        {"kind": "arc", "start": (0, r), "end": (r, 0), "center": (r, r), "cw": False, "w": 0.1},
        {"kind": "region", "pts": [(52, 42), (56, 42), (56, 46), (52, 46)]},
    ]
    (folder / "board-outline.gbr").write_text(gerber_text(profile, x2=False))
    board = scanner.load_board(folder)
    # rounded rectangle area w*h - (4 - pi) r^2, minus the 4 x 4 mm cut-out (plane geometry, common practice)
    assert board.outline.area == pytest.approx(60 * 50 - (4 - math.pi) * r * r - 16, rel=1e-4)


def test_outline_with_a_gap_is_bridged(tmp_path):
    folder = write_board(tmp_path, x2=False)
    edge = [{"kind": "line", "pts": [(0, 0), (60, 0), (60, 50), (0, 50), (0, 0.03)], "w": 0.1}]  # 30 um short
    (folder / "board-outline.gbr").write_text(gerber_text(edge, x2=False))
    board = scanner.load_board(folder)
    assert board.outline.area == pytest.approx(3000, rel=2e-3)


def test_outline_from_a_drawing_with_frame_and_notes(tmp_path):
    folder = write_board(tmp_path, x2=False)
    drawing = [
        {"kind": "line", "pts": [(-40, -40), (200, -40), (200, 150), (-40, 150), (-40, -40)], "w": 0.2},  # frame
        {"kind": "line", "pts": [(0, 0), (60, 0), (60, 50), (0, 50), (0, 0)], "w": 0.1},  # the board
        {"kind": "line", "pts": [(120, -30), (190, -30), (190, 0), (120, 0), (120, -30)], "w": 0.2},  # title box
        {"kind": "line", "pts": [(0, -10), (60, -10)], "w": 0.1},  # a dimension line
    ]
    (folder / "board.gm1").write_text(gerber_text(drawing, x2=False))
    board = scanner.load_board(folder)
    assert board.outline.area == pytest.approx(3000)


# --- copper that is not the board --------------------------------------------------------------

def _title_block():
    """A film frame around everything and a title block of text strokes, far from the board (0..50, 0..20)."""
    frame = [{"kind": "line", "pts": [(-30, -60), (150, -60), (150, 60), (-30, 60), (-30, -60)], "w": 0.5}]
    text = [{"kind": "line", "pts": [(80 + 2 * i, -50), (80 + 2 * i, -40)], "w": 0.3} for i in range(20)]
    text += [{"kind": "line", "pts": [(80, -50 + i), (120, -50 + i)], "w": 0.3} for i in range(0, 10, 3)]
    return frame + text


def test_frame_and_title_block_are_left_out(tmp_path):
    from artwork import BOTTOM, TOP
    folder = write_board(tmp_path, x2=False, top=TOP + _title_block(), bottom=BOTTOM + _title_block())
    board = scanner.load_board(folder)
    assert board.left_out.objects == 2 * (4 + 24)  # per layer: the frame's 4 draws and 24 text strokes
    assert board.left_out.layers == ("L01", "L02")
    frame_mm = 2 * (180 + 120)
    text_mm = 20 * 10 + 4 * 40
    assert board.left_out.trace_length_mm == pytest.approx(2 * (frame_mm + text_mm))
    assert any("outside the board left out" in w for w in board.warnings)
    clean = scanner.load_board(write_board(tmp_path / "clean", x2=False))
    assert len(board.nets) == len(clean.nets)  # the frame and title block made no nets
    assert board.layers[1].fill_ratio == pytest.approx(clean.layers[1].fill_ratio, abs=0.01)


# --- planes ------------------------------------------------------------------------------------

_BOARD = [(0, 0), (40, 0), (40, 30), (0, 30)]
_VIAS = [(10, 10), (20, 15), (30, 20)]


def _signal_layer(y0):
    traces = [{"kind": "line", "pts": [(2, y0 + 2 * i), (38, y0 + 2 * i)], "w": 0.15} for i in range(8)]
    return traces + _pads(_VIAS, 0.6)


def _four_layers(folder, inner2, inner3):
    (folder / "board-top.gbr").write_text(gerber_text(_signal_layer(4), x2=False))
    (folder / "board-In1.gbr").write_text(gerber_text(inner2, x2=False))
    (folder / "board-In2.gbr").write_text(gerber_text(inner3, x2=False))
    (folder / "board-bottom.gbr").write_text(gerber_text(_signal_layer(5), x2=False))
    (folder / "board.drl").write_text(excellon_text([(x, y, 0.3) for x, y in _VIAS], plated=True))
    edge = [{"kind": "line", "pts": _BOARD + _BOARD[:1], "w": 0.1}]
    (folder / "board-Edge_Cuts.gbr").write_text(gerber_text(edge, x2=False))
    return folder


def test_stroked_plane(tmp_path):
    hatch = [{"kind": "line", "pts": [(0.5, 0.2 + 0.2 * i), (39.5, 0.2 + 0.2 * i)], "w": 0.25} for i in range(148)]
    board = scanner.load_board(_four_layers(tmp_path, hatch, _signal_layer(6)))
    assert [l.kind for l in board.layers] == ["signal", "plane", "signal", "signal"]
    plane = board.layers[1]
    assert len(plane.segments) == 0 and plane.fill_ratio > 0.9  # the strokes became pour copper
    assert "148 strokes read as a filled pour" in plane.kind_evidence


def test_negative_plane(tmp_path):
    _four_layers(tmp_path, _signal_layer(6), _pads(_VIAS, 1.0))
    text = (tmp_path / "board-In2.gbr").read_text().replace("%LPD*%", "%IPNEG*%\n%LPD*%", 1)
    (tmp_path / "board-In2.gbr").write_text(text)
    board = scanner.load_board(tmp_path)
    plane = board.layers[2]
    assert plane.kind == "plane" and "negative image" in plane.kind_evidence
    # copper = the 40 x 30 mm outline minus three 1 mm antipads (circle area pi d^2 / 4, common practice)
    area = sum(g.area for g in plane.shapes.geometry)
    assert area == pytest.approx(40 * 30 - 3 * math.pi / 4, rel=1e-3)
    assert any("negative image" in w for w in board.warnings)


def test_plane_found_relative_to_the_other_layers(tmp_path):
    """A plane pour at 24 % fill (mesh-like) among signal layers at a few per cent."""
    strips = [{"kind": "region", "pts": [(0, y), (40, y), (40, y + 1.2), (0, y + 1.2)]} for y in range(0, 30, 5)]
    board = scanner.load_board(_four_layers(tmp_path, strips, _signal_layer(6)))
    assert board.layers[1].fill_ratio == pytest.approx(0.24, abs=0.02)
    assert [l.kind for l in board.layers] == ["signal", "plane", "signal", "signal"]


# --- nets --------------------------------------------------------------------------------------

def test_not_connected_copper_is_no_net_and_no_open(tmp_path):
    from artwork import BOTTOM, TOP
    nc = [{"kind": "flash", "at": (45, 5), "d": 0.6, "net": "N/C"}, {"kind": "flash", "at": (45, 25), "d": 0.6,
                                                                      "net": "N/C"}]
    board = scanner.load_board(write_board(tmp_path, x2=True, top=TOP + nc, bottom=BOTTOM))
    assert "N/C" not in board.nets
    assert not [f for f in board.netting.opens if "N/C" in f.nets]


def test_empty_copper_file_does_not_stop_the_net_map(tmp_path):
    (tmp_path / "board-top.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nM02*\n")
    (tmp_path / "board-bottom.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nM02*\n")
    (tmp_path / "board.drl").write_text(excellon_text([(1.0, 2.0, 0.3)], plated=True))
    board = scanner.load_board(tmp_path)
    assert board.netting.islands == 0 and len(board.layers) == 2


# --- two boards --------------------------------------------------------------------------------

def test_two_boards_in_one_folder_are_refused_with_the_sets(tmp_path):
    write_board(tmp_path, x2=True)
    write_board(tmp_path / "copy of originals", x2=True)
    with pytest.raises(InputError) as info:
        scanner.load_board(tmp_path)
    message = info.value.message
    assert "2 boards in one folder" in message
    assert "set 1: board-top.gbr, board-bottom.gbr" in message
    assert "set 2: copy of originals/board-top.gbr, copy of originals/board-bottom.gbr" in message
    assert "nearfar-board.toml" in message


# --- internal errors ---------------------------------------------------------------------------

def test_internal_error_exits_4_naming_the_file(tmp_path, capsys, monkeypatch):
    import scanner.importers.gerber_copper as gc
    from scanner.cli import main

    folder = write_board(tmp_path, x2=True)

    def broken(*args, **kwargs):
        raise ZeroDivisionError("a bug")

    monkeypatch.setattr(gc, "artwork_from_gerber", broken)
    monkeypatch.setenv("NEARFAR_IMPORT_WORKERS", "1")
    for args, traceback in ((["inspect", str(folder)], False), (["--debug", "inspect", str(folder)], True)):
        with pytest.raises(SystemExit) as exit_info:
            main(args)
        err = capsys.readouterr().err
        assert exit_info.value.code == 4
        assert ("Traceback" in err) is traceback
        last = err.strip().splitlines()[-1]
        assert last.startswith("nearfar: internal error while reading ") and "board-top.gbr" in last
        assert "ZeroDivisionError: a bug" in last and "report" in last
