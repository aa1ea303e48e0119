"""The bundled demo board: it regenerates byte for byte, every file reads cleanly
with gerbonara, and the copper really holds the planted cases it claims.

Format facts checked here come from the Gerber Layer Format Specification and
the Gerber job format (Ucamco), IPC-D-356A (fixed-column netlist records) and
the Excellon drill format; see PHYSICS.md section 7.
"""
from __future__ import annotations

import importlib.util
import json
import sys
import tomllib
import warnings
from pathlib import Path

import pytest
import shapely
from gerbonara import ExcellonFile, GerberFile
from gerbonara.apertures import CircleAperture, RectangleAperture
from gerbonara.graphic_objects import Arc, Flash, Line, Region
from gerbonara.ipc356 import Netlist
from shapely.geometry import LineString, Point, Polygon, box

from scanner import load_board
from scanner.importers.layer_names import guess_from_name
from scanner.importers.sources import list_sources

ROOT = Path(__file__).resolve().parents[1]
FIXTURE = ROOT / "fixtures" / "demo-board"
NAME = "ml6-logger"
COPPER = [f"{NAME}-c{n}.gbr" for n in range(1, 7)]
PROFILE = f"{NAME}-outline.gbr"
DRILLS = {"plated": f"{NAME}-plated.drl", "unplated": f"{NAME}-unplated.drl"}
FILE_FUNCTIONS = ["Copper,L1,Top,Signal", "Copper,L2,Inr,Plane", "Copper,L3,Inr,Signal",
                  "Copper,L4,Inr,Plane", "Copper,L5,Inr,Plane", "Copper,L6,Bot,Signal"]
#: smallest copper gap drawn on purpose (the differential pairs), mm
MIN_GAP_MM = 0.1
#: arcs are flattened this finely when measuring (mm)
ARC_ERROR_MM = 1e-4


