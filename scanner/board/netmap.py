"""Net map: copper islands per layer, joined through plated holes, named from the netlist.

Every copper feature (trace segment as a capsule, pad, region) is a node; touching features
on one layer and plated holes touching features on any layer are edges. Connected
components are copper islands. Islands take the name most of their naming sources agree
on (netlist points landing on them, X2 ``.N`` names on their copper); the rest get stable
synthetic names from their lowest layer and lowest-left corner.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from scanner.board.model import NO_NET, Board, CopperLayer, Holes, NetFault, Netting
from scanner.memory import stage
from scanner.spatial_query import check_index_memory, query_all

#: synthetic names look like ``~L03@12.345,67.890`` (layer number, x, y in mm)
SYNTHETIC_PREFIX = "~"

#: segments per quarter circle when traces are grown to their width for touch tests
CAPSULE_QUAD_SEGS = 2

#: a hole barrel counts as touching copper on a layer when its drilled disk meets it
HOLE_QUAD_SEGS = 4


def synthetic_name(layer_index: int, x_mm: float, y_mm: float) -> str:
    return f"{SYNTHETIC_PREFIX}L{layer_index + 1:02d}@{x_mm:.3f},{y_mm:.3f}"


def is_synthetic(name: str) -> bool:
    return name.startswith(SYNTHETIC_PREFIX)


@dataclass(frozen=True)
class Features:
    """All conducting copper of the board as one flat table (traces first, then shapes, per layer)."""

    geometry: np.ndarray
    layer: np.ndarray
    net: np.ndarray  # net id given by the layout (X2) or NO_NET
    is_segment: np.ndarray
    item: np.ndarray  # index into the layer's segments or shapes
    layer_start: np.ndarray  # feature range of layer k: layer_start[k]:layer_start[k+1]

    def __len__(self) -> int:
        return len(self.geometry)


#: bytes of one trace grown to its width (a capsule of about ten points) with its index entry
BYTES_PER_CAPSULE = 500


def collect_features(layers: list[CopperLayer]) -> Features:
    segments = sum(len(layer.segments) for layer in layers)
    check_index_memory(segments, BYTES_PER_CAPSULE, "trace segments grown to their width for the net map")
    geoms, layer_ids, nets, is_seg, items, starts = [], [], [], [], [], [0]
    for k, layer in enumerate(layers):
        s = layer.segments
        if len(s):
            lines = shapely.linestrings(np.stack([np.column_stack([s.x0, s.y0]), np.column_stack([s.x1, s.y1])], axis=1))
            geoms.append(shapely.buffer(lines, np.maximum(s.width / 2, 1e-4), quad_segs=CAPSULE_QUAD_SEGS))
            layer_ids.append(np.full(len(s), k))
            nets.append(s.net)
            is_seg.append(np.ones(len(s), dtype=bool))
            items.append(np.arange(len(s)))
        sh = layer.shapes
        conducting = np.flatnonzero(sh.role != "other") if len(sh) else np.zeros(0, dtype=np.int64)
        if len(conducting):
            geoms.append(sh.geometry[conducting])
            layer_ids.append(np.full(len(conducting), k))
            nets.append(sh.net[conducting])
            is_seg.append(np.zeros(len(conducting), dtype=bool))
            items.append(conducting)
        starts.append(starts[-1] + len(s) + len(conducting))
    cat = (lambda parts, dtype: np.concatenate(parts) if parts else np.zeros(0, dtype=dtype))
    return Features(cat(geoms, object), cat(layer_ids, np.int64), cat(nets, np.int32).astype(np.int32),
                    cat(is_seg, bool), cat(items, np.int64), np.asarray(starts))


#: geometries with more vertices than this are prepared before exact touch tests
PREPARE_ABOVE_COORDS = 64


def exact_touch(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Vectorised ``intersects`` for candidate pairs, testing from the more complex side, prepared.

    A tree query with a predicate prepares only the query side; a board-sized pour then gets
    re-scanned for every pad near it. Preparing the big side once makes those tests cheap.
    """
    if not len(a):
        return np.zeros(0, dtype=bool)
    na = shapely.get_num_coordinates(a)
    nb = shapely.get_num_coordinates(b)
    swap = nb > na
    first = np.where(swap, b, a)
    second = np.where(swap, a, b)
    shapely.prepare(first[np.maximum(na, nb) > PREPARE_ABOVE_COORDS])
    return shapely.intersects(first, second)


def _candidates(tree: shapely.STRtree, geoms: np.ndarray, what: str) -> tuple[np.ndarray, np.ndarray]:
    """(query, tree) index pairs whose boxes overlap and whose shapes touch."""
    return query_all(tree, geoms, what, keep=lambda q, t: exact_touch(geoms[q], tree.geometries[t]))


