"""Whole ODB++ jobs: matrix order, step choice, EDA nets, drills, stackup, board file, and bad input.

Format facts (matrix arrays, ``FID`` links counted from 0, ``.drill`` options, ``STEP-REPEAT``
in panel step headers) are from memory of the ODB++ Design Format Specification.
"""
import math

import numpy as np
import pytest

from scanner.cli import main
from scanner.errors import InputError
from scanner.importers import load_board, registry
from scanner.importers.odbpp import KIND_SOURCE, NETTING_METHOD, OdbppImporter, load_odbpp
from scanner.importers.odbpp.stackup import MM_PER_OZ_COPPER
from scanner.units import MM_PER_MIL

from tests.importers_odbpp.jobs import EDA, GND, TOP, job_files, matrix_text, write_job


def _names(board, layer):
    s = board.layers[layer].segments
    return [board.nets[i] if i >= 0 else None for i in s.net]


@pytest.fixture()
def job(tmp_path):
    return write_job(tmp_path)


def test_layers_nets_and_roles(job):
    board = load_odbpp(job)
    assert board.format == "odbpp" and board.name == "testjob"
    assert [layer.name for layer in board.layers] == ["L01", "L02", "L03"]
    assert [layer.side for layer in board.layers] == ["top", "inner", "bottom"]
    assert [(layer.kind, layer.kind_source) for layer in board.layers] == [
        ("signal", KIND_SOURCE), ("plane", KIND_SOURCE), ("signal", KIND_SOURCE)]
    assert board.layers[0].path.endswith("testjob/steps/pcb/layers/top/features")
    top = _names(board, 0)
    assert top.count("SIG_B") == 1 and set(top) == {"SIG_A", "SIG_B"}
    assert set(_names(board, 2)) == {"SIG_A"}
    shapes = board.layers[0].shapes
    roles = dict(zip(shapes.role, (board.nets[i] for i in shapes.net)))
    assert roles == {"pad": "SIG_A", "via": "SIG_A"}
    plane = board.layers[1].shapes
    assert list(plane.role) == ["region"] and board.nets[plane.net[0]] == "GND"
    # the plane keeps its 0.9 mm anti-pad around the via: 50 x 40 less a disc of 0.45 mm radius
    assert plane.geometry[0].area == pytest.approx(2000 - math.pi * 0.45 ** 2, rel=1e-4)
    assert board.netting.method == NETTING_METHOD and not board.netting.faults
    assert board.netting.netted_trace_fraction == 1.0


def test_holes_take_nets_through_the_copper(job):
    board = load_odbpp(job)
    assert len(board.holes) == 1 and board.holes.plated[0]
    assert board.holes.diameter[0] == pytest.approx(0.3)
    assert board.nets[board.holes.net[0]] == "SIG_A"


def test_outline_from_profile(job):
    assert load_odbpp(job).outline.area == pytest.approx(2000)


def test_matrix_rows_sort_by_row_number_and_old_block_name(tmp_path):
    rows = [(5, "SIGNAL", "bot"), (1, "SIGNAL", "top"), (3, "MIXED", "gnd"), (6, "DRILL", "drill")]
    board = load_odbpp(write_job(tmp_path, job_files(matrix__matrix=matrix_text(rows, block="ROW"))))
    assert [layer.path.split("/")[-2] for layer in board.layers] == ["top", "gnd", "bot"]
    assert board.layers[1].kind == "signal"  # MIXED is taken as signal, as X2 "Mixed" is


def test_links_without_eda_data_fall_back_to_connectivity(tmp_path):
    board = load_odbpp(write_job(tmp_path, job_files(steps__pcb__eda__data=None)))
    assert any("no EDA data" in w for w in board.warnings)
    assert board.netting.method == "connectivity"
    assert board.netting.synthetic_nets > 0


def test_conflicting_links_keep_the_first(tmp_path):
    eda = EDA.replace("NET SIG_B\nSNT TRC\nFID C 0 1\n", "NET SIG_B\nSNT TRC\nFID C 0 1\nFID C 0 0\n")
    board = load_odbpp(write_job(tmp_path, job_files(steps__pcb__eda__data=eda)))
    assert any("linked to two nets" in w for w in board.warnings)
    assert _names(board, 0).count("SIG_B") == 1


def test_none_net_is_no_net(tmp_path):
    eda = EDA.replace("NET SIG_B", "NET $NONE$")
    board = load_odbpp(write_job(tmp_path, job_files(steps__pcb__eda__data=eda)))
    assert "$NONE$" not in board.nets and "SIG_B" not in board.nets


def test_stackup_from_layer_attributes(job):
    board = load_odbpp(job)
    stack = board.stackup
    assert stack.source == "odbpp-job"
    assert [(s.kind, s.name) for s in stack.layers] == [
        ("copper", "TOP"), ("dielectric", "CORE1"), ("copper", "GND"), ("dielectric", "CORE2"), ("copper", "BOT")]
    assert [s.thickness_mm for s in stack.layers] == pytest.approx([0.035, 0.2, MM_PER_OZ_COPPER, 1.2, 0.035])
    # 1 oz/ft2 of copper is about 1.35 mil thick (the figure fabrication tools use; common practice)
    assert MM_PER_OZ_COPPER == pytest.approx(1.35 * MM_PER_MIL)
    assert [s.epsilon_r for s in stack.layers if s.kind == "dielectric"] == [4.3, 4.5]
    assert [s.copper_index for s in stack.copper()] == [0, 1, 2]


