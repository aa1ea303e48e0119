"""Whole boards: X2 and X1+netlist give the same nets; net map, planes, registry, bad folders."""
import numpy as np
import pytest

import scanner
from scanner.board.model import NO_NET
from scanner.errors import InputError
from scanner.importers import registry
from scanner.board.netmap import is_synthetic

from artwork import BOTTOM, NETLIST, TOP, assert_same_segments, ipc356_point, write_board


def test_x2_and_x1_agree(tmp_path):
    x2 = scanner.load_board(write_board(tmp_path / "x2", x2=True))
    x1 = scanner.load_board(write_board(tmp_path / "x1", x2=False))
    assert x2.format == "gerber-x2" and x1.format == "gerber-x1+ipc-d-356"
    assert_same_segments(x2, x1)
    assert x1.netting.method == "netlist+connectivity" and x2.netting.method == "gerber-x2"
    assert x1.netting.netlist_points_matched == x1.netting.netlist_points_total == len(NETLIST)
    assert not x1.netting.faults and not x2.netting.faults
    np.testing.assert_array_equal(np.array(x1.nets)[x1.holes.net[x1.holes.net >= 0]],
                                  np.array(x2.nets)[x2.holes.net[x2.holes.net >= 0]])


def test_nets_flow_through_plated_holes(tmp_path):
    board = scanner.load_board(write_board(tmp_path, x2=False))
    bottom = board.layers[1]
    names = np.array(board.nets)
    # SIG_A is named only by a top-side point and a bottom pad; the bottom trace gets it through the via
    assert set(names[bottom.segments.net]) == {"SIG_A", "SIG_B"}
    region = np.flatnonzero(bottom.shapes.role == "region")[0]
    assert names[bottom.shapes.net[region]] == "GND"  # named by a through point on the via
    npth = ~board.holes.plated
    assert (board.holes.net[npth] == NO_NET).all()


def test_stable_synthetic_names(tmp_path):
    a = scanner.load_board(write_board(tmp_path / "a", x2=False))
    b = scanner.load_board(write_board(tmp_path / "b", x2=False))
    synth = [n for n in a.nets if is_synthetic(n)]
    # the stray top trace (20,30)-(25,30), 0.2 wide: lowest layer L01, lower-left corner (19.9, 29.9)
    assert synth == ["~L01@19.900,29.900"]
    assert synth == [n for n in b.nets if is_synthetic(n)]
    assert a.netting.synthetic_nets == 1
    length = sum(l.trace_length_mm for l in a.layers)
    assert a.netting.netted_trace_fraction == pytest.approx((length - 5.0) / length)


def test_short_and_opens_reported(tmp_path):
    top = TOP + [{"kind": "line", "pts": [(20, 10), (20, 12)], "w": 0.2}]  # bridges SIG_A and SIG_B
    lines = NETLIST + [ipc356_point(327, "LOST", 70, 70, 1, refdes="U9")]
    board = scanner.load_board(write_board(tmp_path, x2=False, top=top, netlist_lines=lines))
    shorts, opens = board.netting.shorts, board.netting.opens
    assert len(shorts) == 1 and shorts[0].nets == ("SIG_A", "SIG_B")
    lost = [f for f in opens if f.nets == ("LOST",)]
    assert len(lost) == 1 and (lost[0].x_mm, lost[0].y_mm) == pytest.approx((70, 70))
    assert "line 8" in lost[0].detail


def test_split_net_is_open(tmp_path):
    bottom = [item for item in BOTTOM if item.get("kind") != "line"]  # cut SIG_A on the bottom
    board = scanner.load_board(write_board(tmp_path, x2=False, bottom=bottom))
    split = [f for f in board.netting.opens if f.nets == ("SIG_A",)]
    assert len(split) == 1 and "2 copper islands" in split[0].detail


def test_plane_by_fill_ratio_and_board_file(tmp_path):
    pour = [{"kind": "region", "pts": [(0, 0), (60, 0), (60, 60), (0, 60)], "net": "GND"}]
    folder = write_board(tmp_path, x2=False, bottom=pour)
    board = scanner.load_board(folder)
    assert board.layers[1].kind == "plane" and board.layers[1].kind_source == "fill-ratio"
    assert board.layers[1].fill_ratio > 0.9
    (folder / "nearfar-board.toml").write_text('layers = ["board-top.gbr", "board-bottom.gbr"]\nplanes = []\n')
    board = scanner.load_board(folder)
    assert [l.kind_source for l in board.layers] == ["fill-ratio", "fill-ratio"]
    (folder / "nearfar-board.toml").write_text('layers = ["board-bottom.gbr", "board-top.gbr"]\nplanes = ["L01"]\n')
    board = scanner.load_board(folder)
    assert board.layers[0].path.endswith("board-bottom.gbr")
    assert [(l.kind, l.kind_source) for l in board.layers] == [("plane", "board-file"), ("signal", "board-file")]


