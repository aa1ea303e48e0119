"""One job step read into the board model: copper layers in matrix order, EDA nets, holes, outline, stackup."""
from __future__ import annotations

import numpy as np
import shapely

from scanner.board.model import NO_NET, Board, CopperLayer, CopperShapes, Holes, TraceSegments
from scanner.errors import InputError
from scanner.importers.extent import check_copper_on_board, check_holes_on_board, check_netting
from scanner.importers.odbpp.copper import LayerArtwork, feature_image, layer_artwork
from scanner.importers.odbpp.drills import drill_holes
from scanner.importers.odbpp.eda import EdaNets, nets_for_layer, read_eda
from scanner.importers.odbpp.features import FeatureTable, parse_features
from scanner.importers.odbpp.job import Job, SymbolLibrary
from scanner.importers.odbpp.matrix import COPPER_KINDS, MatrixLayer
from scanner.importers.odbpp.stackup import read_stackup
from scanner.importers.planes import classify_planes
from scanner.board.netmap import assign_nets

FORMAT = "odbpp"
#: ``CopperLayer.kind_source`` for kinds read from the matrix layer type
KIND_SOURCE = "odbpp-matrix"
#: ``Netting.method`` when the EDA data names the copper
NETTING_METHOD = "odbpp-eda"


def read_job(job: Job, planes: tuple[list[str], str] | None) -> Board:
    """The board of one job step: copper layers in matrix order, nets from the EDA data, holes, outline, stackup."""
    library = SymbolLibrary(job)
    unit_warnings = [] if job.units is not None else _units_from_profile(job, library)
    eda_src = job.step_file("eda", "data")
    eda = read_eda(eda_src) if eda_src.path.is_file() else None
    warnings = unit_warnings + ([] if eda is not None else
                                [f"{eda_src.name}: no EDA data; nets from copper connectivity only"])

    outline = _outline(job, library)
    copper = job.matrix.copper
    tables, artworks = [], []
    for layer in copper:
        table = parse_features(job.layer_file(layer.name, "features"), job.units, library)
        artworks.append(_artwork(job, layer, table, eda, outline, warnings))
        tables.append(table)
    net_names = sorted({n for a in artworks for n in np.concatenate([a.segment_net, a.shape_net]) if n is not None})
    net_index = {n: i for i, n in enumerate(net_names)}
    layers = [_layer(k, len(copper), layer, table, art, net_index)
              for k, (layer, table, art) in enumerate(zip(copper, tables, artworks))]

    drill_tables = [(layer, parse_features(job.layer_file(layer.name, "features"), job.units, library,
                                           keep_attributes=True)) for layer in job.matrix.of_type("DRILL")]
    holes = [drill_holes(table, layer.name) for layer, table in drill_tables]
    incomplete: list[str] = []
    for layer in layers:
        check_copper_on_board(warnings, incomplete, layer, outline)
    for (_, table), part in zip(drill_tables, holes):
        check_holes_on_board(warnings, incomplete, part.x, part.y, table.src.name, layers, outline)
    hints = [(COPPER_KINDS[layer.type], KIND_SOURCE) for layer in copper]
    classify_planes(layers, hints, _plane_indices(planes, copper, layers), outline)
    stackup, stack_warnings = read_stackup(job.matrix, job.layer_file)
    for table in tables + [t for _, t in drill_tables]:
        if (summary := table.log.summary()):
            warnings.append(summary)
    board = Board(name=job.name, source=job.root.name.rstrip("/!"), format=FORMAT, layers=layers, nets=net_names,
                  holes=_concat_holes(holes), stackup=stackup, outline=outline, warnings=warnings + stack_warnings,
                  incomplete=incomplete)
    assign_nets(board, named_source=NETTING_METHOD)
    check_netting(board, names_promised=None if eda is None else f"the EDA data ({eda_src.name})")
    return board


def _artwork(job: Job, layer: MatrixLayer, table: FeatureTable, eda: EdaNets | None, outline,
             warnings: list) -> LayerArtwork:
    names, via, conflicts = nets_for_layer(eda, layer.name, table.count, table.src)
    if conflicts:
        warnings.append(f"{eda.src.name}: {conflicts} feature(s) of layer {layer.name} linked to two nets; "
                        "the first link kept")
    if layer.polarity == "NEGATIVE":
        return _negative_layer(job, layer, table, outline, warnings)
    return layer_artwork(table, names, via)