def test_incomplete_stackup_is_dropped_with_a_warning(tmp_path):
    board = load_odbpp(write_job(tmp_path, job_files(steps__pcb__layers__core2__attrlist="thickness_mm=1.2\n")))
    assert board.stackup is None
    assert any("core2: epsilon_r" in w.lower() for w in board.warnings)


def test_no_stackup_attributes_no_stackup_no_warning(tmp_path):
    files = {k: v for k, v in job_files().items() if not k.endswith("attrlist")}
    board = load_odbpp(write_job(tmp_path, files))
    assert board.stackup is None and not board.warnings


def test_bad_stackup_value_names_file_and_line(tmp_path):
    job = write_job(tmp_path, job_files(steps__pcb__layers__core1__attrlist="thickness_mm=0.2\nepsilon_r=high\n"))
    with pytest.raises(InputError, match="epsilon_r") as info:
        load_odbpp(job)
    assert info.value.path.endswith("layers/core1/attrlist") and info.value.line == 2


def test_drill_plating_and_slots(tmp_path):
    drill = ("UNITS=MM\n$0 r300\n$1 r1000\n@0 .drill\nP 35 20 0 P 0 0;0=2\nP 5 5 1 P 0 0;0=1\n"
             "L 40 30 42 30 1 P 0;0=0\n")
    board = load_odbpp(write_job(tmp_path, job_files(steps__pcb__layers__drill__features=drill)))
    holes = board.holes
    assert holes.plated.tolist()[:2] == [True, False]
    slot = holes.x[2:]
    # a 2 mm slot of a 1 mm tool: holes no more than half a diameter apart, ends included
    assert slot.min() == pytest.approx(40) and slot.max() == pytest.approx(42)
    assert np.diff(np.sort(slot)).max() <= 0.5 + 1e-9 and holes.plated[2:].all()
    assert any("slot" in w for w in board.warnings)


def test_drill_plating_from_layer_name(tmp_path):
    rows = [(1, "SIGNAL", "top"), (3, "POWER_GROUND", "gnd"), (5, "SIGNAL", "bot"), (6, "DRILL", "npth")]
    files = job_files(matrix__matrix=matrix_text(rows), steps__pcb__layers__npth__features="UNITS=MM\n$0 r3000\n"
                      "P 45 35 0 P 0 0\n")
    board = load_odbpp(write_job(tmp_path, files))
    assert board.holes.plated.tolist() == [False]


def test_user_symbol(tmp_path):
    symbol = "UNITS=MM\n$0 s1000\nP 0 0 0 P 0 0\nP 1 0 0 P 0 0\n"
    top = TOP.replace("$2 r600", "$2 twin_pad")
    board = load_odbpp(write_job(tmp_path, job_files(steps__pcb__layers__top__features=top,
                                                     symbols__twin_pad__features=symbol)))
    via = board.layers[0].shapes.geometry[board.layers[0].shapes.role == "via"][0]
    assert via.area == pytest.approx(2.0) and via.bounds == pytest.approx((34.5, 19.5, 36.5, 20.5))


def test_unknown_symbol_name_is_an_error(tmp_path):
    top = TOP.replace("$2 r600", "$2 twin_pad")
    with pytest.raises(InputError, match="twin_pad") as info:
        load_odbpp(write_job(tmp_path, job_files(steps__pcb__layers__top__features=top)))
    assert info.value.path.endswith("layers/top/features") and info.value.line == 6


def test_negative_plane_layer(tmp_path):
    gnd = "UNITS=MM\n$0 r900\nP 35 20 0 P 0 0\n"
    files = job_files(matrix__matrix=matrix_text(polarity={"gnd": "NEGATIVE"}), steps__pcb__layers__gnd__features=gnd,
                      steps__pcb__eda__data=EDA.replace("SNT PLN S E 0\nFID C 1 0\n", "SNT TRC\nFID C 0 1\n"))
    board = load_odbpp(write_job(tmp_path, files))
    plane = board.layers[1].shapes
    assert plane.geometry[0].area == pytest.approx(2000 - math.pi * 0.45 ** 2, rel=1e-4)
    assert any("negative" in w for w in board.warnings)


def test_board_file_planes_override(tmp_path):
    job = write_job(tmp_path)
    (job / "nearfar-board.toml").write_text('planes = ["gnd", "L03"]\n')
    board = load_board(job)
    assert [(layer.kind, layer.kind_source) for layer in board.layers] == [
        ("signal", "board-file"), ("plane", "board-file"), ("plane", "board-file")]
    (job / "nearfar-board.toml").write_text('layers = ["top"]\n')
    with pytest.raises(InputError, match="only 'planes'"):
        load_board(job)


# ------------------------------------------------------------ steps

