"""Differential pairs: by a polarity token in the net names, by the rules' patterns, by routed geometry.

By name: two nets pair when their names differ in one polarity token and nothing else.
A token is one character (or ``D`` + one character for ``DP``/``DM``) that ends a word of
the name: the next character is the end, a digit or a separator (``_ - . /`` or space).

======================  ===============  =======================================================
token (positive/neg.)   before it        examples
======================  ===============  =======================================================
``P`` / ``N``           anything         ``LVDS_P0/_N0``, ``DQS_P3``, ``RXP2``, ``CLK-P2``, ``DP0``
``DP`` / ``DM``         anything         ``USB_DP/USB_DM``, ``USB1DP/USB1DM``
``+`` / ``-``           anything         ``AIN+/AIN-``, ``CLK+1/CLK-1``
``H`` / ``L``           a separator      ``CAN_H/CAN_L``
``T`` / ``C``           a separator      ``CK_T/CK_C`` (true/complement)
======================  ===============  =======================================================

By geometry (nets named from copper connectivity carry no such names): two nets pair when
they run side by side, tight (a gap of a few trace widths) and at a near-constant gap (within
twice their typical gap on each layer), over most of their routed length, have similar routed
lengths, and neither has another net as close along a notable part of its length. The
last test keeps a bus apart: a line of a uniform bus has neighbours at the same gap on both
sides (a pair's outer neighbours sit further out than its own gap, common practice).
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from scanner.patterns import compile_capture, fill

SOURCES = ("name", "rules", "geometry")
SEPARATORS = "_-./ "

_BOUNDARY = r"(?=$|[0-9" + re.escape(SEPARATORS) + r"])"
#: family -> (token pattern, positive, negative, needs a separator before it); patterns overlap (USB_DP is P/N and DP/DM)
_FAMILIES = {
    "pn": (re.compile(r"(?<=.)[PN]" + _BOUNDARY), "P", "N", False),
    "dpm": (re.compile(r"(?<=.)D[PM]" + _BOUNDARY), "DP", "DM", False),
    "sign": (re.compile(r"(?<=.)[+\-]" + _BOUNDARY), "+", "-", False),
    "hl": (re.compile(r"(?<=.)[HL]" + _BOUNDARY), "H", "L", True),
    "tc": (re.compile(r"(?<=.)[TC]" + _BOUNDARY), "T", "C", True),
}

#: geometric pairing: a stretch counts as running together up to this many times the pair's typical gap on
#: that layer (plus GAP_SLACK_MM): pairs open up a little at length-tuning bumps and for impedance changes
CLOSE_FACTOR = 2.0
GAP_SLACK_MM = 0.025
#: the stretches running together cover at least this share of the longer leg's routed length
MIN_COVER = 0.6
#: the shorter leg is at least this share of the longer one
MIN_LENGTH_RATIO = 0.7
#: the typical gap is at most this many trace widths (pairs are routed tight, common practice)
MAX_GAP_WIDTHS = 4.0
#: another net within NEIGHBOUR_FACTOR x the pair's gap may run beside a leg over at most this share of it
MAX_NEIGHBOUR_SHARE = 0.35
NEIGHBOUR_FACTOR = 1.5


def name_pairs(names: list[str], eligible: np.ndarray) -> list[tuple[int, int]]:
    """(positive, negative) net ids whose names differ in exactly one polarity token."""
    groups: dict[str, list[list[int]]] = {}
    for i, name in enumerate(names):
        if not eligible[i]:
            continue
        upper = name.upper()
        for family, (token, positive, _negative, needs_separator) in _FAMILIES.items():
            for m in token.finditer(upper):
                if needs_separator and upper[m.start() - 1] not in SEPARATORS:
                    continue
                key = f"{upper[:m.start()]}\0{family}\0{upper[m.end():]}"
                groups.setdefault(key, [[], []])[0 if m.group() == positive else 1].append(i)
    return [(pos[0], neg[0]) for _, (pos, neg) in sorted(groups.items()) if len(pos) == 1 and len(neg) == 1]


def pattern_pairs(names: list[str], patterns: tuple[tuple[str, str], ...]) -> list[tuple[int, int]]:
    """(positive, negative) net ids from the rules' (positive pattern, negative pattern) entries."""
    index = {name: i for i, name in enumerate(names)}
    upper_index = {name.upper(): i for i, name in reversed(list(enumerate(names)))}
    out = []
    for pos_pat, neg_pat in patterns:
        rx = compile_capture(pos_pat)
        for i, name in enumerate(names):
            m = rx.match(name)
            if m is None:
                continue
            other = fill(neg_pat, m.groups())
            j = index.get(other, upper_index.get(other.upper()))
            if j is not None and j != i:
                out.append((i, j))
    return out


@dataclass(frozen=True)
class SidePieces:
    """Same-layer coupled pieces as the geometric test needs them (plain arrays, one row per piece)."""

    net_a: np.ndarray
    net_b: np.ndarray
    layer: np.ndarray
    length_mm: np.ndarray
    spacing_mm: np.ndarray
    width_mm: np.ndarray