def test_x2_plane_hint(tmp_path):
    folder = write_board(tmp_path, x2=True)
    text = (folder / "board-bottom.gbr").read_text().replace("Copper,L2,Bot,Mixed", "Copper,L2,Bot,Plane")
    (folder / "board-bottom.gbr").write_text(text)
    board = scanner.load_board(folder)
    assert (board.layers[1].kind, board.layers[1].kind_source) == ("plane", "gerber-x2")


def test_explicit_board_file_and_netlist(tmp_path):
    folder = write_board(tmp_path / "b", x2=False)
    (folder / "board.ipc").rename(folder / "names.txt")
    cfg = tmp_path / "mine.toml"
    cfg.write_text('layers = ["board-top.gbr", "board-bottom.gbr"]\nnetlist = "names.txt"\n'
                   'drills = ["board-PTH.drl", { file = "board-NPTH.drl", plated = false }]\n')
    board = scanner.load_board(folder, board_file=cfg)
    assert board.netting.netlist_points_matched == len(NETLIST)
    assert board.holes.plated.sum() == 3


def test_outline_from_profile(tmp_path):
    folder = write_board(tmp_path, x2=True)
    edge = ("%TF.FileFunction,Profile,NP*%\n%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.1*%\nD10*\nX0Y0D02*\n"
            "X60000000Y0D01*\nX60000000Y60000000D01*\nX0Y60000000D01*\nX0Y0D01*\nM02*\n")
    (folder / "board-Edge_Cuts.gbr").write_text(edge)
    board = scanner.load_board(folder)
    assert board.outline.area == pytest.approx(3600.0)
    assert len(board.layers) == 2


def test_unreadable_profile_is_only_a_warning(tmp_path):
    folder = write_board(tmp_path, x2=True)
    (folder / "board-Edge_Cuts.gbr").write_text("%TF.FileFunction,Profile,NP*%\n%FSLAX46Y46*%\n%MOMM*%\nD12*\nM02*\n")
    board = scanner.load_board(folder)
    assert board.outline is None
    assert any("board-Edge_Cuts.gbr" in w and "profile not used" in w for w in board.warnings)


def test_missing_folder(tmp_path):
    with pytest.raises(InputError, match="not found"):
        scanner.load_board(tmp_path / "nope")


def test_no_copper(tmp_path):
    (tmp_path / "readme.txt").write_text("nothing here")
    (tmp_path / "silk-top.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nM02*\n")
    with pytest.raises(InputError, match="no copper layers"):
        scanner.load_board(tmp_path)


def test_no_gerber_at_all(tmp_path):
    (tmp_path / "readme.txt").write_text("nothing here")
    with pytest.raises(InputError, match="no importer"):
        scanner.load_board(tmp_path)


def test_ambiguous_names(tmp_path):
    write_board(tmp_path, x2=False)
    (tmp_path / "other-top.gbr").write_text((tmp_path / "board-top.gbr").read_text())
    with pytest.raises(InputError, match="same copper layer"):
        scanner.load_board(tmp_path)


class _Claimer:
    """An importer that claims with a fixed score and refuses to load, to see which one was chosen."""

    name = "claimer"

    def __init__(self, score):
        self.score = score

    def claims(self, files):
        return self.score

    def load(self, root, files, board_file=None):
        raise InputError("claimer chosen", path=root)


def test_entry_point_registers_gerber_importer():
    assert any(type(i).__name__ == "GerberImporter" for i in registry.discover())


@pytest.mark.parametrize("score, chosen", [(10.0, "claimer"), (0.5, "gerber"), (0.0, "gerber")])
def test_registry_prefers_highest_claim(tmp_path, monkeypatch, score, chosen):
    import scanner.importers as importers
    from scanner.importers.gerber import GerberImporter

    folder = write_board(tmp_path, x2=True)
    monkeypatch.setattr(importers, "discover", lambda: [GerberImporter(), _Claimer(score)])
    if chosen == "claimer":
        with pytest.raises(InputError, match="claimer chosen"):
            scanner.load_board(folder)
    else:
        assert scanner.load_board(folder).format == "gerber-x2"


def test_parallel_parse_matches_serial(tmp_path, monkeypatch):
    import scanner.importers.gerber as gerber

    folder = write_board(tmp_path, x2=False)
    monkeypatch.setenv("NEARFAR_IMPORT_WORKERS", "1")
    serial = scanner.load_board(folder)
    monkeypatch.setenv("NEARFAR_IMPORT_WORKERS", "2")
    monkeypatch.setattr(gerber, "PARALLEL_MIN_BYTES", 0)
    parallel = scanner.load_board(folder)
    assert_same_segments(serial, parallel)
    assert serial.nets == parallel.nets and serial.warnings == parallel.warnings
