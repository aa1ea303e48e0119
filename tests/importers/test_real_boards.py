"""The shared real boards (../shared/real-boards beside the repository), one test each: copper layers in
order, planes as each board's SOURCE.md states, nets and netting figures, and no traceback (exit 0 from
``nearfar inspect``). Skipped when the folder is absent.

Figures marked "as read" were measured when the test was written and guard against regressions; the
others come from the board's own files or SOURCE.md, as noted beside them.
"""
from pathlib import Path

import pytest

import scanner
from scanner.cli import main

BOARDS = Path(__file__).resolve().parents[2] / ".." / "shared" / "real-boards"

pytestmark = pytest.mark.skipif(not BOARDS.is_dir(), reason="shared real-board folder not present")


def _inspect_exit(board: Path, capsys) -> int:
    with pytest.raises(SystemExit) as info:
        main(["inspect", str(board)])
    err = capsys.readouterr().err
    assert "Traceback" not in err and "internal error" not in err
    return info.value.code


def _files(board) -> list[str]:
    return [Path(layer.path).name for layer in board.layers]


def _planes(board) -> list[str]:
    return [layer.name for layer in board.layers if layer.kind == "plane"]


def _connectivity(board, nets: int):
    n = board.netting
    assert n.method == "connectivity" and n.netlist_points_total == 0
    assert len(board.nets) == n.synthetic_nets == n.islands == nets  # as read
    assert not n.faults


def test_isolated_power_outline_of_lines_and_arcs(capsys):
    folder = BOARDS / "isolated-power-2layer"
    board = scanner.load_board(folder)
    assert _files(board) == ["power-art.gtl", "power-art.gbl"] and _planes(board) == []
    # the .gko outline spans 92.71 x 114.3 mm (its extreme coordinates) less notches and rounded corners;
    # its ends miss each other by 0.001 inch in one corner; as read 10 300 mm2
    assert board.outline is not None and board.outline.area == pytest.approx(10_300, rel=0.01)
    assert int(board.holes.plated.sum()) == 88  # as read: every hit of power-art.xln
    _connectivity(board, 79)
    assert _inspect_exit(folder, capsys) == 0


def test_lidar_copper_named_in_words_in_subfolders(capsys, tmp_path):
    folder = BOARDS / "lidar-2layer"
    board = scanner.load_board(folder)
    assert _files(board) == ["EtchLayerTop.gdo", "EtchLayerBottom.gdo"] and _planes(board) == []
    # BoardOutlline.gdo draws a 4.8425 x 2.7559 inch rectangle = 123.0 x 70.0 mm
    assert board.outline.area == pytest.approx(123.0 * 70.0, rel=1e-4)
    assert (int(board.holes.plated.sum()), int((~board.holes.plated).sum())) == (364, 9)  # as read
    _connectivity(board, 203)  # as read; the four zero-width hairlines on the copper films make no copper
    assert _inspect_exit(folder, capsys) == 0
    # a board file may name layers by their path relative to the board folder
    board_file = tmp_path / "board.toml"
    board_file.write_text('layers = ["Gerber/EtchLayerTop.gdo", "Gerber/EtchLayerBottom.gdo"]\n')
    assert _files(scanner.load_board(folder, board_file=board_file)) == _files(board)


def test_open_sbc_twelve_layers_planes_with_evidence(capsys):
    folder = BOARDS / "open-sbc-12layer"
    board = scanner.load_board(folder)
    assert [f.split("_F200_")[1] for f in _files(board)] == (
        ["L01_Top.gdo"] + [f"L{i:02d}.gdo" for i in range(2, 12)] + ["L12_Bottom.gdo"])
    assert _planes(board) == ["L02", "L04", "L06", "L07", "L09", "L11"]  # as read: pours with few traces
    for layer in board.layers:
        assert "pour fill" in layer.kind_evidence and "median of the other layers" in layer.kind_evidence
    _connectivity(board, 1060)
    assert _inspect_exit(folder, capsys) == 0


def test_rover_stroked_planes_and_headerless_drill(capsys):
    folder = BOARDS / "rover-4layer"
    board = scanner.load_board(folder)
    assert _files(board) == ["Top.pho", "Layer2.pho", "Layer3.pho", "Bottom.pho"]
    assert _planes(board) == ["L02", "L03"]  # SOURCE.md: the inner layers are planes drawn as strokes
    assert all("strokes read as a filled pour" in layer.kind_evidence for layer in board.layers)
    # 606 hits in Drill.drl (one per coordinate line), read in inches since no units are stated
    assert len(board.holes) == 606
    assert any("Drill.drl" in w and "read as inch" in w for w in board.warnings)
    assert not board.incomplete
    _connectivity(board, 71)
    assert _inspect_exit(folder, capsys) == 0


def test_sdr_fourteen_layers_seven_planes(capsys):
    folder = BOARDS / "sdr-14layer"
    board = scanner.load_board(folder)
    assert [f.rpartition(".")[2] for f in _files(board)] == (["GTL"] + [f"G{i}" for i in range(1, 13)] + ["GBL"])
    assert _planes(board) == ["L02", "L04", "L05", "L07", "L09", "L11", "L13"]  # SOURCE.md
    # the drill report (LimeSDR-QPCIe_1v2.DRR) lists 19 non-plated round holes (T11-T14: 15 + 1 + 1 + 2)
    assert int((~board.holes.plated).sum()) == 19
    # ... and 4236 plated round holes; the 3 plated slots add rows of holes
    assert int(board.holes.plated.sum()) >= 4236
    assert board.outline is not None  # from the mechanical drawing GM1
    assert board.left_out.objects < 100  # as read: 24 small objects just outside the outline
    _connectivity(board, 1829)
    assert _inspect_exit(folder, capsys) == 0


def test_solar_sensor_unusual_extensions(capsys):
    folder = BOARDS / "solar-sensor-2layer"
    board = scanner.load_board(folder)
    assert _files(board) == ["IRNASIoTbank1.2.Top", "IRNASIoTbank1.2.Bot"] and _planes(board) == []
    # IRNASIoTbank1.2.Info: "Size of PCB: 65 mm x 72,08 mm"
    assert board.outline.area == pytest.approx(65 * 72.08, rel=1e-3)
    # IRNASIoTbank1.2.Tool: 362 + 2 + 4 + 8 + 8 + 22 + 27 + 3 = 436 drills
    assert len(board.holes) == 436
    _connectivity(board, 227)
    assert _inspect_exit(folder, capsys) == 0


def test_workshop_gerber_syntax_job_file(capsys):
    folder = BOARDS / "workshop-2layer"
    board = scanner.load_board(folder)
    assert _files(board) == ["copper_top.gbr", "copper_bottom.gbr"] and _planes(board) == []
    assert any("gerber_job.gbrjob" in w and "Gerber syntax" in w for w in board.warnings)
    assert len(board.holes) == 39  # as read: the hits of drills.xln
    _connectivity(board, 22)
    assert _inspect_exit(folder, capsys) == 0
