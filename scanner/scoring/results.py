"""Findings: scored coupled runs, per-victim totals, budget checks and ranking.

Plain result records and the JSON shape of ``report.json`` (schema
``nearfar.report/2``, documented in docs/report-schema.md).
"""
from __future__ import annotations

import secrets
from dataclasses import asdict, dataclass, field, replace
from datetime import datetime, timezone

import numpy as np

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
    return STATUS_NAMES[status_code(fraction, warn_fraction)]


STATUS_NAMES = ("pass", "warn", "fail")


def status_code(fraction, warn_fraction: float):
    """0 pass, 1 warn, 2 fail from the fraction of budget used (arrays too)."""
    fraction = np.asarray(fraction)
    code = np.where(fraction > 1.0, 2, np.where(fraction >= warn_fraction, 1, 0))
    return int(code) if code.ndim == 0 else code


#: digits kept in report.json, one per quantity wherever it appears
MV_DIGITS = 3
PCT_DIGITS = 2  # percentages of swing and of budget
MM_DIGITS = 3  # lengths and coordinates
SPACING_DIGITS = 4


@dataclass(slots=True)
class Direction:
    """One direction of a coupled run: the aggressor's edge and what it does to the victim.

    ``next_mv`` is the noise at the victim's receiver when the victim is driven from the far end (its
    receiver at the aggressor's driver end), ``fext_mv`` when it is driven from the same end as the
    aggressor (receiver at the far end); a high-impedance receiver doubles the arriving wave (docs/physics.md).
    """

    status: str
    victim: str
    aggressor: str
    victim_class: str
    aggressor_class: str
    aggressor_model: str  # "single", "differential (two lines)", "differential (odd mode)"
    next_mv: float
    fext_mv: float
    next_pct: float
    fext_pct: float
    next_budget_mv: float
    fext_budget_mv: float
    budget_used_pct: float  # larger of NEXT and FEXT in percent of its budget
    rise_time_ns: float
    swing_v: float
    termination: str
    victim_swing_v: float
    index: int  # index into the scan's directed runs
    exact: dict | None = None  # exact line simulation of a strong-coupling finding
    #: the waiver matching this direction: id, state (waived / lapsed), reason, who and when, note
    waiver: dict | None = None

    @property
    def waived(self) -> bool:
        return is_waived(self.waiver)

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__slots__}
        d.pop("index")
        return d


@dataclass(slots=True)
class Hotspot:
    """One coupled run between two nets, both directions in it (worse first), ranked by the worse.

    ``id`` is stable across scans of the same layout: the two net names in sorted order, the main
    layer and the worst stretch's location to 0.1 mm. Attributes of the worse direction are read
    through (``victim``, ``aggressor``, ``next_mv`` …). Not frozen: a board can list hundreds of
    thousands, and frozen dataclasses set every field through ``object.__setattr__``; treat it as
    read-only all the same."""

    rank: int
    id: str
    status: str
    budget_used_pct: float
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
    kb_max: float
    strong_coupling: bool
    directions: list[Direction]
    run: int  # index into the scan's coupled runs
    fix: dict | None = None

    def __getattr__(self, name):
        if name in Direction.__slots__:
            return getattr(self.directions[0], name)
        raise AttributeError(name)

    @property
    def waived(self) -> bool:
        """A waiver covers every direction of the run that warns or fails (and at least one)."""
        bad = [x for x in self.directions if x.status != "pass" or x.waiver]
        return bool(bad) and all(x.waived for x in bad)

    def toward(self, victim: str) -> "Hotspot":
        """The same run with ``victim``'s direction first (read through by ``victim``, ``next_mv`` …)."""
        first = [x for x in self.directions if x.victim == victim]
        if not first:
            raise KeyError(f"{victim} is not a victim on this run")
        return replace(self, directions=first + [x for x in self.directions if x.victim != victim])

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__slots__}
        d.pop("run")
        d["directions"] = [x.to_dict() for x in self.directions]
        return d


def finding_id(net_a: str, net_b: str, layer: str, x_mm: float, y_mm: float) -> str:
    """A finding's identity: ``A|B|layer|x,y`` with the two nets sorted and the location to 0.1 mm."""
    a, b = sorted((net_a, net_b))
    return f"{a}|{b}|{layer}|{x_mm:.1f},{y_mm:.1f}"


@dataclass(frozen=True)
class VictimTotal:
    """One victim over all its aggressors.

    ``budget_used_pct`` decides the status: the larger of the total against the victim class's budgets
    (``total_used_pct``) and the worst single finding against its own budgets (a class pair can be
    tighter), so a victim never passes while one of its findings warns or fails.
    """

    net: str
    net_class: str
    status: str
    budget_used_pct: float
    total_used_pct: float
    next_worst_pct: float
    fext_worst_pct: float
    next_rss_pct: float
    fext_rss_pct: float
    next_worst_mv: float
    fext_worst_mv: float
    next_budget_mv: float
    fext_budget_mv: float
    aggressors: list[dict]  # most budget first: aggressor, budget_used_pct, next_mv, fext_mv, layer, x_mm, y_mm, finding
    fix: dict | None = None
    #: with waivers: the aggressors whose contributions were waived (left out of the totals above), the
    #: waivers that did it, and the budget used and status had they counted
    waived_aggressors: list[str] = field(default_factory=list)
    waivers: list[str] = field(default_factory=list)
    budget_used_with_waived_pct: float | None = None
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
    pairs: list[dict] = field(default_factory=list)  # differential pairs: p, n, source
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
            "pairs": list(self.pairs),
            "hotspots": [h.to_dict() for h in self.hotspots],
            "victims": [v.to_dict() for v in self.victims],
            "geometric": [g.to_dict() for g in self.geometric],
            "impedance": None if self.impedance is None else self.impedance.to_dict(),
            "waivers": list(self.waivers),
        } | ({} if self.comparison is None else {"comparison": self.comparison})
