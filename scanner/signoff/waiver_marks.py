"""Waivers in the scoring stage: the findings' keys in, a mask beside the noise and marks on the records out.

``apply_waivers`` matches every waiver against every directed finding (both directions of every kept
run) and every geometric finding in one call; the direction part of the result is the mask the victim
totals leave out. ``mark_hotspots`` and ``mark_geometric`` then put each matching waiver's mark
(waived, or lapsed and why) on the records.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from scanner.signoff.waiver_match import FindingKeys, WaiverMatch, lapse_note, match_waivers, waiver_states
from scanner.signoff.waivers import Waiver


@dataclass(frozen=True)
class Waived:
    """Waivers applied: ``directions`` per directed run, ``geometric`` per geometric finding, and the
    state of every waiver (``states``, report.json ``waivers``)."""

    directions: WaiverMatch
    geometric: WaiverMatch
    states: list[dict]


def apply_waivers(waivers: tuple[Waiver, ...], board, roles, directed, noise, geometric, runs) -> Waived:
    index = {name: i for i, name in enumerate(board.nets)}
    n_geo = len(geometric)
    keys = FindingKeys(
        victim=np.concatenate([directed.victim, [index[g.victim] for g in geometric]]).astype(np.int64),
        aggressor=np.concatenate([directed.aggressor, [index[g.aggressor] for g in geometric]]).astype(np.int64),
        aggressor_partner=np.concatenate([np.where(noise.odd_mode, roles.partner[directed.aggressor], -1),
                                          np.full(n_geo, -1)]).astype(np.int64),
        run=np.concatenate([directed.run, [g.run for g in geometric]]).astype(np.int64),
        used=np.concatenate([noise.used, np.full(n_geo, np.nan)]),
        counted=np.concatenate([noise.alive, np.ones(n_geo, dtype=bool)]))
    match = match_waivers(waivers, board.nets, [layer.name for layer in board.layers], runs, keys)
    n = len(directed)
    return Waived(match.take(slice(0, n)), match.take(slice(n, n + n_geo)), waiver_states(waivers, match))


def waiver_mark(w: Waiver, covered: bool, lapse: int, length_mm: float, spacing_mm: float,
                used: float | None) -> dict:
    """What a finding's record says about the waiver matching it."""
    return {"id": w.id, "state": "waived" if covered else "lapsed", "reason": w.reason,
            "accepted_by": w.accepted_by, "accepted_on": w.accepted_on.isoformat(),
            "note": None if covered else lapse_note(w, lapse, length_mm, spacing_mm, used)}


def mark_hotspots(hotspots: list, waivers: tuple[Waiver, ...], match: WaiverMatch) -> None:
    """Set the ``waiver`` of each direction of each listed hotspot (one coupled run) from its directed run."""
    for h in hotspots:
        for d in h.directions:
            w = int(match.waiver[d.index])
            if w >= 0:
                d.waiver = waiver_mark(waivers[w], bool(match.covered[d.index]), int(match.lapse[d.index]),
                                       h.coupled_length_mm, h.min_spacing_mm, d.budget_used_pct / 100)


def mark_geometric(geometric: list, waivers: tuple[Waiver, ...], match: WaiverMatch, runs) -> list:
    """The geometric findings with their waiver marks (the budget is not checked: they have none)."""
    out = []
    for g, w, covered, lapse in zip(geometric, match.waiver.tolist(), match.covered.tolist(), match.lapse.tolist()):
        if w >= 0:
            g = replace(g, waiver=waiver_mark(waivers[w], covered, lapse, float(runs.coupled_length_mm[g.run]),
                                              g.min_spacing_mm, None))
        out.append(g)
    return out
