"""Net roles: each net's class, whether it takes part (power and plane nets do not), its differential partner.

Partners come from the net names and the rules (here) and, for nets named from copper
connectivity, from the routed geometry once the coupled pieces are known
(``scanner.coupling.stage.find_pieces``). A rules pattern that matches no net is a warning
naming the nearest net names: a mistyped pattern must not silently leave nets in the
default class.
"""
from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, replace

import numpy as np
import shapely

from scanner.board.layerstack import BoardEnvironments
from scanner.board.model import Board
from scanner.board.netmap import is_synthetic
from scanner.board.pairing import SOURCES, name_pairs, pattern_pairs
from scanner.patterns import compile_patterns
from scanner.rules import DEFAULT_CLASS, DEFAULT_POWER_PATTERNS, NetClass, Rules

ROLES = ("signal", "power", "plane")
#: nearest names quoted for a pattern that matches no net, and the least similarity to quote one
NEAREST_NAMES = 5
NEAREST_SIMILARITY = 0.6


@dataclass(frozen=True)
class NetRoles:
    """Per-net facts the finder and scorer need, as arrays indexed by net id; ``warnings`` about the rules' patterns."""

    class_index: np.ndarray  # index into the class list (len(classes) - 1 is the default class)
    active: np.ndarray  # bool: takes part as aggressor and victim
    partner: np.ndarray  # differential partner net id or -1
    polarity: np.ndarray  # +1 positive member, -1 negative member, 0 single-ended
    classes: tuple[NetClass, ...]
    role: np.ndarray  # index into ROLES
    pair_source: np.ndarray  # index into pairing.SOURCES, -1 for single-ended nets
    warnings: tuple[str, ...] = ()

    def with_pairs(self, pairs: list[tuple[int, int]], source: str) -> "NetRoles":
        """These roles with (positive, negative) pairs added; nets already paired keep their partner."""
        partner, polarity, pair_source = self.partner.copy(), self.polarity.copy(), self.pair_source.copy()
        code = SOURCES.index(source)
        for p, n in pairs:
            if p != n and partner[p] < 0 and partner[n] < 0:
                partner[p], partner[n] = n, p
                polarity[p], polarity[n] = 1, -1
                pair_source[p] = pair_source[n] = code
        return replace(self, partner=partner, polarity=polarity, pair_source=pair_source)

    def pairs(self, net_names: list[str]) -> list[dict]:
        """Every differential pair: ``p`` and ``n`` net names and the ``source`` that paired them."""
        positive = np.flatnonzero((self.partner >= 0) & (self.polarity > 0))
        return [{"p": net_names[i], "n": net_names[int(self.partner[i])], "source": SOURCES[int(self.pair_source[i])]}
                for i in positive.tolist()]

    def net_table(self, net_names: list[str]) -> list[dict]:
        """Every net with its class, role and partner (None when single-ended)."""
        return [{"name": name, "class": self.classes[int(c)].name, "role": ROLES[int(r)],
                 "pair": None if p < 0 else net_names[int(p)], "pair_source": None if p < 0 else SOURCES[int(s)]}
                for name, c, r, p, s in zip(net_names, self.class_index.tolist(), self.role.tolist(),
                                            self.partner.tolist(), self.pair_source.tolist())]


