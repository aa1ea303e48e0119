"""Two reports of a board compared: findings fixed, new, worse and better, and victims whose status changed.

Findings are matched by their net pair (either direction) and location: two findings of the same pair
match when their runs' bounding boxes, each grown by the move tolerance, overlap; among several
candidates the same direction and then the nearest wins, one to one. A matched finding is worse when
its status got worse or it uses at least ``threshold_pct`` points more of its budget, better the other
way round. An unmatched old finding whose pair still couples below the listing floor is better, else
fixed; an unmatched new finding whose pair coupled below the floor before is worse, else new.
"""
from __future__ import annotations

from collections import defaultdict

from scanner.errors import InputError
from scanner.scoring.results import CAUTION
from scanner.signoff.records import Entry, coupled_pairs, finding_entries, victim_states

SCHEMA = "nearfar.compare/1"
#: how far a run may move and still be the same finding (mm)
MOVE_TOLERANCE_MM = 1.0
#: change in budget used (percentage points) that counts as worse or better
THRESHOLD_PCT = 1.0

STATUS_RANK = {"pass": 0, "warn": 1, "fail": 2}
VERDICT_RANK = {"pass": 0, "incomplete": 1, "fail": 2}
CHANGES = ("worse", "new", "fixed", "better", "unchanged")


def compare_reports(old: dict, new: dict, old_source: str, new_source: str,
                    move_tolerance_mm: float = MOVE_TOLERANCE_MM, threshold_pct: float = THRESHOLD_PCT) -> dict:
    """The comparison of two report.json objects (schema ``nearfar.compare/1``, docs/report-schema.md)."""
    (old_entries, old_victims), (new_entries, new_victims) = _read(old, old_source), _read(new, new_source)
    victims = _victim_changes(old_victims, new_victims)
    old_pairs, new_pairs = coupled_pairs(old), coupled_pairs(new)
    findings = []
    for kind_pair in sorted(set(old_entries) | set(new_entries)):
        findings += _pair_changes(old_entries.get(kind_pair, []), new_entries.get(kind_pair, []),
                                  old_pairs, new_pairs, move_tolerance_mm, threshold_pct)
    findings.sort(key=lambda f: (CHANGES.index(f["change"]), -_used(f)))
    counts = {c: sum(f["change"] == c for f in findings) for c in CHANGES}
    verdict = {"old": old.get("verdict"), "new": new.get("verdict")}
    regressed = (counts["worse"] > 0 or any(_new_failure(f) for f in findings)
                 or any(v["change"] == "worse" for v in victims)
                 or VERDICT_RANK.get(verdict["new"], 0) > VERDICT_RANK.get(verdict["old"], 0))
    return {
        "schema": SCHEMA,
        "caution": CAUTION,
        "old": _side(old, old_source),
        "new": _side(new, new_source),
        "settings": {"move_tolerance_mm": move_tolerance_mm, "threshold_pct": threshold_pct},
        "warnings": _warnings(old, new),
        "verdict": verdict,
        "regressed": bool(regressed),
        "counts": counts | {"victims_changed": len(victims)},
        "findings": [f for f in findings if f["change"] != "unchanged"],
        "victims": victims,
    }


def _read(report: dict, source: str) -> tuple[dict[tuple, list[Entry]], dict]:
    """The report's findings grouped by kind and net pair, and its victims' states."""
    try:
        entries, victims = finding_entries(report, every_direction=False), victim_states(report)
    except (KeyError, TypeError, ValueError, IndexError) as exc:
        raise InputError(f"a finding or victim record lacks or mangles a field ({exc!r})", source) from None
    grouped = defaultdict(list)
    for e in entries:
        grouped[(e.kind, e.pair)].append(e)
    return grouped, victims


def _side(report: dict, source: str) -> dict:
    board = report.get("board") or {}
    return {"source": source, "board": board.get("name"), "run_id": report.get("run_id"),
            "created": report.get("created"), "verdict": report.get("verdict")}


def _warnings(old: dict, new: dict) -> list[str]:
    out = []
    strip = lambda rules: {k: v for k, v in (rules or {}).items() if k != "source"}  # noqa: E731
    if strip(old.get("rules")) != strip(new.get("rules")):
        out.append("the two reports were made with different rules: changes may come from the rules, not the board")
    if (old.get("settings") or {}).get("search_distance_mm") != (new.get("settings") or {}).get("search_distance_mm"):
        out.append("the two scans searched to different distances: findings near the limit may appear or vanish")
    if old.get("schema") != new.get("schema"):
        out.append(f"the reports have different schemas ({old.get('schema')}, {new.get('schema')})")
    return out


