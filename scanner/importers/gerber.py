"""The Gerber importer: copper Gerber (X2, or X1 with an IPC-D-356 netlist), Excellon drills, job file."""
from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from multiprocessing import get_context
from pathlib import Path

import numpy as np
import shapely

from scanner.board.model import NO_NET, Board, CopperLayer, CopperShapes, Holes, NetlistPoints, TraceSegments
from scanner.errors import InputError, reading
from scanner.importers.board_extent import (board_extent, copper_box, evidence_points, leave_out_copper,
                                            segment_lines)
from scanner.importers.boardfile import BOARD_FILE_NAME, BoardFile, read_board_file
from scanner.importers.excellon import read_drills, side_file_settings
from scanner.importers.extent import check_holes_on_board, check_netting, check_on_board
from scanner.importers.gerber_copper import CopperArtwork, read_copper
from scanner.importers.ipc356 import NetlistRecords, read_ipc356
from scanner.importers.jobfile import JobFile, read_job_file
from scanner.importers.layer_names import guess_from_name
from scanner.importers.layer_order import CopperFile, copper_files
from scanner.importers.outline import find_outline, profile_candidates
from scanner.importers.planes import classify_planes
from scanner.importers.pours import negative_to_pour, strokes_to_pour
from scanner.importers.sources import SourceFile, folder_name, named_kind
from scanner.input_limits import SEGMENTS, check_count
from scanner.board.netmap import assign_nets

#: words in the problems that refuse a board even in a file it can do without (a drill or job file): a size or
#: memory limit, a number outside its physical range, a file that changes its scale
REFUSED_PROBLEMS = ("NEARFAR_MAX_", " range (from ", "may not use two scales")
#: files larger than this are not read as drill side files (bytes)
SIDE_FILE_MAX_BYTES = 65536


class GerberImporter:
    """Claims folders with Gerber files; X2 attributes, when present, score higher."""

    name = "gerber"

    def claims(self, files: list[SourceFile]) -> float:
        gerbers = [f for f in files if f.kind == "gerber"]
        if not gerbers:
            return 0.0
        return 2.0 if any(f.is_copper_x2 for f in gerbers) else 1.0

    def load(self, root: Path, files: list[SourceFile], board_file: Path | None = None) -> Board:
        where = folder_name(files)
        by_rel = {f.rel: f for f in files}
        board_cfg = _board_file(files, board_file)
        job, warnings = _job_file(files)
        incomplete: list[str] = []
        warnings += _unread_files(files, job, board_cfg, incomplete)
        gerbers = [f for f in files if f.kind == "gerber"]
        copper, order_source = copper_files(gerbers, board_cfg.layers if board_cfg else None,
                                            board_cfg.path if board_cfg else None,
                                            job.file_functions if job else None, where)
        if not copper:
            raise InputError("no copper layers found (no X2 .FileFunction, job file or recognisable file names; "
                             f"list them in {BOARD_FILE_NAME})", path=where)
        if job is not None and job.copper_layers is not None and job.copper_layers != len(copper):
            warnings.append(f"{job.path}: states {job.copper_layers} copper layers; {len(copper)} copper files found")
        artworks = read_copper_files([(c.source.path, c.source.name) for c in copper])
        check_count(sum(len(a.x0) for a in artworks), SEGMENTS, "trace segments on the board", where)
        net_names = sorted({n for a in artworks for n in np.concatenate([a.segment_net, a.shape_net]) if n})
        net_index = {n: i for i, n in enumerate(net_names)}
        layers = [_layer(k, c, a, net_index) for k, (c, a) in enumerate(zip(copper, artworks))]
        notes = [""] * len(layers)
        for k, layer in enumerate(layers):
            if not artworks[k].negative:
                _, strokes = strokes_to_pour(layer)
                notes[k] = f"{strokes} strokes read as a filled pour" if strokes else ""

        netlist = _netlist(files, by_rel, board_cfg)
        holes, drill_logs, drilled_files = _holes(files, by_rel, board_cfg, job, layers, netlist, warnings,
                                                  incomplete)
        # where the board is: plated holes (all holes when none is plated), and netlist points
        drilled = holes.plated if holes.plated.any() else np.ones(len(holes), dtype=bool)
        points = (netlist.x, netlist.y) if netlist is not None else ((), ())
        evidence = evidence_points((holes.x[drilled], holes.y[drilled]))
        evidence = evidence if len(evidence) else evidence_points(points)
        copper_sources = {c.source for c in copper}
        outline, outline_logs = find_outline(
            profile_candidates([g for g in gerbers if g not in copper_sources], job.file_functions if job else None),
            evidence)
        extent = outline or board_extent(layers, evidence_points((holes.x[drilled], holes.y[drilled]), points))
        outline_shape = outline.shape if outline else None
        for name, part in drilled_files:
            check_holes_on_board(warnings, incomplete, part.x, part.y, name, layers, outline_shape)
        if netlist is not None:
            check_on_board(warnings, incomplete, netlist.x, netlist.y, copper_box(layers, outline_shape),
                           netlist.path, "netlist points",
                           lambda k: f"on line {netlist.line[k]} at ({netlist.x[k]:.3f}, {netlist.y[k]:.3f}) mm")
        for k, layer in enumerate(layers):
            if artworks[k].negative and extent is not None:
                negative_to_pour(layer, extent.shape)
                notes[k] = "negative image: copper is the board's area minus what the film draws"
                warnings.append(f"{layer.path}: {notes[k]}")
        left_out, left_warning = leave_out_copper(layers, extent, incomplete)
        if left_warning:
            warnings.append(left_warning)
        board_planes = _board_planes(board_cfg, copper, layers)
        classify_planes(layers, [(c.kind_hint, c.hint_source) for c in copper], board_planes, extent, notes)
        for log in [a.log for a in artworks] + drill_logs + outline_logs:
            if (summary := log.summary()):
                warnings.append(summary)

        x2 = any(a.has_net_attributes for a in artworks) or order_source == "gerber-x2"
        fmt = "gerber-x2" if x2 else "gerber-x1"
        if netlist is not None:
            fmt += "+ipc-d-356"
        board = Board(
            name=design_name([c.source.path.name for c in copper]), source=where, format=fmt, layers=layers,
            nets=net_names, holes=holes, stackup=job.stackup if job else None,
            outline=outline.shape if outline else None,
            netlist=_netlist_points(netlist, len(layers)) if netlist is not None else None,
            warnings=warnings, left_out=left_out, incomplete=incomplete)
        if order_source == "file-names":
            board.warnings.append("copper order taken from names: " + ", ".join(
                f"{c.source.rel} ({c.recognised_by})" if c.recognised_by else c.source.rel for c in copper)
                + f" (override with {BOARD_FILE_NAME})")
        assign_nets(board)
        check_netting(board)
        return board


