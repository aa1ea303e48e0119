"""Waivers matched to findings on the scoring arrays, before any record is built.

A finding here is one direction of a coupled run (aggressor -> victim) or one geometric class-pair
finding, given as arrays: victim and aggressor net ids, the coupled run, and the fraction of budget
used (NaN where no budget applies). A waiver matches a finding when its victim and aggressor patterns
match the nets, the run uses its layer and the run's worst point lies in its area; it covers the
finding unless it expired or the run grew longer, came closer or uses more budget than recorded
beyond the waiver's margin. One loop per waiver, vectorised over the findings.
"""
from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from scanner.patterns import compile_patterns
from scanner.signoff.waivers import Waiver

#: why a matching waiver does not cover a finding (bits of ``WaiverMatch.lapse``)
EXPIRED, LONGER, CLOSER, MORE_BUDGET = 1, 2, 4, 8
#: slack for figures copied from a report, which rounds them: length mm, spacing mm, budget used %
ROUNDING = (0.001, 0.0001, 0.01)


@dataclass(frozen=True)
class FindingKeys:
    """What a waiver is matched on, one entry per finding."""

    victim: np.ndarray  # net ids
    aggressor: np.ndarray
    aggressor_partner: np.ndarray  # the other member of an odd-mode differential aggressor, else -1
    run: np.ndarray  # index into the coupled runs
    used: np.ndarray  # fraction of budget used; NaN: no budget check (geometric findings)
    counted: np.ndarray  # False for entries folded into another (odd-mode members)


@dataclass(frozen=True)
class WaiverMatch:
    """Per finding: ``waiver`` the covering waiver (index), or when none covers, the first matching one
    that lapsed, or -1; ``covered`` true when a waiver is in force for it; ``lapse`` the reason bits of
    a lapsed match. Per waiver: how many findings it matched and how many it covers."""

    waiver: np.ndarray
    covered: np.ndarray
    lapse: np.ndarray
    matched_count: np.ndarray
    covered_count: np.ndarray

    def take(self, select) -> "WaiverMatch":
        """The entries ``select`` (a slice or indices); per-waiver counts unchanged."""
        return WaiverMatch(self.waiver[select], self.covered[select], self.lapse[select],
                           self.matched_count, self.covered_count)


def utc_today() -> dt.date:
    return dt.datetime.now(dt.timezone.utc).date()


def match_waivers(waivers: tuple[Waiver, ...], net_names: list[str], layer_names: list[str], runs,
                  keys: FindingKeys, today: dt.date | None = None) -> WaiverMatch:
    """Each finding against every waiver; the first covering waiver (in file order) wins."""
    n = len(keys.run)
    waiver = np.full(n, -1, dtype=np.int64)
    lapsed_by = np.full(n, -1, dtype=np.int64)
    lapse = np.zeros(n, dtype=np.int64)
    covered = np.zeros(n, dtype=bool)
    matched_count = np.zeros(len(waivers), dtype=np.int64)
    covered_count = np.zeros(len(waivers), dtype=np.int64)
    today = today or utc_today()
    upper = [name.upper() for name in net_names]
    layer_bit = {name.upper(): k for k, name in enumerate(layer_names)}
    for w, waiver_w in enumerate(waivers):
        hit = _matching(waiver_w, upper, layer_bit, runs, keys)
        bits = _lapse_bits(waiver_w, runs, keys, today)
        ok = hit & (bits == 0)
        waiver[ok & ~covered] = w
        covered |= ok
        first_lapse = hit & ~ok & (lapsed_by < 0)
        lapsed_by[first_lapse], lapse[first_lapse] = w, bits[first_lapse]
        matched_count[w], covered_count[w] = int(hit.sum()), int(ok.sum())
    waiver = np.where(covered, waiver, lapsed_by)
    return WaiverMatch(waiver, covered, np.where(covered, 0, lapse), matched_count, covered_count)


def _nets_matching(pattern: str, upper: list[str]) -> np.ndarray:
    regex = compile_patterns((pattern,))
    return np.fromiter((regex.match(name) is not None for name in upper), dtype=bool, count=len(upper))


