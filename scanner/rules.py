"""The rules file: net classes, differential pairs, power nets, scan settings, stackup overrides.

A TOML file (see docs/rules.md). Every key is checked; unknown keys and wrong
types are input errors naming the file. Without a file the defaults below
apply, and they are printed at the top of every report.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field, asdict
from pathlib import Path

from scanner.board.model import Stackup, StackupLayer
from scanner.errors import InputError, printable
from scanner.input_limits import check_range
from scanner.patterns import compile_patterns, pattern_problem
from scanner.physics.crosstalk import TERMINATIONS, receiver_gain
from scanner.signoff.waivers import Waiver, parse_waivers
from scanner.toml_input import read_toml

DIFF_AGGRESSOR_MODELS = ("two-lines", "odd-mode")
BUDGET_BASES = ("worst-case", "rss")
PAIR_BY_GEOMETRY = ("unnamed-nets", "all-nets", "off")

#: default power and ground patterns (common practice in net naming)
DEFAULT_POWER_PATTERNS = ("GND*", "*_GND", "AGND*", "DGND*", "PGND*", "VSS*", "VCC*", "VDD*", "VBUS", "+*")


@dataclass(frozen=True)
class NetClass:
    """What a class of nets does as aggressor (edge) and tolerates as victim (budgets)."""

    name: str
    patterns: tuple[str, ...]
    rise_time_ns: float = 1.0
    swing_v: float = 3.3
    next_budget_pct: float | None = 5.0
    fext_budget_pct: float | None = 5.0
    next_budget_mv: float | None = None
    fext_budget_mv: float | None = None
    termination: str = "high-z-receiver"
    z0_target_ohm: float | None = None  # single-ended impedance the class is routed for
    zdiff_target_ohm: float | None = None  # differential impedance of its pairs
    impedance_tolerance_pct: float = 10.0

    @property
    def has_impedance_target(self) -> bool:
        return self.z0_target_ohm is not None or self.zdiff_target_ohm is not None

    @property
    def receiver_gain(self) -> float:
        return receiver_gain(self.termination)

    def next_budget_v(self) -> float:
        return _budget_v(self.next_budget_mv, self.next_budget_pct, self.swing_v)

    def fext_budget_v(self) -> float:
        return _budget_v(self.fext_budget_mv, self.fext_budget_pct, self.swing_v)


def _budget_v(mv, pct, swing_v) -> float:
    if mv is not None:
        return mv * 1e-3
    if pct is not None:
        return pct / 100.0 * swing_v
    return float("inf")


DEFAULT_CLASS = NetClass(name="default", patterns=("*",))


@dataclass(frozen=True)
class ClassPairRule:
    """A limit for one aggressor class coupling into one victim class.

    Noise budgets here replace the victim class's own for that aggressor class.
    A geometric limit (``max_parallel_mm`` of coupled length at edge spacings up
    to ``within_spacing_mm``) is checked on the coupled runs directly, for
    couplings the edge-rate model does not describe (slow, high-current copper
    beside a sensing line, whose coupling is mainly magnetic).
    """

    aggressor_class: str
    victim_class: str
    next_budget_pct: float | None = None
    fext_budget_pct: float | None = None
    next_budget_mv: float | None = None
    fext_budget_mv: float | None = None
    max_parallel_mm: float | None = None
    within_spacing_mm: float | None = None

    @property
    def has_budget(self) -> bool:
        return any(v is not None for v in (self.next_budget_pct, self.fext_budget_pct,
                                            self.next_budget_mv, self.fext_budget_mv))

    @property
    def has_geometry(self) -> bool:
        return self.max_parallel_mm is not None

    def budgets_v(self, victim: "NetClass") -> tuple[float, float]:
        """(NEXT, FEXT) budgets in volts for a victim of ``victim`` class; unset ones fall back to the class."""
        next_v = (_budget_v(self.next_budget_mv, self.next_budget_pct, victim.swing_v)
                  if self.next_budget_mv is not None or self.next_budget_pct is not None else victim.next_budget_v())
        fext_v = (_budget_v(self.fext_budget_mv, self.fext_budget_pct, victim.swing_v)
                  if self.fext_budget_mv is not None or self.fext_budget_pct is not None else victim.fext_budget_v())
        return next_v, fext_v


@dataclass(frozen=True)
class ScanSettings:
    search_distance_mm: float | None = None  # None: derived from the stackup
    min_coupled_length_mm: float = 2.0
    angle_tolerance_deg: float = 10.0
    warn_fraction: float = 0.8  # warn at 80 % of budget and above
    list_floor: float = 0.2  # passing findings under this fraction of budget are counted, not listed
    budget_basis: str = "worst-case"
    differential_aggressor: str = "two-lines"
    auto_diff_pairs: bool = True
    pair_by_geometry: str = "unnamed-nets"
    #: stretches outside an impedance target shorter than this are counted, not listed (pad neck-downs)
    impedance_min_length_mm: float = 1.0
    skip_layers: tuple[str, ...] = ()  # copper layer names left out of the search (the verdict is then incomplete)


@dataclass(frozen=True)
class Rules:
    classes: tuple[NetClass, ...] = ()
    power_patterns: tuple[str, ...] = DEFAULT_POWER_PATTERNS
    diff_pairs: tuple[tuple[str, str], ...] = ()  # explicit (positive pattern, negative pattern)
    scan: ScanSettings = field(default_factory=ScanSettings)
    stackup: Stackup | None = None
    planes: tuple[str, ...] = ()  # copper layer names forced to plane
    class_pairs: tuple[ClassPairRule, ...] = ()
    waivers: tuple[Waiver, ...] = ()  # accepted risks: from [[waiver]] here and from a waivers file
    source: str = "defaults"

    def pair_rule(self, aggressor_class: str, victim_class: str) -> ClassPairRule | None:
        for rule in self.class_pairs:
            if rule.aggressor_class == aggressor_class and rule.victim_class == victim_class:
                return rule
        return None

    def class_of(self, net_name: str) -> NetClass:
        """The first class (in file order) whose pattern matches; the default class otherwise."""
        for cls in self.classes:
            if compile_patterns(cls.patterns).match(net_name.upper()):
                return cls
        return DEFAULT_CLASS

    def is_power(self, net_name: str) -> bool:
        return bool(compile_patterns(self.power_patterns).match(net_name.upper()))

    def to_dict(self) -> dict:
        d = {
            "source": self.source,
            "scan": asdict(self.scan),
            "classes": [asdict(c) | {"patterns": list(c.patterns)} for c in self.classes],
            "default_class": asdict(DEFAULT_CLASS) | {"patterns": ["(any net no class matches)"]},
            "power_patterns": list(self.power_patterns),
            "diff_pairs": [list(p) for p in self.diff_pairs],
            "planes": list(self.planes),
            "class_pairs": [asdict(r) for r in self.class_pairs],
        }
        if self.stackup is not None:
            d["stackup"] = [asdict(layer) for layer in self.stackup.layers]
        return d


# --------------------------------------------------------------------------- loading


_CLASS_KEYS = {
    "name": str, "nets": list, "rise_time_ns": float, "swing_v": float,
    "next_budget_pct": float, "fext_budget_pct": float, "next_budget_mv": float, "fext_budget_mv": float,
    "termination": str, "z0_target_ohm": float, "zdiff_target_ohm": float, "impedance_tolerance_pct": float,
}
_SCAN_KEYS = {
    "search_distance_mm": float, "min_coupled_length_mm": float, "angle_tolerance_deg": float,
    "warn_fraction": float, "list_floor": float, "budget_basis": str, "differential_aggressor": str, "auto_diff_pairs": bool,
    "pair_by_geometry": str,
    "impedance_min_length_mm": float,
    "skip_layers": list,
}
_STACK_KEYS = {"kind": str, "name": str, "thickness_mm": float, "epsilon_r": float}
_PAIR_KEYS = {
    "aggressor_class": str, "victim_class": str, "next_budget_pct": float, "fext_budget_pct": float,
    "next_budget_mv": float, "fext_budget_mv": float, "max_parallel_mm": float, "within_spacing_mm": float,
}
_TOP_KEYS = {"scan", "class", "power", "diff_pair", "stackup", "planes", "class_pair", "waiver"}
#: the physical range (scanner.input_limits.RANGES) of each number key; stackup thickness goes by the layer's kind
_RANGE_OF = {
    "search_distance_mm": "search distance", "within_spacing_mm": "search distance",
    "min_coupled_length_mm": "coupled length", "max_parallel_mm": "coupled length",
    "angle_tolerance_deg": "angle tolerance", "warn_fraction": "fraction of budget", "list_floor": "fraction of budget",
    "rise_time_ns": "rise time", "swing_v": "swing", "next_budget_pct": "budget share",
    "fext_budget_pct": "budget share", "next_budget_mv": "noise budget", "fext_budget_mv": "noise budget",
    "epsilon_r": "relative permittivity", "z0_target_ohm": "impedance", "zdiff_target_ohm": "impedance",
    "impedance_tolerance_pct": "impedance tolerance", "impedance_min_length_mm": "impedance check length",
}


def load_rules(path: str | Path | None) -> Rules:
    """Read a rules file; ``None`` gives the defaults."""
    if path is None:
        return Rules()
    return parse_rules(read_toml(path, "rules file"), printable(str(path)))


def parse_rules(doc: dict, source: str) -> Rules:
    def bad(msg):
        return InputError(msg, source)

    unknown = set(doc) - _TOP_KEYS
    if unknown:
        raise bad(f"unknown key(s) {', '.join(sorted(unknown))}; allowed: {', '.join(sorted(_TOP_KEYS))}")

    scan_kw = _typed(doc.get("scan", {}), _SCAN_KEYS, "[scan]", bad, source)
    _check_choice(scan_kw.get("budget_basis"), BUDGET_BASES, "[scan] budget_basis", bad)
    _check_choice(scan_kw.get("differential_aggressor"), DIFF_AGGRESSOR_MODELS, "[scan] differential_aggressor", bad)
    if "warn_fraction" in scan_kw and not scan_kw["warn_fraction"] > 0:
        raise bad("[scan] warn_fraction must be more than 0")
    _check_choice(scan_kw.get("pair_by_geometry"), PAIR_BY_GEOMETRY, "[scan] pair_by_geometry", bad)
    if "skip_layers" in scan_kw:
        names = scan_kw["skip_layers"]
        if not all(isinstance(n, str) and n for n in names):
            raise bad("[scan] skip_layers must be a list of copper layer names")
        scan_kw["skip_layers"] = tuple(names)
    scan = ScanSettings(**scan_kw)

    classes = []
    raw_classes = doc.get("class", [])
    if not isinstance(raw_classes, list):
        raise bad("[[class]] must be an array of tables")
    for i, raw in enumerate(raw_classes):
        where = f"[[class]] #{i + 1}"
        kw = _typed(raw, _CLASS_KEYS, where, bad, source)
        if "name" not in kw or "nets" not in kw:
            raise bad(f"{where} needs 'name' and 'nets'")
        patterns = kw.pop("nets")
        if not patterns or not all(isinstance(p, str) and p for p in patterns):
            raise bad(f"{where} 'nets' must be a list of name patterns")
        _check_patterns(patterns, f"{where} nets", bad)
        _check_choice(kw.get("termination"), TERMINATIONS, f"{where} termination", bad)
        if "next_budget_mv" in kw and "next_budget_pct" not in kw:
            kw["next_budget_pct"] = None
        if "fext_budget_mv" in kw and "fext_budget_pct" not in kw:
            kw["fext_budget_pct"] = None
        classes.append(NetClass(patterns=tuple(patterns), **kw))
    names = [c.name for c in classes]
    if len(set(names)) != len(names):
        raise bad("[[class]] names must be unique")

    power = doc.get("power", {})
    if not isinstance(power, dict) or set(power) - {"nets", "replace_defaults"}:
        raise bad("[power] takes 'nets' (list) and 'replace_defaults' (bool)")
    power_nets = power.get("nets", [])
    if not isinstance(power_nets, list) or not all(isinstance(p, str) for p in power_nets):
        raise bad("[power] nets must be a list of name patterns")
    _check_patterns(power_nets, "[power] nets", bad)
    replace = power.get("replace_defaults", False)
    if not isinstance(replace, bool):
        raise bad("[power] replace_defaults must be true or false")
    power_patterns = tuple(power_nets) if replace else DEFAULT_POWER_PATTERNS + tuple(power_nets)

    pairs = []
    raw_pairs = doc.get("diff_pair", [])
    if not isinstance(raw_pairs, list):
        raise bad("[[diff_pair]] must be an array of tables")
    for i, raw in enumerate(raw_pairs):
        if not isinstance(raw, dict) or set(raw) != {"positive", "negative"}:
            raise bad(f"[[diff_pair]] #{i + 1} needs exactly 'positive' and 'negative' patterns")
        if not all(isinstance(v, str) and v for v in raw.values()):
            raise bad(f"[[diff_pair]] #{i + 1} patterns must be strings")
        if raw["positive"].count("*") != raw["negative"].count("*"):
            raise bad(f"[[diff_pair]] #{i + 1} positive and negative need the same number of '*'")
        _check_patterns(raw.values(), f"[[diff_pair]] #{i + 1}", bad)
        pairs.append((raw["positive"], raw["negative"]))

    planes = doc.get("planes", [])
    if not isinstance(planes, list) or not all(isinstance(p, str) for p in planes):
        raise bad("'planes' must be a list of copper layer names")

    stackup = None
    if "stackup" in doc:
        stackup = dataclasses.replace(_parse_stackup(doc["stackup"], bad, source), path=source)

    class_pairs = _parse_class_pairs(doc.get("class_pair", []), set(names) | {DEFAULT_CLASS.name}, bad, source)

    return Rules(classes=tuple(classes), power_patterns=power_patterns, diff_pairs=tuple(pairs), scan=scan,
                 stackup=stackup, planes=tuple(planes), class_pairs=class_pairs,
                 waivers=parse_waivers(doc.get("waiver", []), source), source=source)


def parse_stackup_table(raw, source: str) -> Stackup:
    """A ``[stackup]`` table (``layers`` top to bottom), checked as in the rules file; errors name ``source``."""
    return _parse_stackup(raw, lambda msg: InputError(msg, source), source)


def _parse_class_pairs(raw, class_names: set[str], bad, source: str) -> tuple[ClassPairRule, ...]:
    if not isinstance(raw, list):
        raise bad("[[class_pair]] must be an array of tables")
    out = []
    seen = set()
    for i, item in enumerate(raw):
        where = f"[[class_pair]] #{i + 1}"
        kw = _typed(item, _PAIR_KEYS, where, bad, source)
        for key in ("aggressor_class", "victim_class"):
            if key not in kw:
                raise bad(f"{where} needs '{key}'")
            if kw[key] not in class_names:
                raise bad(f"{where} {key} '{kw[key]}' is not a class name ({', '.join(sorted(class_names))})")
        if ("max_parallel_mm" in kw) != ("within_spacing_mm" in kw):
            raise bad(f"{where} a geometric limit needs both max_parallel_mm and within_spacing_mm")
        rule = ClassPairRule(**kw)
        if not rule.has_budget and not rule.has_geometry:
            raise bad(f"{where} gives neither a noise budget nor a geometric limit")
        key = (rule.aggressor_class, rule.victim_class)
        if key in seen:
            raise bad(f"{where} repeats the pair {key[0]} -> {key[1]}")
        seen.add(key)
        out.append(rule)
    return tuple(out)


def _parse_stackup(raw, bad, source: str) -> Stackup:
    if not isinstance(raw, dict) or set(raw) != {"layers"} or not isinstance(raw["layers"], list):
        raise bad("[stackup] takes one key, 'layers', a list of tables top to bottom")
    layers = []
    copper = 0
    for i, item in enumerate(raw["layers"]):
        where = f"[stackup] layer #{i + 1}"
        kw = _typed(item, _STACK_KEYS, where, bad, source)
        kind = kw.get("kind")
        _check_choice(kind, ("copper", "dielectric", "soldermask"), f"{where} kind", bad)
        if kind is None:
            raise bad(f"{where} needs 'kind'")
        t = kw.get("thickness_mm")
        if t is None:
            raise bad(f"{where} needs thickness_mm")
        check_range(f"{kind} thickness", t, f"{where} thickness_mm", source)
        er = kw.get("epsilon_r")
        if kind != "copper" and er is None:
            raise bad(f"{where} needs epsilon_r")
        layers.append(StackupLayer(kind=kind, name=kw.get("name", f"{kind}{i + 1}"), thickness_mm=t,
                                   epsilon_r=er if kind != "copper" else None,
                                   copper_index=copper if kind == "copper" else None))
        copper += kind == "copper"
    if copper == 0:
        raise bad("[stackup] has no copper layers")
    return Stackup(layers=tuple(layers), source="rules")


def _typed(raw, schema: dict, where: str, bad, source: str) -> dict:
    if not isinstance(raw, dict):
        raise bad(f"{where} must be a table")
    out = {}
    for key, value in raw.items():
        if key not in schema:
            raise bad(f"{where}: unknown key '{key}'; allowed: {', '.join(schema)}")
        want = schema[key]
        if want is float and isinstance(value, int) and not isinstance(value, bool):
            value = float(value) if abs(value) < 2 ** 1023 else float("inf")  # refused below as not finite
        if not isinstance(value, want) or (want is not bool and isinstance(value, bool)):
            raise bad(f"{where}: '{key}' must be {want.__name__}, got {type(value).__name__}")
        if key in _RANGE_OF:
            check_range(_RANGE_OF[key], value, f"{where} {key}", source)
        out[key] = value
    return out


def _check_patterns(patterns, where: str, bad) -> None:
    for pattern in patterns:
        if (problem := pattern_problem(pattern)) is not None:
            raise bad(f"{where}: {problem}")


def _check_choice(value, choices, where, bad):
    if value is not None and value not in choices:
        raise bad(f"{where} must be one of {', '.join(choices)}, got '{value}'")