#: copper files are parsed in worker processes when a board has at least this many bytes of them
PARALLEL_MIN_BYTES = 1_000_000


def import_workers() -> int:
    """Worker processes for parsing: ``NEARFAR_IMPORT_WORKERS`` if set, else up to 2 (parsing is CPU-bound)."""
    value = os.environ.get("NEARFAR_IMPORT_WORKERS")
    if value is not None and value.strip().isdigit():
        return max(1, int(value))
    return max(1, min(2, os.cpu_count() or 1))


def _read_copper_job(job: tuple[Path, str]):
    try:
        return read_copper(*job)
    except InputError as exc:  # rebuilt in the parent: keeps file and line across the process boundary
        return ("input-error", exc.message, exc.path, exc.line)


def read_copper_files(jobs: list[tuple[Path, str]]) -> list[CopperArtwork]:
    """Read copper files, in parallel for big boards; results in the order given."""
    workers = min(import_workers(), len(jobs))
    if workers < 2 or sum(path.stat().st_size for path, _ in jobs) < PARALLEL_MIN_BYTES:
        return [read_copper(*job) for job in jobs]
    biggest_first = sorted(range(len(jobs)), key=lambda i: -jobs[i][0].stat().st_size)
    with ProcessPoolExecutor(max_workers=workers, mp_context=get_context("fork")) as pool:
        done = dict(zip(biggest_first, pool.map(_read_copper_job, [jobs[i] for i in biggest_first])))
    results = [done[i] for i in range(len(jobs))]
    for r in results:
        if isinstance(r, tuple):
            raise InputError(r[1], path=r[2], line=r[3])
    return results


def _board_file(files: list[SourceFile], explicit: Path | None) -> BoardFile | None:
    if explicit is not None:
        with reading(explicit):
            return read_board_file(explicit)
    found = [f for f in files if f.kind == "board-file" and f.rel == BOARD_FILE_NAME]
    if not found:
        return None
    with reading(found[0].name):
        return read_board_file(found[0].path, found[0].name)