def _gap_mm(a: Entry, b: Entry) -> float:
    """Distance between two runs' bounding boxes (0 when they overlap)."""
    dx = max(a.bbox_mm[0] - b.bbox_mm[2], b.bbox_mm[0] - a.bbox_mm[2], 0.0)
    dy = max(a.bbox_mm[1] - b.bbox_mm[3], b.bbox_mm[1] - a.bbox_mm[3], 0.0)
    return (dx * dx + dy * dy) ** 0.5


def _centre_mm(a: Entry, b: Entry) -> float:
    ax, ay = (a.bbox_mm[0] + a.bbox_mm[2]) / 2, (a.bbox_mm[1] + a.bbox_mm[3]) / 2
    bx, by = (b.bbox_mm[0] + b.bbox_mm[2]) / 2, (b.bbox_mm[1] + b.bbox_mm[3]) / 2
    return ((ax - bx) ** 2 + (ay - by) ** 2) ** 0.5


def _pair_changes(olds: list[Entry], news: list[Entry], old_pairs: set, new_pairs: set, tolerance_mm: float,
                  threshold_pct: float) -> list[dict]:
    """Match one net pair's findings old to new and say what became of each."""
    candidates = sorted((a.victim != b.victim, _centre_mm(a, b), i, j)
                        for i, a in enumerate(olds) for j, b in enumerate(news) if _gap_mm(a, b) <= 2 * tolerance_mm)
    old_of, new_of = {}, {}
    for _, _, i, j in candidates:
        if i not in old_of and j not in new_of:
            old_of[i], new_of[j] = j, i
    out = [_change(olds[i], news[j], threshold_pct) for i, j in old_of.items()]
    for i, a in enumerate(olds):
        if i not in old_of:
            below = a.kind == "noise" and (a.victim, a.aggressor) in new_pairs
            out.append(_record("better" if below else "fixed", a, None,
                               "the pair still couples, below the listing floor" if below else None))
    for j, b in enumerate(news):
        if j not in new_of:
            below = b.kind == "noise" and (b.victim, b.aggressor) in old_pairs
            out.append(_record("worse" if below else "new", None, b,
                               "the pair coupled before, below the listing floor" if below else None))
    return out


def _change(a: Entry, b: Entry, threshold_pct: float) -> dict:
    step = STATUS_RANK[b.status] - STATUS_RANK[a.status]
    delta = b.budget_used_pct - a.budget_used_pct
    if step > 0 or (step == 0 and delta >= threshold_pct):
        change = "worse"
    elif step < 0 or delta <= -threshold_pct:
        change = "better"
    else:
        change = "unchanged"
    return _record(change, a, b, None)


def _record(change: str, a: Entry | None, b: Entry | None, note: str | None) -> dict:
    e = b or a
    moved = None if a is None or b is None else round(_centre_mm(a, b), 3)
    return {"change": change, "kind": e.kind, "victim": e.victim, "aggressor": e.aggressor, "layers": list(e.layers),
            "x_mm": e.x_mm, "y_mm": e.y_mm, "moved_mm": moved, "old": a and a.figures(), "new": b and b.figures(),
            "note": note}


def _used(f: dict) -> float:
    side = f["new"] or f["old"]
    return side["budget_used_pct"]


def _new_failure(f: dict) -> bool:
    return f["change"] == "new" and f["new"]["status"] != "pass" and not f["new"]["waived"]


def _victim_changes(before: dict, after: dict) -> list[dict]:
    """Victims whose status changed; a victim missing from a report has no coupling there (pass)."""
    out = []
    for net in sorted(set(before) | set(after)):
        a, b = before.get(net), after.get(net)
        s_old, s_new = a.status if a else "pass", b.status if b else "pass"
        if s_old == s_new:
            continue
        out.append({"net": net, "old_status": s_old, "new_status": s_new,
                    "change": "worse" if STATUS_RANK[s_new] > STATUS_RANK[s_old] else "better",
                    "old_budget_used_pct": a and round(a.budget_used_pct, 2),
                    "new_budget_used_pct": b and round(b.budget_used_pct, 2),
                    "waivers": list(b.waivers) if b else []})
    out.sort(key=lambda v: (v["change"] != "worse", v["net"]))
    return out