def assign_roles(net_names: list[str], rules: Rules, plane_nets: set[str] = frozenset()) -> NetRoles:
    """Classify nets: class, power/ground/plane (inactive), differential partner by rules and by name."""
    classes = tuple(rules.classes) + (DEFAULT_CLASS,)
    n = len(net_names)
    upper = [name.upper() for name in net_names]
    class_index = np.full(n, len(classes) - 1, dtype=np.int32)
    for k in reversed(range(len(rules.classes))):  # the first class in file order wins
        rx = compile_patterns(rules.classes[k].patterns)
        hit = np.fromiter((rx.match(u) is not None for u in upper), dtype=bool, count=n)
        class_index[hit] = k
    power_rx = compile_patterns(rules.power_patterns)
    role = np.zeros(n, dtype=np.int8)
    role[np.fromiter((power_rx.match(u) is not None for u in upper), dtype=bool, count=n)] = ROLES.index("power")
    role[np.fromiter((name in plane_nets for name in net_names), dtype=bool, count=n)] = ROLES.index("plane")
    active = role == 0
    roles = NetRoles(class_index, active, np.full(n, -1, dtype=np.int32), np.zeros(n, dtype=np.int8), classes,
                     role, np.full(n, -1, dtype=np.int8), tuple(unmatched_pattern_warnings(net_names, rules)))
    roles = roles.with_pairs([(p, q) for p, q in pattern_pairs(net_names, rules.diff_pairs) if active[p] and active[q]],
                             "rules")
    if rules.scan.auto_diff_pairs:
        named = active & np.fromiter((not is_synthetic(name) for name in net_names), dtype=bool, count=n)
        roles = roles.with_pairs(name_pairs(net_names, named), "name")
    return roles


def unmatched_pattern_warnings(net_names: list[str], rules: Rules) -> list[str]:
    """One warning per class, power or pair pattern of the rules file that matches no net."""
    if not net_names:
        return []
    upper = sorted({name.upper() for name in net_names})
    checks = [(f"net class '{c.name}'", p) for c in rules.classes for p in c.patterns]
    checks += [("[power] nets", p) for p in rules.power_patterns if p not in DEFAULT_POWER_PATTERNS]
    checks += [("[[diff_pair]] positive", pos) for pos, _ in rules.diff_pairs]
    out = []
    for where, pattern in checks:
        rx = compile_patterns((pattern,))
        if any(rx.match(u) for u in upper):
            continue
        near = nearest_names(pattern, net_names)
        hint = f"; nearest net names: {', '.join(near)}" if near else "; no net name is close"
        out.append(f"{where} pattern '{pattern}' matches no net{hint}")
    return out


def nearest_names(pattern: str, net_names: list[str], count: int = NEAREST_NAMES) -> list[str]:
    """Net names most like a wildcard pattern: its literal start and end compared with each name's."""
    parts = re.split(r"[*?]", pattern.upper())
    head, tail = parts[0], parts[-1] if len(parts) > 1 else ""
    matcher = difflib.SequenceMatcher(autojunk=False)
    matcher.set_seq2(head + tail)
    scored = []
    for name in dict.fromkeys(net_names):
        u = name.upper()
        matcher.set_seq1(u if len(parts) == 1 else u[:len(head)] + (u[-len(tail):] if tail else ""))
        if matcher.real_quick_ratio() >= NEAREST_SIMILARITY and matcher.ratio() >= NEAREST_SIMILARITY:
            scored.append((-matcher.ratio(), name))
    return [name for _, name in sorted(scored)[:count]]


def reference_nets(board: Board, env: BoardEnvironments) -> set[str]:
    """Reference nets: every net that owns a pour on a plane layer, and the net owning most copper on a
    pour that stands in for a plane (the far side of a board without planes; pours drawn as strokes count)."""
    nets = set()
    pours = {i for e in env.signal.values() if e.reference.kind == "pour" for i in e.reference.layers}
    for layer in board.layers:
        shapes, seg = layer.shapes, layer.segments
        if layer.index in env.plane_layers and len(shapes):
            nets.update(board.nets[i] for i in np.unique(shapes.net[shapes.role == "region"]) if i >= 0)
        elif layer.index in pours:
            regions = shapes.role == "region"
            net = np.r_[shapes.net[regions], seg.net]
            area = np.r_[shapely.area(shapes.geometry[regions]), seg.length_mm * seg.width]
            owned = net >= 0
            if owned.any():
                nets.add(board.nets[int(np.bincount(net[owned], weights=area[owned]).argmax())])
    return nets
