"""Net names from the EDA data (``steps/<step>/eda/data``): which features belong to which net.

Records used: ``LYR <name> …`` (the layer list the links count in, from 0), ``NET <name>``,
``SNT <type> …`` (subnet: ``TRC``, ``VIA``, ``PLN``, ``TOP`` toeprint) and
``FID <C|L|H> <layer#> <feature#>`` (a copper, laminate or hole feature, counted from 0
in file order). Package, component and property records are not needed and skipped.
The net ``$NONE$`` means no net.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.errors import InputError
from scanner.importers.odbpp.text import JobFile, integer, read_lines
from scanner.input_limits import SEGMENTS, check_count, limit

NO_NET_NAME = "$NONE$"


@dataclass(frozen=True)
class FeatureLinks:
    """Links onto one layer's features: feature number, net name, subnet type and the FID line."""

    feature: np.ndarray
    net: np.ndarray  # object array of str
    subnet: np.ndarray  # object array: "TRC", "VIA", "PLN", "TOP", ...
    line: np.ndarray


@dataclass(frozen=True)
class EdaNets:
    src: JobFile
    layers: dict[str, FeatureLinks]  # lower-cased layer name -> links
    net_names: list[str]


def read_eda(src: JobFile) -> EdaNets:
    """Parse the EDA data file; a link before its NET/SNT or to a layer outside LYR is an InputError."""
    layer_names: list[str] = []
    nets: list[str] = []
    net, subnet = None, None
    rows: dict[int, list[tuple[int, str, str, int]]] = {}
    links, most = 0, limit(SEGMENTS)
    for n, raw in enumerate(read_lines(src, "EDA data file"), start=1):
        tokens = raw.partition(";")[0].split()
        if not tokens or tokens[0].startswith("#"):
            continue
        head = tokens[0]
        if head == "LYR":
            layer_names.extend(tokens[1:])
        elif head == "NET":
            if len(tokens) < 2:
                raise InputError("NET record without a name", path=src.name, line=n)
            net, subnet = tokens[1], None
            nets.append(net)
        elif head == "SNT":
            if net is None:
                raise InputError("subnet (SNT) before any NET record", path=src.name, line=n)
            subnet = tokens[1].upper() if len(tokens) > 1 else "?"
        elif head == "FID":
            if subnet is None:
                raise InputError("feature link (FID) outside a NET/SNT subnet", path=src.name, line=n)
            if len(tokens) < 4 or tokens[1].upper() not in ("C", "L", "H"):
                raise InputError("feature link must read FID <C|L|H> <layer#> <feature#>", path=src.name, line=n)
            layer = integer(tokens[2], src, n, "layer number")
            feature = integer(tokens[3], src, n, "feature number")
            if not 0 <= layer < len(layer_names):
                raise InputError(f"feature link names layer #{layer}, but LYR lists {len(layer_names)} layers",
                                 path=src.name, line=n)
            if feature < 0:
                raise InputError(f"feature link to negative feature number {feature}", path=src.name, line=n)
            links += 1
            if links > most:
                check_count(links, SEGMENTS, "feature links", src.name, n)
            if net != NO_NET_NAME:
                rows.setdefault(layer, []).append((feature, net, subnet, n))
    links = {}
    for layer, items in rows.items():
        feature, names, kinds, lines = zip(*items)
        key = layer_names[layer].lower()
        links[key] = FeatureLinks(np.asarray(feature, dtype=np.int64), np.asarray(names, dtype=object),
                                  np.asarray(kinds, dtype=object), np.asarray(lines, dtype=np.int64))
    return EdaNets(src, links, [n for n in dict.fromkeys(nets) if n != NO_NET_NAME])


def nets_for_layer(eda: EdaNets | None, layer_name: str, table_count: int, layer_src: JobFile
                   ) -> tuple[np.ndarray, np.ndarray, int]:
    """Per feature of a layer: net name (None where no link) and whether a VIA subnet claims it.

    Also returns how many features were linked to two different nets (the first link is kept).
    A link past the layer's last feature is an InputError naming the EDA file and line.
    """
    names = np.full(table_count, None, dtype=object)
    via = np.zeros(table_count, dtype=bool)
    links = eda.layers.get(layer_name.lower()) if eda is not None else None
    if links is None or not len(links.feature):
        return names, via, 0
    beyond = np.flatnonzero(links.feature >= table_count)
    if len(beyond):
        i = beyond[0]
        raise InputError(f"feature link to feature {links.feature[i]} of layer {layer_name!r}, which has only "
                         f"{table_count} features ({layer_src.name})", path=eda.src.name, line=int(links.line[i]))
    order = np.argsort(links.feature, kind="stable")
    feature = links.feature[order]
    first = np.r_[True, feature[1:] != feature[:-1]]
    names[feature[first]] = links.net[order][first]
    conflicts = int(np.count_nonzero(links.net[order][~first] != names[feature[~first]]))
    via[links.feature[links.subnet == "VIA"]] = True
    return names, via, conflicts
