"""The Gerber importer: copper Gerber (X2, or X1 with an IPC-D-356 netlist), Excellon drills, job file."""
from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from multiprocessing import get_context
from pathlib import Path

import numpy as np

from scanner.board.model import NO_NET, Board, CopperLayer, CopperShapes, Holes, NetlistPoints, TraceSegments
from scanner.errors import InputError
from scanner.importers.boardfile import BOARD_FILE_NAME, BoardFile, read_board_file
from scanner.importers.excellon import read_drills
from scanner.importers.extent import check_copper_on_board, check_holes_on_board, check_netting, check_on_board
from scanner.importers.gerber_copper import CopperArtwork, read_copper
from scanner.importers.ipc356 import NetlistRecords, read_ipc356
from scanner.importers.jobfile import JobFile, read_job_file
from scanner.importers.layer_order import CopperFile, copper_files, guess_from_name
from scanner.importers.outline import find_profile, read_outline
from scanner.importers.planes import classify_planes, copper_box
from scanner.importers.sources import SourceFile, folder_name, named_kind
from scanner.input_limits import SEGMENTS, check_count
from scanner.board.netmap import assign_nets

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
        job = _job_file(files)
        unread = _unread_files(files, job, board_cfg)
        gerbers = [f for f in files if f.kind == "gerber"]
        copper, order_source = copper_files(gerbers, board_cfg.layers if board_cfg else None,
                                            board_cfg.path if board_cfg else None,
                                            job.file_functions if job else None, where)
        if not copper:
            raise InputError("no copper layers found (no X2 .FileFunction, job file or recognisable file names; "
                             f"list them in {BOARD_FILE_NAME})", path=where)
        artworks = read_copper_files([(c.source.path, c.source.name) for c in copper])
        check_count(sum(len(a.x0) for a in artworks), SEGMENTS, "trace segments on the board", where)
        warnings = unread + (job.warnings if job else [])
        net_names = sorted({n for a in artworks for n in np.concatenate([a.segment_net, a.shape_net]) if n})
        net_index = {n: i for i, n in enumerate(net_names)}
        layers = [_layer(k, c, a, net_index) for k, (c, a) in enumerate(zip(copper, artworks))]
        profile = find_profile([g for g in gerbers if g not in {c.source for c in copper}],
                               job.file_functions if job else None)
        outline, outline_log = read_outline(profile) if profile is not None else (None, None)
        board_planes = _board_planes(board_cfg, copper, layers)
        classify_planes(layers, [(c.kind_hint, c.hint_source) for c in copper], board_planes, outline)

        holes, drill_logs, drilled = _holes(files, by_rel, board_cfg, job)
        netlist = _netlist(files, by_rel, board_cfg)
        incomplete: list[str] = []
        for layer in layers:
            check_copper_on_board(warnings, incomplete, layer, outline)
        for name, part in drilled:
            check_holes_on_board(warnings, incomplete, part.x, part.y, name, layers, outline)
        if netlist is not None:
            check_on_board(warnings, incomplete, netlist.x, netlist.y, copper_box(layers, outline), netlist.path,
                           "netlist points",
                           lambda k: f"on line {netlist.line[k]} at ({netlist.x[k]:.3f}, {netlist.y[k]:.3f}) mm")
        for a in artworks:
            if (s := a.log.summary()):
                warnings.append(s)
        warnings.extend(s for log in drill_logs + ([outline_log] if outline_log else []) if (s := log.summary()))

        x2 = any(a.has_net_attributes for a in artworks) or order_source == "gerber-x2"
        fmt = "gerber-x2" if x2 else "gerber-x1"
        if netlist is not None:
            fmt += "+ipc-d-356"
        board = Board(
            name=design_name([c.source.path.name for c in copper]), source=where, format=fmt, layers=layers, nets=net_names, holes=holes,
            stackup=job.stackup if job else None, outline=outline,
            netlist=_netlist_points(netlist, len(layers)) if netlist is not None else None,
            warnings=warnings, incomplete=incomplete)
        if order_source == "file-names":
            board.warnings.append("copper order taken from file names: "
                                  + ", ".join(c.source.rel for c in copper)
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
        return read_board_file(explicit)
    found = [f for f in files if f.kind == "board-file" and f.rel == BOARD_FILE_NAME]
    return read_board_file(found[0].path, found[0].name) if found else None


def _job_file(files: list[SourceFile]) -> JobFile | None:
    """The job file, if any; every copper file it lists must be in the folder."""
    jobs = [f for f in files if f.kind == "job"]
    if not jobs:
        return None
    job = read_job_file(jobs[0].path, jobs[0].name)
    present = {f.path.name for f in files}
    missing = sorted(n for n, fn in job.file_functions.items() if fn[0] == "Copper" and n not in present)
    if missing:
        raise InputError(f"lists copper file(s) missing from the board: {', '.join(missing)}", path=job.path)
    return job


#: by the format a file's name promises: how messages call the format, and what the board needs the file for
_PROMISED = {"gerber": ("Gerber", "a copper layer"), "excellon": ("Excellon drill", "the holes that join layers"),
             "ipc356": ("IPC-D-356 netlist", "the net names")}


def _unread_files(files: list[SourceFile], job: JobFile | None, cfg: BoardFile | None) -> list[str]:
    """Files named like Gerber, drill or netlist files whose content is not: an error when the board needs
    them (leaving one out would change the nets), otherwise a warning each."""
    warnings = []
    for f in files:
        if f.kind != "other" or (promised := named_kind(f.path.name)) is None:
            continue
        fmt, use = _PROMISED[promised]
        why = "empty" if f.path.stat().st_size == 0 else f"not a readable {fmt} file (content not recognised)"
        if promised == "excellon":
            needed = cfg is None or cfg.drills is None
        elif promised == "ipc356":
            needed = cfg is None or not cfg.netlist
        else:
            needed = ((job is not None and job.file_functions.get(f.path.name, ("",))[0] == "Copper")
                      or ((cfg is None or not cfg.layers) and guess_from_name(f.path.name) is not None))
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


def _holes(files, by_rel, cfg: BoardFile | None, job: JobFile | None):
    if cfg is not None and cfg.drills is not None:
        chosen = [(_find(by_rel, d.file, cfg), d.plated, "board-file" if d.plated is not None else None)
                  for d in cfg.drills]
    else:
        chosen = [(f, None, None) for f in files if f.kind == "excellon"]
    logs, named = [], []
    for src, plated, source in chosen:
        if plated is None and job is not None and (fn := job.file_functions.get(src.path.name)):
            if fn[0] in ("Plated", "NonPlated"):
                plated, source = fn[0] == "Plated", "job-file"
        drill = read_drills(src.path, src.name, plated, source)
        logs.append(drill.log)
        named.append((src.name, drill.holes))
    if not named:
        return Holes.empty(), logs, named
    return (Holes(*(np.concatenate([getattr(h, k) for _, h in named]) for k in ("x", "y", "diameter", "plated", "net"))),
            logs, named)


def _netlist(files, by_rel, cfg: BoardFile | None) -> NetlistRecords | None:
    if cfg is not None and cfg.netlist:
        src = _find(by_rel, cfg.netlist, cfg)
        return read_ipc356(src.path, src.name)
    found = [f for f in files if f.kind == "ipc356"]
    if len(found) > 1:
        raise InputError(f"several IPC-D-356 netlists ({', '.join(f.rel for f in found)}); name one as "
                         f"'netlist' in {BOARD_FILE_NAME}", path=folder_name(files))
    return read_ipc356(found[0].path, found[0].name) if found else None


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