def _matching(w: Waiver, upper: list[str], layer_bit: dict[str, int], runs, keys: FindingKeys) -> np.ndarray:
    victim_ok = _nets_matching(w.victim, upper)
    aggressor_ok = np.append(_nets_matching(w.aggressor, upper), False)  # index -1: no partner
    hit = keys.counted & victim_ok[keys.victim] & (aggressor_ok[keys.aggressor] | aggressor_ok[keys.aggressor_partner])
    if w.layer is not None:
        k = layer_bit.get(w.layer.upper())
        hit &= False if k is None else (runs.layer_mask[keys.run] >> np.int64(k)) & 1 == 1
    if w.area_mm is not None:
        x0, y0, x1, y1 = w.area_mm
        x, y = runs.worst_x_mm[keys.run], runs.worst_y_mm[keys.run]
        hit &= (x >= x0) & (x <= x1) & (y >= y0) & (y <= y1)
    return hit


def _lapse_bits(w: Waiver, runs, keys: FindingKeys, today: dt.date) -> np.ndarray:
    m = w.margin_pct / 100
    length_mm, spacing_mm = runs.coupled_length_mm[keys.run], runs.spacing_min_mm[keys.run]
    used_pct = 100 * np.nan_to_num(keys.used, nan=0.0)
    bits = np.where(length_mm > w.coupled_length_mm * (1 + m) + ROUNDING[0], LONGER, 0)
    bits |= np.where(spacing_mm < w.min_spacing_mm * (1 - m) - ROUNDING[1], CLOSER, 0)
    bits |= np.where(used_pct > w.budget_used_pct * (1 + m) + ROUNDING[2], MORE_BUDGET, 0)
    return bits | (EXPIRED if w.expired(today) else 0)


def lapse_note(w: Waiver, bits: int, length_mm: float, spacing_mm: float, used: float | None) -> str:
    """Why waiver ``w`` no longer covers a finding with these figures."""
    parts = []
    if bits & EXPIRED:
        parts.append(f"expired on {w.expires_on.isoformat()}")
    if bits & LONGER:
        parts.append(f"run {length_mm:.4g} mm long, accepted {w.coupled_length_mm:.4g} mm + {w.margin_pct:g} %")
    if bits & CLOSER:
        parts.append(f"closest spacing {spacing_mm:.4g} mm, accepted {w.min_spacing_mm:.4g} mm − {w.margin_pct:g} %")
    if bits & MORE_BUDGET and used is not None:
        parts.append(f"uses {100 * used:.0f} % of budget, accepted {w.budget_used_pct:.0f} % + {w.margin_pct:g} %")
    return f"waiver {w.id} no longer applies: " + "; ".join(parts)


def waiver_states(waivers: tuple[Waiver, ...], match: WaiverMatch, today: dt.date | None = None) -> list[dict]:
    """Each waiver with its state for report.json: ``in-force`` (covers at least one finding), ``expired``,
    ``exceeded`` (every finding it matches is beyond the accepted geometry), ``unused`` (matches nothing)."""
    today = today or utc_today()
    out = []
    for w, waiver_w in enumerate(waivers):
        matched, covered = int(match.matched_count[w]), int(match.covered_count[w])
        if waiver_w.expired(today):
            state = "expired"
            note = (f"expired on {waiver_w.expires_on.isoformat()}; the {matched} finding(s) it matches count "
                    "again" if matched else f"expired on {waiver_w.expires_on.isoformat()}; matches no finding")
        elif covered:
            state = "in-force"
            note = (f"{matched - covered} more matching finding(s) are beyond the accepted geometry"
                    if matched > covered else None)
        elif matched:
            state = "exceeded"
            note = f"the {matched} finding(s) it matches are beyond the accepted geometry and count again"
        else:
            state = "unused"
            note = "no finding matches it: remove it, or check its net names, layer and area"
        out.append(waiver_w.to_dict() | {"state": state, "findings_matched": matched, "findings_covered": covered,
                                         "note": note})
    return out
