"""One summary row per board: its verdict and the figures a batch is sorted and screened by."""
from __future__ import annotations

from dataclasses import asdict, dataclass, fields

from scanner.errors import printable
from scanner.scoring.results import rounded

#: verdicts of a board in a batch, worst first: over budget, not scanned (our fault, then the input's),
#: scanned in part, passed
VERDICTS = ("fail", "error", "refused", "incomplete", "pass")
_RANK = {v: i for i, v in enumerate(VERDICTS)}


@dataclass(frozen=True)
class BoardRow:
    """A board's line in batch.json, batch.csv and index.html (fields in column order)."""

    board: str
    verdict: str
    coverage: float | None  # share of signal trace length scanned (0–1)
    victims_fail: int | None
    worst_victim: str | None
    worst_budget_used: float | None  # that victim's share of its budget (1 = all of it)
    seconds: float
    reason: str
    report: str | None  # the board's main report file, relative to the batch folder
    reused: bool = False  # taken from the last run: the inputs have not changed since

    def to_dict(self) -> dict:
        return asdict(self)

    @classmethod
    def from_dict(cls, d: dict) -> "BoardRow":
        return cls(**{f.name: d[f.name] for f in fields(cls)})


COLUMNS = tuple(f.name for f in fields(BoardRow))


def scanned_row(result, shown: str, report: str, seconds: float) -> BoardRow:
    """The row of a board that was scanned: fail, incomplete or pass."""
    worst = max(result.victims, key=lambda v: v.budget_used_pct, default=None)
    victims_fail = sum(1 for v in result.victims if v.status == "fail")
    return BoardRow(board=shown, verdict=result.verdict,
                    coverage=result.coverage.get("scanned_trace_fraction"), victims_fail=victims_fail,
                    worst_victim=None if worst is None else worst.net,
                    worst_budget_used=None if worst is None else rounded(worst.budget_used_pct / 100, 4),
                    seconds=rounded(seconds, 2), reason=_reason(result, victims_fail), report=report)


def unscanned_row(shown: str, verdict: str, reason: str, seconds: float, report: str | None = None) -> BoardRow:
    """The row of a board that was refused (bad input) or hit an internal error."""
    return BoardRow(board=shown, verdict=verdict, coverage=None, victims_fail=None, worst_victim=None,
                    worst_budget_used=None, seconds=rounded(seconds, 2), reason=printable(reason), report=report)


def _reason(result, victims_fail: int) -> str:
    if result.verdict == "incomplete":
        return "not checked: " + "; ".join(result.unchecked)
    if result.verdict != "fail":
        return ""
    broken = sum(1 for g in result.geometric if g.status == "fail")
    parts = [f"{victims_fail} victim{'s' * (victims_fail != 1)} over budget"] if victims_fail else []
    parts += [f"{broken} geometric limit{'s' * (broken != 1)} broken"] if broken else []
    return printable(", ".join(parts))


def worst_first(rows: list[BoardRow]) -> list[BoardRow]:
    """By verdict (fail, error, refused, incomplete, pass), then by the worst victim's budget used, then name."""
    return sorted(rows, key=lambda r: (_RANK[r.verdict], -(r.worst_budget_used or 0.0), r.board))


def exit_status(rows: list[BoardRow]) -> int:
    """1 any board fails; 4 none fails but one hit an internal error; 3 some board incomplete or refused; 0 all pass."""
    verdicts = {r.verdict for r in rows}
    if "fail" in verdicts:
        return 1
    if "error" in verdicts:
        return 4
    if verdicts & {"incomplete", "refused"}:
        return 3
    return 0


def counts(rows: list[BoardRow]) -> dict[str, int]:
    return {v: sum(1 for r in rows if r.verdict == v) for v in VERDICTS}
