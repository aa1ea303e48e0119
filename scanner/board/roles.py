"""Net roles: each net's class, whether it takes part (power and plane nets do not), its differential partner."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.patterns import compile_capture, compile_patterns, fill
from scanner.rules import DEFAULT_CLASS, NetClass, Rules

#: suffix conventions recognised for automatic differential pairing: (positive, negative)
DIFF_SUFFIXES = (("_P", "_N"), ("+", "-"), ("_DP", "_DN"), ("_T", "_C"))


@dataclass(frozen=True)
class NetRoles:
    """Per-net facts the finder and scorer need, as arrays indexed by net id."""

    class_index: np.ndarray  # index into the class list (len(classes) means the default class)
    active: np.ndarray  # bool: takes part as aggressor and victim
    partner: np.ndarray  # differential partner net id or -1
    polarity: np.ndarray  # +1 positive member, -1 negative member, 0 single-ended
    classes: tuple[NetClass, ...]


def assign_roles(net_names: list[str], rules: Rules, plane_nets: set[str] = frozenset()) -> NetRoles:
    """Classify nets: class, power/ground (inactive), differential partner."""
    classes = tuple(rules.classes) + (DEFAULT_CLASS,)
    n = len(net_names)
    class_rx = [compile_patterns(c.patterns) for c in rules.classes]
    power_rx = compile_patterns(rules.power_patterns)
    class_index = np.full(n, len(classes) - 1, dtype=np.int32)
    active = np.ones(n, dtype=bool)
    for i, name in enumerate(net_names):
        upper = name.upper()
        for k, rx in enumerate(class_rx):
            if rx.match(upper):
                class_index[i] = k
                break
        if power_rx.match(upper) or name in plane_nets:
            active[i] = False
    partner = np.full(n, -1, dtype=np.int32)
    polarity = np.zeros(n, dtype=np.int8)
    index = {name: i for i, name in enumerate(net_names)}
    for pos_name, neg_name in _pairs(net_names, rules, index):
        p, q = index[pos_name], index[neg_name]
        if partner[p] < 0 and partner[q] < 0:
            partner[p], partner[q] = q, p
            polarity[p], polarity[q] = 1, -1
    return NetRoles(class_index, active, partner, polarity, classes)


def _pairs(net_names, rules: Rules, index: dict):
    for pos_pat, neg_pat in rules.diff_pairs:
        positive = compile_capture(pos_pat)
        for name in net_names:
            m = positive.match(name)
            if m is None:
                continue
            other = fill(neg_pat, m.groups())
            if other in index:
                yield name, other
    if rules.scan.auto_diff_pairs:
        for name in net_names:
            for pos_sfx, neg_sfx in DIFF_SUFFIXES:
                if name.upper().endswith(pos_sfx) and len(name) > len(pos_sfx):
                    other = name[: -len(pos_sfx)] + _same_case(neg_sfx, name[-len(pos_sfx):])
                    if other in index:
                        yield name, other


def _same_case(suffix: str, like: str) -> str:
    return suffix.lower() if like.islower() else suffix