def geometry_pairs(pieces: SidePieces, routed_mm: np.ndarray, eligible: np.ndarray) -> list[tuple[int, int]]:
    """Net pairs (lower id first) routed as a differential pair; see the module docstring.

    ``routed_mm``: each net's trace length on the scanned layers; ``eligible``: nets that may pair.
    The gap is taken per layer (a pair keeps its impedance with another gap on another layer).
    """
    if len(pieces.net_a) == 0:
        return []
    a, b = pieces.net_a.astype(np.int64), pieces.net_b.astype(np.int64)
    layer = pieces.layer.astype(np.int64)
    length, spacing = pieces.length_mm, pieces.spacing_mm
    # groups: one net pair on one layer
    uniq, group = np.unique((a << np.int64(38)) | (b << np.int64(6)) | layer, return_inverse=True)
    group = group.ravel()
    n_groups = len(uniq)
    typical = _weighted_median(group, spacing, length, n_groups)
    total = np.bincount(group, weights=length, minlength=n_groups)
    width = np.bincount(group, weights=length * pieces.width_mm, minlength=n_groups) / np.maximum(total, 1e-12)
    close = spacing <= CLOSE_FACTOR * typical[group] + GAP_SLACK_MM
    together = np.bincount(group, weights=length * close, minlength=n_groups) * (typical <= MAX_GAP_WIDTHS * width)
    ga, gb, g_layer = uniq >> np.int64(38), (uniq >> np.int64(6)) & np.int64(0xFFFFFFFF), uniq & np.int64(63)
    crowd_a = _crowding(a, b, layer, spacing, length, ga, gb, g_layer, typical)
    crowd_b = _crowding(a, b, layer, spacing, length, gb, ga, g_layer, typical)
    # per net pair: steady length and crowding summed over its layers
    pairs, pair_of = np.unique(uniq >> np.int64(6), return_inverse=True)
    pair_of = pair_of.ravel()
    pa, pb = pairs >> np.int64(32), pairs & np.int64(0xFFFFFFFF)
    together = np.bincount(pair_of, weights=together, minlength=len(pairs))
    crowd_a = np.bincount(pair_of, weights=crowd_a, minlength=len(pairs))
    crowd_b = np.bincount(pair_of, weights=crowd_b, minlength=len(pairs))
    longer = np.maximum(routed_mm[pa], routed_mm[pb])
    shorter = np.minimum(routed_mm[pa], routed_mm[pb])
    ok = (eligible[pa] & eligible[pb] & (longer > 0) & (together >= MIN_COVER * longer)
          & (shorter >= MIN_LENGTH_RATIO * longer)
          & (crowd_a <= MAX_NEIGHBOUR_SHARE * routed_mm[pa]) & (crowd_b <= MAX_NEIGHBOUR_SHARE * routed_mm[pb]))
    taken: set[int] = set()
    out = []
    for k in np.flatnonzero(ok)[np.argsort(-together[ok], kind="stable")].tolist():
        p, n = int(pa[k]), int(pb[k])
        if p not in taken and n not in taken:
            taken.update((p, n))
            out.append((p, n))
    return out


def _weighted_median(group: np.ndarray, values: np.ndarray, weights: np.ndarray, n_groups: int) -> np.ndarray:
    order = np.lexsort((values, group))
    g, v, w = group[order], values[order], weights[order]
    cum = np.cumsum(w)
    start = np.searchsorted(g, np.arange(n_groups))
    before = np.where(start > 0, cum[np.maximum(start - 1, 0)], 0.0)
    half = before + 0.5 * np.bincount(g, weights=w, minlength=n_groups)
    at = np.searchsorted(cum, half)
    return v[np.minimum(at, len(v) - 1)]


def _crowding(a, b, layer, spacing, length, leg, partner, leg_layer, gap) -> np.ndarray:
    """Per (leg, partner, layer, gap): length of the leg's pieces on that layer beside any net but ``partner``
    within NEIGHBOUR_FACTOR x the gap."""
    ends = np.concatenate([a, b]) << np.int64(6) | np.concatenate([layer, layer])
    others = np.concatenate([b, a])
    spacing2, length2 = np.concatenate([spacing, spacing]), np.concatenate([length, length])
    order = np.argsort(ends, kind="stable")
    ends, others, spacing2, length2 = ends[order], others[order], spacing2[order], length2[order]
    want = leg << np.int64(6) | leg_layer
    lo, hi = np.searchsorted(ends, want), np.searchsorted(ends, want, side="right")
    counts = hi - lo
    rows = np.repeat(lo, counts) + (np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts))
    owner = np.repeat(np.arange(len(leg)), counts)
    close = (others[rows] != partner[owner]) & (spacing2[rows] <= NEIGHBOUR_FACTOR * gap[owner] + GAP_SLACK_MM)
    return np.bincount(owner, weights=length2[rows] * close, minlength=len(leg))