def _generator():
    spec = importlib.util.spec_from_file_location("make_demo_board", ROOT / "fixtures" / "make_demo_board.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses resolve their annotations through sys.modules
    spec.loader.exec_module(module)
    return module


def _strict(loader, path, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return loader(path, **kwargs)


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo-board")
    _generator().write(out)
    return out


@pytest.fixture(scope="module")
def copper():
    """Per copper layer (1..6): list of (net, role, shape, centreline or None, width, dark)."""
    return {n: _shapes(FIXTURE / "x2" / name) for n, name in enumerate(COPPER, start=1)}


@pytest.fixture(scope="module")
def planted():
    return json.loads((FIXTURE / "planted.json").read_text())


def _attributed_lines(text):
    """Each line of a Gerber file with its number, the .N in force and whether polarity is dark."""
    net, dark = None, True
    for number, line in enumerate(text.splitlines(), start=1):
        if line.startswith("%TO.N,"):
            net = line[6:-2]
        elif line == "%TD*%":
            net = None
        elif line in ("%LPC*%", "%LPD*%"):
            dark = line == "%LPD*%"
        yield number, line, net, dark


def _shapes(path):
    rows = []
    # gerbonara 1.5 keeps object attributes on flashes and draws only, so region nets come from the text
    region_nets = iter([net for _, line, net, _ in _attributed_lines(path.read_text()) if line == "G36*"])
    for obj in _strict(GerberFile.open, path).objects:
        if isinstance(obj, Region):
            rows.append((next(region_nets), "region", Polygon(obj.outline), None, 0.0, obj.polarity_dark))
            continue
        net = obj.attrs.get(".N", (None,))[0]
        role = dict(obj.aperture.attrs).get(".AperFunction", ("",))[0]
        if isinstance(obj, Flash):
            ap = obj.aperture
            if isinstance(ap, CircleAperture):
                shape = Point(obj.x, obj.y).buffer(ap.diameter / 2, quad_segs=64)
            else:
                assert isinstance(ap, RectangleAperture)
                shape = box(obj.x - ap.w / 2, obj.y - ap.h / 2, obj.x + ap.w / 2, obj.y + ap.h / 2)
            rows.append((net, role, shape, None, 0.0, obj.polarity_dark))
            continue
        pieces = obj.approximate(max_error=ARC_ERROR_MM) if isinstance(obj, Arc) else [obj]
        assert all(isinstance(p, Line) for p in pieces)
        for p in pieces:
            centre = LineString([(p.x1, p.y1), (p.x2, p.y2)])
            d = p.aperture.diameter
            rows.append((net, role, centre.buffer(d / 2, quad_segs=32), centre, d, obj.polarity_dark))
    return rows


def _net_copper(rows):
    """Net -> copper area on one layer, clear objects subtracted in file order."""
    nets: dict[str, shapely.Geometry] = {}
    for net, _, shape, _, _, dark in rows:
        if dark:
            nets[net] = shapely.union(nets.get(net, Polygon()), shape)
        else:
            nets = {n: shapely.difference(g, shape) for n, g in nets.items()}
    return nets


def _runs(rows, net):
    """Traces and via lands of one net (the copper a coupled run is measured on)."""
    return shapely.union_all([s for n, role, s, _, _, dark in rows if n == net and dark
                              and role in ("Conductor", "ViaPad")])


def _near_length(rows, victim, aggressor, gap_mm):
    """Length of the victim's centreline lying within ``gap_mm`` (edge to edge) of the aggressor's copper."""
    zone = _runs(rows, aggressor)
    total = 0.0
    for n, role, _, centre, width, _ in rows:
        if n == victim and centre is not None:
            total += centre.intersection(zone.buffer(gap_mm + width / 2 + 0.002, quad_segs=64)).length
    return total


# ------------------------------------------------------------ reproducible

def test_regenerates_byte_for_byte(regenerated):
    committed = sorted(p.relative_to(FIXTURE) for p in FIXTURE.rglob("*") if p.is_file())
    fresh = sorted(p.relative_to(regenerated) for p in regenerated.rglob("*") if p.is_file())
    assert fresh == committed
    assert {Path("odbpp/ml6-logger/matrix/matrix"), Path("odbpp/ml6-logger/steps/pcb/eda/data")} <= set(fresh)
    for rel in fresh:
        assert (regenerated / rel).read_bytes() == (FIXTURE / rel).read_bytes(), rel


# ------------------------------------------------------------ Gerber

def test_every_gerber_ends_with_m02():
    files = sorted(FIXTURE.rglob("*.gbr"))
    assert len(files) == 14
    for path in files:
        assert path.read_text().endswith("M02*\n"), path.name  # Gerber Layer Format Specification: M02 ends a file


def test_x2_file_attributes():
    for name, function in zip(COPPER, FILE_FUNCTIONS):
        text = (FIXTURE / "x2" / name).read_text()
        assert f"%TF.FileFunction,{function}*%" in text
        assert "%TF.GenerationSoftware," in text
    assert "%TF.FileFunction,Profile,NP*%" in (FIXTURE / "x2" / PROFILE).read_text()


def test_x2_every_aperture_has_a_function_and_every_dark_object_a_net():
    for name in COPPER:
        text = (FIXTURE / "x2" / name).read_text()
        lines = text.splitlines()
        for i, line in enumerate(lines):
            if line.startswith("%ADD"):
                assert lines[i - 1].startswith("%TA.AperFunction,"), (name, i + 1)
        drawn = [(number, net, dark) for number, line, net, dark in _attributed_lines(text)
                 if line.endswith(("D01*", "D03*")) or line == "G36*"]
        assert drawn
        for number, net, dark in drawn:
            assert net or not dark, f"{name}:{number} dark object without .N"


def test_x1_is_the_same_image_without_attributes():
    for path in sorted((FIXTURE / "x1").glob("*.gbr")):
        text = path.read_text()
        assert not any(line.startswith(("%TF", "%TA", "%TO", "%TD")) for line in text.splitlines()), path.name
        x1 = _strict(GerberFile.open, path)
        x2 = _strict(GerberFile.open, FIXTURE / "x2" / path.name)
        assert _image(x1) == _image(x2), path.name


def _image(gerber):
    return [(type(o).__name__, o.polarity_dark, o.bounding_box()) for o in gerber.objects]


def test_every_gerber_reads_cleanly_with_gerbonara():
    for path in sorted(FIXTURE.rglob("*.gbr")):
        assert len(_strict(GerberFile.open, path).objects) > 0, path.name


def test_arc_run_uses_circular_interpolation():
    text = (FIXTURE / "x2" / COPPER[5]).read_text()
    assert "G75*" in text and text.count("G02*") == 2  # Gerber spec: G75 multi-quadrant, G02 clockwise
    arcs = [o for o in _strict(GerberFile.open, FIXTURE / "x2" / COPPER[5]).objects if isinstance(o, Arc)]
    assert sorted(round(abs(o.cy), 6) for o in arcs) == [5.0, 5.5]


def test_layer_order_comes_from_attributes_and_the_board_file_not_the_names():
    """The file names are our own and carry no stack order: x2/ is ordered by its X2 .FileFunction attributes
    and job file, x1/ by nearfar-board.toml."""
    for folder in ("x1", "x2"):
        sources = list_sources(FIXTURE / folder)
        assert not [s.path.name for s in sources if guess_from_name(s.path.name).is_copper]
        board = load_board(FIXTURE / folder)
        assert [layer.name for layer in board.layers] == [f"L{n:02d}" for n in range(1, 7)]
        assert [layer.kind for layer in board.layers] == ["signal", "plane", "signal", "plane", "plane", "signal"]
        assert board.name == NAME and board.outline is not None
    job = json.loads((FIXTURE / "x2" / f"{NAME}.gbrjob").read_text())
    assert [f["Path"] for f in job["FilesAttributes"] if f["FileFunction"].startswith("Copper")] == COPPER


# ------------------------------------------------------------ drills, netlist, job file, TOML

def test_drills_read_cleanly_and_agree_between_sets():
    for kind, count in (("plated", None), ("unplated", 4)):
        x1 = (FIXTURE / "x1" / DRILLS[kind]).read_bytes()
        assert x1 == (FIXTURE / "x2" / DRILLS[kind]).read_bytes()
        drills = _strict(ExcellonFile.open, FIXTURE / "x1" / DRILLS[kind])
        assert count is None or len(drills.objects) == count
    text = (FIXTURE / "x1" / DRILLS["plated"]).read_text()
    assert "; #@! TF.FileFunction,Plated,1,6,PTH" in text


def _ipc_lines():
    return (FIXTURE / "x1" / f"{NAME}.ipc").read_text().splitlines()


def test_ipc_records_are_fixed_column():
    lines = _ipc_lines()
    assert lines[-1] == "999"
    assert "P  UNITS CUST 1" in lines
    for line in lines[:-1]:
        assert line[:1] in ("C", "P") or line[:3] in ("317", "327"), line
        assert len(line) <= 80
        if line[:3] in ("317", "327"):
            # IPC-D-356A columns (from memory; gerbonara's ipc356 parser slices the same ones):
            # 27 '-', 39 'A', 42 'X', 50 'Y', 58 'X', 63 'Y', 68 'R', 73 'S'
            assert (line[26], line[38], line[41], line[49], line[57], line[62], line[67], line[72]) == tuple("-AXYXYRS")
            assert line[42] in "+-" and line[50] in "+-"
            if line[:3] == "317":
                assert line[32] == "D" and line[37] == "P" and line[39:41] == "00"
            else:
                assert line[32:38] == " " * 6 and line[39:41] in ("01", "06")


def test_ipc_points_match_holes_and_pads(copper):
    netlist = _strict(Netlist.open, FIXTURE / "x1" / f"{NAME}.ipc")
    through = sorted((round(r.x, 3), round(r.y, 3), round(r.hole_dia, 3)) for r in netlist.test_records
                     if r.pad_type.value == 1)
    drills = _strict(ExcellonFile.open, FIXTURE / "x1" / DRILLS["plated"])
    assert through == sorted((round(o.x, 3), round(o.y, 3), round(o.tool.diameter, 3)) for o in drills.objects)
    surface = sorted((round(r.x, 3), round(r.y, 3), r.net_name, r.access_layer) for r in netlist.test_records
                     if r.pad_type.value == 2)
    pads = sorted((round(s.centroid.x, 3), round(s.centroid.y, 3), net, layer)
                  for layer in (1, 6) for net, role, s, _, _, _ in copper[layer] if role == "SMDPad")
    assert surface == pads


def test_every_net_and_every_piece_of_copper_reaches_a_netlist_point(copper):
    netlist = _strict(Netlist.open, FIXTURE / "x1" / f"{NAME}.ipc")
    x2_nets = {row[0] for rows in copper.values() for row in rows if row[0]}
    assert {r.net_name for r in netlist.test_records} == x2_nets
    parts = {}  # (layer, net) -> list of polygons
    for layer, rows in copper.items():
        for net, geom in _net_copper(rows).items():
            parts[layer, net] = list(getattr(geom, "geoms", [geom]))
    parent = {(layer, net, i): (layer, net, i) for (layer, net), polys in parts.items() for i in range(len(polys))}

    def root(node):
        while parent[node] != node:
            node = parent[node]
        return node

    reached = set()
    for r in netlist.test_records:
        p = Point(r.x, r.y)
        layers = range(1, 7) if r.pad_type.value == 1 else [r.access_layer]
        hits = [(layer, r.net_name, i) for layer in layers for i, poly in enumerate(parts.get((layer, r.net_name), []))
                if poly.intersects(p)]
        assert hits, f"netlist point {r.net_name} at {r.x},{r.y} is on no copper of its net"
        for node in hits[1:]:
            parent[root(node)] = root(hits[0])
        reached.add(hits[0])
    reached_roots = {root(n) for n in reached}
    orphans = [n for n in parent if root(n) not in reached_roots]
    assert not orphans


def test_no_two_nets_closer_than_the_smallest_planned_gap(copper):
    for layer, rows in copper.items():
        clashes = _pairs_within(_net_copper(rows), MIN_GAP_MM - 1e-3)
        assert not clashes, (layer, clashes)


def test_job_file_stackup():
    job = json.loads((FIXTURE / "x2" / f"{NAME}.gbrjob").read_text())
    # top-level sections and stackup entry types of the Gerber job format (Ucamco)
    assert {"Header", "GeneralSpecs", "FilesAttributes", "MaterialStackup"} <= set(job)
    stack = job["MaterialStackup"]
    kinds = [entry["Type"] for entry in stack]
    assert kinds.count("Copper") == 6 and kinds.count("Dielectric") == 5 and kinds.count("SolderMask") == 2
    assert all(entry["DielectricConstant"] > 1 for entry in stack if entry["Type"] == "Dielectric")
    assert sum(entry["Thickness"] for entry in stack) == pytest.approx(job["GeneralSpecs"]["BoardThickness"])
    assert job["GeneralSpecs"]["BoardThickness"] == pytest.approx(1.6)
    paths = [entry["Path"] for entry in job["FilesAttributes"]]
    assert all((FIXTURE / "x2" / p).is_file() for p in paths)
    functions = {entry["Path"]: entry["FileFunction"] for entry in job["FilesAttributes"]}
    assert [functions[name] for name in COPPER] == FILE_FUNCTIONS


def test_board_toml_names_layers_planes_and_netlist():
    config = tomllib.loads((FIXTURE / "x1" / "nearfar-board.toml").read_text())
    assert config["layers"] == COPPER
    assert config["planes"] == [COPPER[1], COPPER[3], COPPER[4]]
    assert (FIXTURE / "x1" / config["netlist"]).is_file()


# ------------------------------------------------------------ planted cases

def test_planted_table_is_well_formed(planted, copper):
    nets = {row[0] for rows in copper.values() for row in rows}
    assert {"fail", "pass", "ignored", "absent"} == {p["expect"] for p in planted}
    for p in planted:
        assert set(p["nets"]) <= nets and len(p["nets"]) == 2
        assert p["layer"] in ("L1", "L3", "L6")


def test_planted_gaps_are_in_the_copper(planted, copper):
    for p in planted:
        rows = copper[int(p["layer"][1])]
        a, b = (_runs(rows, n) for n in p["nets"])
        assert a.distance(b) == pytest.approx(p["gap_mm"], abs=1e-3), p


def test_planted_coupled_lengths_are_in_the_copper(planted, copper):
    for p in planted:
        rows = copper[int(p["layer"][1])]
        a, b = p["nets"]
        # mean of both directions: for the arc, the inner and outer arcs average to the mid radius
        length = (_near_length(rows, a, b, p["gap_mm"]) + _near_length(rows, b, a, p["gap_mm"])) / 2
        assert length == pytest.approx(p["coupled_length_mm"], rel=0.01, abs=0.1), p


def test_planted_pair_members_share_a_pair_name(planted):
    for p in planted:
        if p["case"] == "pair-internal":
            a, b = sorted(p["nets"], key=lambda n: n[-2:])
            assert a.endswith("_N") and b.endswith("_P") and a[:-2] == b[:-2]


def _pairs_within(nets, distance_mm):
    names = sorted(nets)
    left, right = shapely.STRtree([nets[n] for n in names]).query(
        [nets[n] for n in names], predicate="dwithin", distance=distance_mm)
    return sorted({(names[a], names[b]) for a, b in zip(left, right) if a < b})


def test_no_unplanted_parallel_runs(planted, copper):
    """Signal nets meet only where planted; power nets, pair stubs and the wider bus neighbours aside."""
    power = {"GND", "+3V3", "+1V8", "VIN"}
    known = {(p["layer"], frozenset(p["nets"])) for p in planted}
    for layer in (1, 3, 6):
        rows = copper[layer]
        nets = {n: _runs(rows, n) for n in {row[0] for row in rows} - power}
        for a, b in _pairs_within(nets, 1.0):
            same_pair = a[:-2] == b[:-2] and {a[-2:], b[-2:]} == {"_P", "_N"}
            bus = a.startswith("DBUS_") and b.startswith("DBUS_") and layer == 1
            if (f"L{layer}", frozenset((a, b))) in known or same_pair or bus:
                continue
            assert _near_length(rows, a, b, 1.0) < 1.0, (layer, a, b)


def test_readme_lists_every_planted_case(planted):
    readme = (ROOT / "fixtures" / "README.md").read_text()
    table = [line for line in readme.splitlines() if line.startswith("| ") and " / " in line]
    rows = [f'| {p["case"]} | {p["layer"]} | {p["nets"][0]} / {p["nets"][1]} | {p["coupled_length_mm"]:.3f} | '
            f'{p["gap_mm"]:.3f} | {p["expect"]} | {p["basis"]} | ({p["x_mm"]:.3f}, {p["y_mm"]:.3f}) |'
            for p in planted]
    assert table == rows
