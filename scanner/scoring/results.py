"""Findings: scored coupled runs, per-victim totals, budget checks and ranking.

Plain result records and the JSON shape of ``report.json`` (schema
``nearfar.report/2``, documented in docs/report-schema.md).
"""
from __future__ import annotations

import secrets
from dataclasses import dataclass, field, asdict
from datetime import datetime, timezone

SCHEMA = "nearfar.report/2"

CAUTION = ("Crosstalk figures are engineering estimates from a quasi-static, lossless, weak-coupling model. "
           "Confirm critical nets by measurement or full-wave/circuit simulation, and follow your "
           "organisation's own sign-off practice.")

STATUS_ORDER = {"fail": 0, "warn": 1, "pass": 2}

#: exit status of a scan by verdict (2 bad input and 4 internal error come from the command line)
EXIT_CODES = {"pass": 0, "fail": 1, "incomplete": 3}


def new_run_id() -> str:
    """An id for one run, named by every file the run writes: 16 random hex digits."""
    return secrets.token_hex(8)


def utc_now() -> str:
    """The time in UTC, ISO 8601 to the second (``2026-12-02T05:33:09Z``)."""
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def rounded(x, digits: int = 3) -> float:
    """A report figure: a plain float rounded to ``digits`` decimals."""
    return round(float(x), digits)


def is_waived(waiver: dict | None) -> bool:
    """A finding's waiver mark says a waiver is in force for it."""
    return waiver is not None and waiver["state"] == "waived"


def status_for(fraction: float, warn_fraction: float) -> str:
    """pass / warn / fail from the fraction of budget used."""
    if fraction > 1.0:
        return "fail"
    if fraction >= warn_fraction:
        return "warn"
    return "pass"


@dataclass(slots=True)
class Hotspot:
    """One aggressor coupling into one victim over one coupled run.

    Not frozen: a board can list hundreds of thousands, and frozen dataclasses set every field through
    ``object.__setattr__``; treat it as read-only all the same."""

    rank: int
    status: str
    victim: str
    aggressor: str
    victim_class: str
    aggressor_class: str
    aggressor_model: str  # "single", "differential (two lines)", "differential (odd mode)"
    layer: str
    layers: list[str]
    structure: str  # microstrip / stripline / mixed
    coupled_length_mm: float
    min_spacing_mm: float
    mean_spacing_mm: float
    x_mm: float
    y_mm: float
    extent_mm: list[float]  # worst piece x0, y0, x1, y1
    bbox_mm: list[float]  # run x_min, y_min, x_max, y_max
    next_mv: float
    fext_mv: float
    next_pct: float
    fext_pct: float
    next_budget_mv: float
    fext_budget_mv: float
    budget_used: float  # largest of NEXT and FEXT fraction of budget
    kb_max: float
    strong_coupling: bool
    rise_time_ns: float
    swing_v: float
    termination: str
    victim_swing_v: float
    run: int  # index into the scan's coupled runs
    direction: int  # index into the scan's directed runs
    fix: dict | None = None
    exact: dict | None = None  # exact line simulation of a strong-coupling finding
    #: the waiver matching this finding: id, state (waived / lapsed), reason, who and when, note
    waiver: dict | None = None

    @property
    def waived(self) -> bool:
        return is_waived(self.waiver)

    def to_dict(self) -> dict:
        d = asdict(self)
        d.pop("run")
        d.pop("direction")
        return d


@dataclass(frozen=True)
class VictimTotal:
    net: str
    net_class: str
    status: str
    next_worst_pct: float
    fext_worst_pct: float
    next_rss_pct: float
    fext_rss_pct: float
    next_worst_mv: float
    fext_worst_mv: float
    next_budget_mv: float
    fext_budget_mv: float
    budget_used: float
    aggressors: list[str]
    #: with waivers: the aggressors whose contributions were waived (left out of the totals above), the
    #: waivers that did it, and the budget used and status had they counted
    waived_aggressors: list[str] = field(default_factory=list)
    waivers: list[str] = field(default_factory=list)
    budget_used_with_waived: float | None = None
    status_with_waived: str | None = None

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass
class ScanResult:
    """Everything a report needs; ``to_dict`` is report.json."""

    board: dict
    stackup: dict
    rules: dict
    settings: dict
    hotspots: list[Hotspot]
    victims: list[VictimTotal]
    geometric: list = field(default_factory=list)  # scanner.scoring.class_limits.GeometricFinding
    warnings: list[str] = field(default_factory=list)
    runs: object = None  # scanner.coupling.runs.CoupledRuns, for overlays and waveforms
    piece_coefficients: object = None  # PieceCoefficients aligned with runs.pieces
    lookup: object = None  # scanner.coupling.coefficients.CouplingLookup: layer environments and tables, for what-if plots
    summary: dict = field(default_factory=dict)
    #: what was checked: scanned_trace_fraction, layers[] (name, scanned, reference, reason), ...
    coverage: dict = field(default_factory=dict)
    #: reasons part of the board was not checked; any makes the verdict "incomplete" unless it fails
    unchecked: list[str] = field(default_factory=list)
    impedance: object = None  # scanner.scoring.impedance.ImpedanceCheck
    #: this run's id and time, in report.json and named by every other file of the run
    run_id: str = field(default_factory=new_run_id)
    created: str = field(default_factory=utc_now)
    #: every waiver given, with its state (scanner.signoff.waiver_match.waiver_states)
    waivers: list[dict] = field(default_factory=list)
    #: against a baseline report (scan --baseline): scanner.signoff.compare.compare_reports
    comparison: dict | None = None

    @property
    def worst_status(self) -> str:
        statuses = [v.status for v in self.victims] + [g.status for g in self.geometric if not g.waived]
        statuses += [s.status for s in self.impedance.stretches] if self.impedance is not None else []
        for s in ("fail", "warn"):
            if s in statuses:
                return s
        return "pass"

    @property
    def verdict(self) -> str:
        """fail (some victim or limit over budget, or a stretch off its impedance target), incomplete (nothing
        over, but not all checked), pass."""
        if self.worst_status == "fail":
            return "fail"
        return "incomplete" if self.unchecked else "pass"

    @property
    def exit_code(self) -> int:
        return EXIT_CODES[self.verdict]

    def to_dict(self) -> dict:
        return {
            "schema": SCHEMA,
            "run_id": self.run_id,
            "created": self.created,
            "caution": CAUTION,
            "verdict": self.verdict,
            "coverage": self.coverage,
            "unchecked": list(self.unchecked),
            "board": self.board,
            "stackup": self.stackup,
            "rules": self.rules,
            "settings": self.settings,
            "summary": self.summary,
            "warnings": list(self.warnings),
            "hotspots": [h.to_dict() for h in self.hotspots],
            "victims": [v.to_dict() for v in self.victims],
            "geometric": [g.to_dict() for g in self.geometric],
            "impedance": None if self.impedance is None else self.impedance.to_dict(),
            "waivers": list(self.waivers),
        } | ({} if self.comparison is None else {"comparison": self.comparison})