def _touching_pairs(features: Features) -> tuple[np.ndarray, np.ndarray, list]:
    """Pairs of touching features (same layer) and one STRtree per layer."""
    a_parts, b_parts, trees = [], [], []
    for k in range(len(features.layer_start) - 1):
        lo, hi = features.layer_start[k], features.layer_start[k + 1]
        geoms = features.geometry[lo:hi]
        tree = shapely.STRtree(geoms)
        trees.append(tree)
        if hi - lo < 2:
            continue
        def touching(q, t, geoms=geoms):
            upper = q < t
            upper[upper] = exact_touch(geoms[q[upper]], geoms[t[upper]])
            return upper

        q, t = query_all(tree, geoms, f"touching copper on layer {k + 1} ({hi - lo:,} features)", keep=touching)
        a_parts.append(q + lo)
        b_parts.append(t + lo)
    cat = (lambda p: np.concatenate(p) if p else np.zeros(0, dtype=np.int64))
    return cat(a_parts), cat(b_parts), trees


def _hole_pairs(features: Features, trees: list, holes: Holes) -> tuple[np.ndarray, np.ndarray]:
    """(hole, feature) pairs for plated holes whose drilled disk meets copper."""
    plated = np.flatnonzero(holes.plated)
    if not len(plated) or not len(features):
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    disks = shapely.buffer(shapely.points(holes.x[plated], holes.y[plated]), holes.diameter[plated] / 2,
                           quad_segs=HOLE_QUAD_SEGS)
    h_parts, f_parts = [], []
    for k, tree in enumerate(trees):
        h, f = _candidates(tree, disks, f"plated holes on layer {k + 1}")
        h_parts.append(plated[h])
        f_parts.append(f + features.layer_start[k])
    return np.concatenate(h_parts), np.concatenate(f_parts)


def copper_islands(features: Features, holes: Holes) -> tuple[np.ndarray, np.ndarray, list]:
    """Island label per feature and per hole (holes after features in one numbering), and the layer trees."""
    a, b, trees = _touching_pairs(features)
    h, f = _hole_pairs(features, trees, holes)
    n = len(features) + len(holes)
    rows = np.concatenate([a, f])
    cols = np.concatenate([b, h + len(features)])
    graph = coo_matrix((np.ones(len(rows), dtype=np.int8), (rows, cols)), shape=(n, n))
    _, labels = connected_components(graph, directed=False)
    return labels[: len(features)], labels[len(features):], trees