def _job_file(files: list[SourceFile]) -> tuple[JobFile | None, list[str]]:
    """The job file, if any, and warnings: one that cannot be used is left out with a warning (it is
    optional); but every copper file it lists must be in the folder."""
    jobs = [f for f in files if f.kind == "job"]
    if not jobs:
        return None, []
    notes = [f"{f.name}: second job file not used" for f in jobs[1:]]
    try:
        with reading(jobs[0].name):
            job = read_job_file(jobs[0].path, jobs[0].name)
    except InputError as exc:
        if _refused(exc):
            raise
        return None, notes + [f"{exc.one_line()}; job file not used (stackup from the rules or the default)"]
    present = {f.path.name for f in files}
    missing = sorted(n for n, fn in job.file_functions.items() if fn[0] == "Copper" and n not in present)
    if missing:
        raise InputError(f"lists copper file(s) missing from the board: {', '.join(missing)}", path=job.path)
    return job, notes + job.warnings


def _refused(exc: InputError) -> bool:
    """Is this a problem that refuses the board even in a file it can do without?"""
    return any(words in exc.message for words in REFUSED_PROBLEMS)


#: by the format a file's name promises: how messages call the format, and what the board needs the file for
_PROMISED = {"gerber": ("Gerber", "a copper layer"), "excellon": ("Excellon drill", "the holes that join layers"),
             "ipc356": ("IPC-D-356 netlist", "the net names")}


def _unread_files(files: list[SourceFile], job: JobFile | None, cfg: BoardFile | None,
                  incomplete: list[str]) -> list[str]:
    """Files named like Gerber, drill or netlist files whose content is not: an error when the board needs
    them (leaving one out would change the nets), otherwise a warning each. A drill file is never needed
    that much: the board is read without it, as incomplete."""
    warnings = []
    has_netlist = any(f.kind == "ipc356" for f in files) or (cfg is not None and bool(cfg.netlist))
    for f in files:
        if f.kind != "other" or (promised := named_kind(f.path.name)) is None:
            continue
        fmt, use = _PROMISED[promised]
        why = "empty" if f.path.stat().st_size == 0 else f"not a readable {fmt} file (content not recognised)"
        if promised == "excellon":
            needed = False
            if cfg is None or cfg.drills is None:
                effect = _without_drills(has_netlist)
                warnings.append(f"{f.name}: {why}; drill file not used: {effect}")
                incomplete.append(f"drill file {f.name} unreadable: {effect}")
                continue
        elif promised == "ipc356":
            needed = cfg is None or not cfg.netlist
        else:
            needed = ((job is not None and job.file_functions.get(f.path.name, ("",))[0] == "Copper")
                      or ((cfg is None or not cfg.layers) and guess_from_name(f.path.name).is_copper))
        if needed:
            raise InputError(f"{why}; by its name it holds {use}", path=f.name)
        warnings.append(f"{f.name}: not read: {why}")
    return warnings


def _layer(index: int, copper: CopperFile, art: CopperArtwork, net_index: dict) -> CopperLayer:
    def ids(names):
        return np.array([net_index[n] if n else NO_NET for n in names], dtype=np.int32)

    segments = TraceSegments(art.x0, art.y0, art.x1, art.y1, art.width, ids(art.segment_net))
    shapes = CopperShapes(art.geometry, ids(art.shape_net), art.role) if len(art.geometry) else CopperShapes.empty()
    return CopperLayer(name=f"L{index + 1:02d}", index=index, side=copper.side, kind="signal", kind_source="",
                       path=copper.source.name, segments=segments, shapes=shapes)


def _board_planes(cfg: BoardFile | None, copper: list[CopperFile], layers: list[CopperLayer]) -> set[int] | None:
    if cfg is None or not cfg.planes:
        return None
    lookup = {}
    for c, layer in zip(copper, layers):
        for key in (c.source.rel, c.source.path.name, layer.name):
            lookup[key] = layer.index
    missing = [p for p in cfg.planes if p not in lookup]
    if missing:
        raise InputError(f"'planes' names unknown copper layer(s): {', '.join(missing)}", path=cfg.path)
    return {lookup[p] for p in cfg.planes}


def _find(by_rel: dict, name: str, cfg: BoardFile) -> SourceFile:
    src = by_rel.get(name) or next((f for f in by_rel.values() if f.path.name == name), None)
    if src is None:
        raise InputError(f"file {name!r} named in the board file not found", path=cfg.path)
    return src