def test_panel_step_is_skipped(tmp_path):
    files = job_files(matrix__matrix=matrix_text(steps=("panel", "pcb")),
                      steps__panel__stephdr="UNITS=MM\nSTEP-REPEAT {\n   NAME=PCB\n   X=0\n   Y=0\n}\n")
    assert len(load_odbpp(write_job(tmp_path, files)).layers) == 3


def test_ambiguous_steps_are_an_error_unless_named(tmp_path):
    files = job_files(matrix__matrix=matrix_text(steps=("pcb", "coupon")))
    files.update({k.replace("steps/pcb/", "steps/coupon/"): v for k, v in files.items() if k.startswith("steps/pcb/")})
    job = write_job(tmp_path, files)
    assert len(load_odbpp(job).layers) == 3  # "pcb" wins among board steps
    files["matrix/matrix"] = matrix_text(steps=("edge", "coupon"))
    job = write_job(tmp_path / "b", {k.replace("steps/pcb/", "steps/edge/"): v for k, v in files.items()})
    with pytest.raises(InputError, match="several board steps"):
        load_odbpp(job)
    assert len(load_odbpp(job, step="COUPON").layers) == 3
    with pytest.raises(InputError, match="not in the matrix"):
        load_odbpp(job, step="array")


# ------------------------------------------------------------ registry

def test_registry_prefers_odbpp_for_a_job_folder(job):
    importers = registry.discover()
    assert any(isinstance(i, OdbppImporter) for i in importers)  # found through the entry-point group
    board = load_board(job.parent)
    assert board.format == "odbpp" and board.source == str(job.parent)


# ------------------------------------------------------------ bad input

@pytest.mark.parametrize("change, where, line, message", [
    ({"matrix__matrix": None}, "matrix/matrix", None, "not found"),
    ({"matrix__matrix": "STEP {\n NAME=pcb\n}\nLAYER {\n ROW=1\n TYPE=SIGNAL\n"}, "matrix/matrix", None,
     "opened at line 4 is not closed"),
    ({"matrix__matrix": "STEP {\n NAME=pcb\n}\nLAYER {\n ROW=1\n NAME=top\n}\n"}, "matrix/matrix", 4, "without TYPE"),
    ({"matrix__matrix": matrix_text([(1, "SIGNAL", "top"), (1, "SIGNAL", "bot")])}, "matrix/matrix", 12, "twice"),
    ({"misc__info": "UNITS=FURLONG\n"}, "misc/info", 1, "unknown units"),
    ({"steps__pcb__layers__gnd__features": GND.replace("UNITS=MM", "UNITS=CM")}, "layers/gnd/features", 1,
     "unknown units"),
    ({"steps__pcb__layers__top__features": TOP.replace("L 10 12 30 12 0 P 0", "L 10 12 30 12 7 P 0")},
     "layers/top/features", 9, r"symbol \$7"),
    ({"steps__pcb__layers__bot__features": None}, "layers/bot/features", None, "not found"),
    ({"steps__pcb__layers__bot__features": None, "steps__pcb__layers__bot__features.Z": "\x1f\x9d"},
     "layers/bot/features.Z", None, "compressed"),
    ({"steps__pcb__eda__data": EDA.replace("FID C 2 1", "FID C 2 9")}, "eda/data", 16, "has only 2 features"),
    ({"steps__pcb__eda__data": EDA.replace("FID C 2 1", "FID C 7 1")}, "eda/data", 16, "LYR lists 4 layers"),
    ({"steps__pcb__eda__data": "LYR top\nFID C 0 0\n"}, "eda/data", 2, "outside a NET"),
    ({"steps__pcb__eda__data": EDA.replace("FID C 2 1", "FID C two 1")}, "eda/data", 16, "layer number must be a whole number"),
    ({"steps__pcb__layers__gnd__features": GND.replace("OE\nSE\n", "")}, "layers/gnd/features", 11,
     r"record 'P' inside a surface \(opened at line 5\)"),
    ({"steps__pcb__layers__gnd__features": GND.replace("OE\nSE\nP 35 20 0 N 0 0\n", "")},
     "layers/gnd/features", 10, "opened at line 6 is not closed"),
])
def test_bad_jobs_name_file_and_line(tmp_path, change, where, line, message):
    job = write_job(tmp_path, job_files(**change))
    with pytest.raises(InputError, match=message) as info:
        load_odbpp(job)
    assert info.value.path.endswith(where) and info.value.line == line


def test_folder_without_matrix_reports_the_matrix(tmp_path):
    job = write_job(tmp_path, job_files(matrix__matrix=None))
    with pytest.raises(InputError, match="not found") as info:
        load_board(tmp_path)  # chosen by its step layer files, then refused for the missing matrix
    assert info.value.path == f"{tmp_path}/testjob/matrix/matrix"
    assert job.is_dir()


def test_cli_exits_2_with_one_line(tmp_path, capsys):
    write_job(tmp_path, job_files(steps__pcb__eda__data=EDA.replace("FID C 2 1", "FID C 2 9")))
    with pytest.raises(SystemExit) as info:
        main(["inspect", str(tmp_path)])
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert err.startswith("nearfar: error: ") and "testjob/steps/pcb/eda/data:16:" in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