def _locate_points(board: Board, features: Features, trees: list, hole_labels: np.ndarray,
                   feature_labels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(point, island) pairs: surface points on their layer, through points on holes and every layer."""
    pts = board.netlist
    if pts is None or not len(pts):
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    geoms = shapely.points(pts.x, pts.y)
    p_parts, i_parts = [], []
    for k, tree in enumerate(trees):
        on_layer = np.flatnonzero((pts.layer == k) | (pts.layer < 0))
        if not len(on_layer):
            continue
        p, f = _candidates(tree, geoms[on_layer], f"netlist points on layer {k + 1}")
        p_parts.append(on_layer[p])
        i_parts.append(feature_labels[f + features.layer_start[k]])
    through = np.flatnonzero(pts.layer < 0)
    plated = np.flatnonzero(board.holes.plated)
    if len(through) and len(plated):
        disks = shapely.buffer(shapely.points(board.holes.x[plated], board.holes.y[plated]),
                               board.holes.diameter[plated] / 2, quad_segs=HOLE_QUAD_SEGS)
        points = geoms[through]
        p, h = query_all(shapely.STRtree(disks), points, "netlist points in plated holes",
                         keep=lambda q, t: shapely.intersects(points[q], disks[t]))
        p_parts.append(through[p])
        i_parts.append(hole_labels[plated[h]])
    if not p_parts:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    pairs = np.unique(np.column_stack([np.concatenate(p_parts), np.concatenate(i_parts)]), axis=0)
    return pairs[:, 0], pairs[:, 1]


def _island_anchor(features: Features, labels: np.ndarray, n_islands: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per island: lowest layer, and the lexicographically smallest (x, y) lower-left corner on that layer."""
    if not len(labels):  # no copper at all (only holes, or empty copper files)
        return np.full(n_islands, -1), np.full(n_islands, np.nan), np.full(n_islands, np.nan)
    bounds = shapely.bounds(features.geometry)
    order = np.lexsort((bounds[:, 1], bounds[:, 0], features.layer, labels))
    first = np.full(n_islands, -1)
    lab_sorted = labels[order]
    starts = np.flatnonzero(np.r_[True, lab_sorted[1:] != lab_sorted[:-1]])
    first[lab_sorted[starts]] = order[starts]
    has = first >= 0
    layer = np.where(has, features.layer[np.maximum(first, 0)], -1)
    x = np.where(has, bounds[np.maximum(first, 0), 0], np.nan)
    y = np.where(has, bounds[np.maximum(first, 0), 1], np.nan)
    return layer, x, y


def assign_nets(board: Board, named_source: str = "gerber-x2") -> Board:
    """Give every conducting feature and plated hole a net; fill ``board.netting``. Returns the board.

    ``named_source`` is the netting method reported when the copper already carries net names
    (the format that named it, e.g. "gerber-x2" or "odbpp-eda")."""
    with stage("joining copper into nets", f"{board.segment_count:,} trace segments, "
               f"{sum(len(layer.shapes) for layer in board.layers):,} shapes, {len(board.holes):,} holes"):
        features = collect_features(board.layers)
        feature_labels, hole_labels, trees = copper_islands(features, board.holes)
    n_islands = int(max(feature_labels.max(initial=-1), hole_labels.max(initial=-1)) + 1)

    names = list(board.nets)
    pts = board.netlist
    name_index = {n: i for i, n in enumerate(names)}
    if pts is not None:
        for n in sorted(set(pts.net_name.tolist()) - set(name_index)):
            name_index[n] = len(names)
            names.append(n)
    point_ids, point_islands = _locate_points(board, features, trees, hole_labels, feature_labels)
    point_net = np.array([name_index[n] for n in pts.net_name], dtype=np.int64) if pts is not None else np.zeros(0, np.int64)

    # votes: (island, net) from netlist points and from copper the layout already names
    named = features.net >= 0
    vote_island = np.concatenate([point_islands, feature_labels[named]])
    vote_net = np.concatenate([point_net[point_ids], features.net[named].astype(np.int64)])
    winner = _winners(vote_island, vote_net, n_islands, names)

    anchor_layer, ax, ay = _island_anchor(features, feature_labels, n_islands)
    unnamed = np.flatnonzero((winner < 0) & (anchor_layer >= 0))
    synth = [synthetic_name(int(anchor_layer[i]), float(ax[i]), float(ay[i])) for i in unnamed]
    synth = _dedupe(synth)
    base = len(names)
    order = np.argsort(np.array(synth, dtype=object)) if synth else np.zeros(0, dtype=np.int64)
    for rank, j in enumerate(order):
        winner[unnamed[j]] = base + rank
    names.extend(synth[j] for j in order)

    feature_net = np.where(features.net >= 0, features.net, winner[feature_labels]).astype(np.int32)
    layers = _layers_with_nets(board.layers, features, feature_net)
    hole_net = np.where(board.holes.plated & (hole_labels >= 0), winner[hole_labels] if len(hole_labels) else hole_labels, NO_NET)
    holes = replace(board.holes, net=hole_net.astype(np.int32)) if len(board.holes) else board.holes

    faults = _faults(board, features, feature_labels, hole_labels, point_ids, point_islands, point_net, winner, names,
                     vote_island, vote_net)
    matched = _matched_points(point_ids, point_islands, point_net, winner, len(pts) if pts is not None else 0)
    length = np.concatenate([l.segments.length_mm for l in layers]) if layers else np.zeros(0)
    seg_net = np.concatenate([l.segments.net for l in layers]) if layers else np.zeros(0, np.int32)
    real = np.array([not is_synthetic(n) for n in names] + [False], dtype=bool)[np.where(seg_net >= 0, seg_net, -1)]
    total = float(length.sum())
    fraction = float(length[real].sum() / total) if total > 0 else 0.0
    method = named_source if named.any() else ("netlist+connectivity" if pts is not None and len(pts) else "connectivity")

    board.layers = layers
    board.nets = names
    board.holes = holes
    board.netting = Netting(method, fraction, matched, len(pts) if pts is not None else 0, faults,
                            synthetic_nets=len(synth), islands=len(np.unique(feature_labels)))
    return board


def _winners(vote_island, vote_net, n_islands, names) -> np.ndarray:
    """Per island the net with most votes (ties to the smaller name); -1 where nothing voted."""
    winner = np.full(n_islands, -1, dtype=np.int64)
    if not len(vote_island):
        return winner
    pairs, counts = np.unique(np.column_stack([vote_island, vote_net]), axis=0, return_counts=True)
    rank = np.array([names[n] for n in pairs[:, 1]], dtype=object)
    order = sorted(range(len(pairs)), key=lambda i: (pairs[i, 0], -counts[i], rank[i]))
    pairs = pairs[order]
    first = np.r_[True, pairs[1:, 0] != pairs[:-1, 0]]
    winner[pairs[first, 0]] = pairs[first, 1]
    return winner


def _dedupe(synth: list[str]) -> list[str]:
    seen: dict[str, int] = {}
    out = []
    for name in synth:
        k = seen.get(name, 0)
        seen[name] = k + 1
        out.append(name if k == 0 else f"{name}#{k + 1}")
    return out


def _layers_with_nets(layers, features: Features, feature_net) -> list[CopperLayer]:
    out = []
    for k, layer in enumerate(layers):
        lo, hi = features.layer_start[k], features.layer_start[k + 1]
        seg_net = layer.segments.net.copy()
        shape_net = layer.shapes.net.copy()
        is_seg = features.is_segment[lo:hi]
        item = features.item[lo:hi]
        seg_net[item[is_seg]] = feature_net[lo:hi][is_seg]
        shape_net[item[~is_seg]] = feature_net[lo:hi][~is_seg]
        out.append(replace(layer, segments=layer.segments.with_nets(seg_net), shapes=layer.shapes.with_nets(shape_net)))
    return out


def _matched_points(point_ids, point_islands, point_net, winner, total) -> int:
    if not total:
        return 0
    ok = np.zeros(total, dtype=bool)
    good = winner[point_islands] == point_net[point_ids]
    ok[point_ids[good]] = True
    return int(ok.sum())


def _faults(board, features, feature_labels, hole_labels, point_ids, point_islands, point_net, winner, names,
            vote_island, vote_net) -> list[NetFault]:
    pts = board.netlist
    faults: list[NetFault] = []
    layer_name = (lambda k: board.layers[k].name if 0 <= k < len(board.layers) else None)
    where = _island_locator(features, feature_labels, board.holes, hole_labels)
    # shorts: islands carrying more than one name
    if len(vote_island):
        pairs = np.unique(np.column_stack([vote_island, vote_net]), axis=0)
        islands, counts = np.unique(pairs[:, 0], return_counts=True)
        for isl in islands[counts > 1]:
            nets = tuple(sorted(names[n] for n in pairs[pairs[:, 0] == isl, 1]))
            x, y, k = where(int(isl))
            faults.append(NetFault("short", nets, x, y, layer_name(k),
                                   f"one copper island carries {len(nets)} nets"))
    # opens: netlist points on no copper
    if pts is not None and len(pts):
        landed = np.zeros(len(pts), dtype=bool)
        landed[point_ids] = True
        for i in np.flatnonzero(~landed):
            k = int(pts.layer[i])
            faults.append(NetFault("open", (str(pts.net_name[i]),), float(pts.x[i]), float(pts.y[i]),
                                   layer_name(k), f"netlist point (line {int(pts.line[i])}) on no copper"))
    # opens: one named net over several islands
    named_islands = np.flatnonzero(winner >= 0)
    nets_of = winner[named_islands]
    real = np.array([not is_synthetic(names[n]) for n in nets_of], dtype=bool)
    named_islands, nets_of = named_islands[real], nets_of[real]
    order = np.lexsort((named_islands, nets_of))
    named_islands, nets_of = named_islands[order], nets_of[order]
    values, starts, counts = np.unique(nets_of, return_index=True, return_counts=True)
    for net, s, c in zip(values, starts, counts):
        if c > 1:
            x, y, k = where(int(named_islands[s + 1]))
            faults.append(NetFault("open", (names[net],), x, y, layer_name(k),
                                   f"net split into {c} copper islands"))
    return faults


def _island_locator(features: Features, labels: np.ndarray, holes: Holes, hole_labels: np.ndarray):
    """Function giving a representative point (x, y, layer) of an island: on its first feature, else its first hole."""
    order = np.argsort(labels, kind="stable")
    starts = np.flatnonzero(np.r_[True, labels[order][1:] != labels[order][:-1]]) if len(labels) else np.zeros(0, int)
    first_feature = dict(zip(labels[order][starts].tolist(), order[starts].tolist()))
    hole_first = {}
    for h, isl in enumerate(hole_labels.tolist()):
        hole_first.setdefault(isl, h)

    def locate(island: int) -> tuple[float, float, int]:
        if island in first_feature:
            f = first_feature[island]
            p = shapely.point_on_surface(features.geometry[f])
            return float(shapely.get_x(p)), float(shapely.get_y(p)), int(features.layer[f])
        h = hole_first[island]
        return float(holes.x[h]), float(holes.y[h]), -1

    return locate