def _holes(files, by_rel, cfg: BoardFile | None, job: JobFile | None, layers: list[CopperLayer],
           netlist: NetlistRecords | None, warnings: list[str], incomplete: list[str]):
    """Holes of every drill file; one that cannot be read is left out with a warning and makes the import
    incomplete (its holes would have joined the layers)."""
    if cfg is not None and cfg.drills is not None:
        chosen = [(_find(by_rel, d.file, cfg), d.plated, "board-file" if d.plated is not None else None)
                  for d in cfg.drills]
    else:
        chosen = [(f, None, None) for f in files if f.kind == "excellon"]
    side = _side_settings(files)
    landing = _landing_test(layers)
    logs, named = [], []
    for src, plated, source in chosen:
        if plated is None and job is not None and (fn := job.file_functions.get(src.path.name)):
            if fn[0] in ("Plated", "NonPlated"):
                plated, source = fn[0] == "Plated", "job-file"
        try:
            drill = read_drills(src.path, src.name, plated, source, side.get(src.rel.rpartition("/")[0]), landing)
        except InputError as exc:
            if _refused(exc):
                raise
            effect = _without_drills(netlist is not None)
            warnings.append(f"{exc.one_line()}; drill file not used: {effect}")
            incomplete.append(f"drill file {src.name} unreadable: {effect}")
            continue
        logs.append(drill.log)
        named.append((src.name, drill.holes))
        if drill.assumed:
            warnings.append(f"{src.name}: {drill.assumed}")
    if not named:
        return Holes.empty(), logs, named
    fields = ("x", "y", "diameter", "plated", "net")
    return Holes(*(np.concatenate([getattr(h, k) for _, h in named]) for k in fields)), logs, named


def _without_drills(has_netlist: bool) -> str:
    """What a board loses with a drill file left out."""
    return "layer-to-layer connections from the netlist only" if has_netlist else "nets split per layer"


def _side_settings(files: list[SourceFile]) -> dict[str, object]:
    """Drill number format and units from side files (``nc_param.txt`` style), by folder."""
    found = {}
    for f in files:
        if f.kind != "other" or f.path.stat().st_size > SIDE_FILE_MAX_BYTES:
            continue
        with reading(f.name):
            settings = side_file_settings(f.path.read_text(encoding="latin-1"))
        if settings is not None:
            found.setdefault(f.rel.rpartition("/")[0], settings)
    return found


def _landing_test(layers: list[CopperLayer]):
    """``share(x, y)``: the share of points on copper of the outer layers (pads first; traces when no pads).
    The index is built on first use: most drill files state their units."""
    tree = []

    def share(x: np.ndarray, y: np.ndarray) -> float:
        if not tree:
            geoms = []
            for layer in (layers[0], layers[-1]) if layers else ():
                s = layer.segments
                if len(layer.shapes):
                    geoms.append(layer.shapes.geometry)
                elif len(s):
                    geoms.append(shapely.buffer(segment_lines(s), s.width / 2, quad_segs=2))
            tree.append(shapely.STRtree(np.concatenate(geoms) if geoms else np.zeros(0, dtype=object)))
        hit, _ = tree[0].query(shapely.points(x, y), predicate="intersects")
        return len(np.unique(hit)) / len(x) if len(x) else 0.0

    return share


def _netlist(files, by_rel, cfg: BoardFile | None) -> NetlistRecords | None:
    if cfg is not None and cfg.netlist:
        src = _find(by_rel, cfg.netlist, cfg)
    else:
        found = [f for f in files if f.kind == "ipc356"]
        if len(found) > 1:
            raise InputError(f"several IPC-D-356 netlists ({', '.join(f.rel for f in found)}); name one as "
                             f"'netlist' in {BOARD_FILE_NAME}", path=folder_name(files))
        if not found:
            return None
        src = found[0]
    with reading(src.name):
        return read_ipc356(src.path, src.name)


def _netlist_points(rec: NetlistRecords, n_layers: int) -> NetlistPoints:
    """Access codes to layer indices: 0 through (-1), n copper layer n; numbers past the stack mean the bottom."""
    layer = np.where(rec.access <= 0, -1, np.minimum(rec.access, n_layers) - 1).astype(np.int32)
    return NetlistPoints(rec.net_name, rec.x, rec.y, layer, rec.hole_mm, rec.record, rec.line)


def design_name(file_names: list[str]) -> str:
    """The design's name from what its copper files share ("ml6-logger-c1.gbr", "ml6-logger-c6.gbr"
    -> "ml6-logger"); empty when they share no word."""
    stems = [Path(n).stem for n in file_names]
    if len(stems) < 2:
        return ""
    common = os.path.commonprefix(stems)
    cut = max(common.rfind(sep) for sep in "-_. ")
    return common[:cut].strip("-_. ") if cut > 0 else ""