def _negative_layer(job: Job, layer: MatrixLayer, table: FeatureTable, profile, warnings: list) -> LayerArtwork:
    """A negative layer's features are laminate: the copper is the profile minus them, one unnamed region."""
    if profile is None:
        raise InputError(f"layer {layer.name} is NEGATIVE in the matrix but the step has no profile to invert",
                         path=job.matrix.src.name, line=layer.line)
    warnings.append(f"layer {layer.name} is negative: copper taken as the step profile minus its features; "
                    "its net comes from the holes that reach it")
    copper = [g for g in shapely.get_parts(shapely.difference(profile, feature_image(table))) if not g.is_empty]
    none = np.full(len(copper), None, dtype=object)
    geometry = np.empty(len(copper), dtype=object)
    geometry[:] = copper
    empty = np.zeros(0)
    return LayerArtwork(empty, empty, empty, empty, empty, np.zeros(0, dtype=object), geometry, none,
                        np.full(len(copper), "region", dtype=object))


def _layer(k: int, count: int, layer: MatrixLayer, table: FeatureTable, art: LayerArtwork,
           net_index: dict) -> CopperLayer:
    def ids(names):
        return np.array([net_index[n] if n is not None else NO_NET for n in names], dtype=np.int32)

    side = "top" if k == 0 else ("bottom" if k == count - 1 else "inner")
    segments = TraceSegments(art.x0, art.y0, art.x1, art.y1, art.width, ids(art.segment_net))
    shapes = CopperShapes(art.geometry, ids(art.shape_net), art.role) if len(art.geometry) else CopperShapes.empty()
    return CopperLayer(name=f"L{k + 1:02d}", index=k, side=side, kind="signal", kind_source="",
                       path=table.src.name, segments=segments, shapes=shapes)


def _plane_indices(planes: tuple[list[str], str] | None, copper: list[MatrixLayer],
                   layers: list[CopperLayer]) -> set[int] | None:
    """Board-file ``planes`` (matrix layer names or L01-style names) as layer indices."""
    if planes is None:
        return None
    planes, where = planes
    lookup = {}
    for m, layer in zip(copper, layers):
        lookup[m.name.lower()] = layer.index
        lookup[layer.name.lower()] = layer.index
    missing = [p for p in planes if p.lower() not in lookup]
    if missing:
        raise InputError(f"'planes' names unknown copper layer(s): {', '.join(missing)} (matrix layers: "
                         f"{', '.join(m.name for m in copper)})", path=where)
    return {lookup[p.lower()] for p in planes}


#: a step profile smaller than this (mm, read as mm) is taken to be in inches when nothing states the units
INCH_PROFILE_BELOW = 30.0


def _units_from_profile(job: Job, library: SymbolLibrary) -> list[str]:
    """Default units for a job whose ``misc/info`` states none: the profile's own UNITS line, else its size
    (a board under INCH_PROFILE_BELOW across when read as mm is in inches). Sets ``job.units``; a warning."""
    src = job.step_file("profile")
    if not src.path.is_file():
        return []  # each features file must then state its units
    as_mm = parse_features(src, "MM", library, what="step profile")
    if parse_features(src, "INCH", library, what="step profile").units == as_mm.units:
        job.units = as_mm.units
        return [f"{src.name}: the job states no units (misc/info); taken as {job.units} from the profile's UNITS line"]
    x0, y0, x1, y1 = feature_image(as_mm).bounds if as_mm.count else (0.0, 0.0, 0.0, 0.0)
    size = max(x1 - x0, y1 - y0)
    job.units = "INCH" if size < INCH_PROFILE_BELOW else "MM"
    return [f"{src.name}: no units stated anywhere in the job; taken as {job.units} from the size of the step "
            f"profile ({size:g} across as numbers); check the board's size"]


def _outline(job: Job, library: SymbolLibrary):
    """The step profile's area, or None when the step has none."""
    src = job.step_file("profile")
    if not src.path.is_file():
        return None
    image = feature_image(parse_features(src, job.units, library, what="step profile"))
    return None if image.is_empty else image


def _concat_holes(parts: list[Holes]) -> Holes:
    if not parts:
        return Holes.empty()
    return Holes(*(np.concatenate([getattr(h, k) for h in parts]) for k in ("x", "y", "diameter", "plated", "net")))
