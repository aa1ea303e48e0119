"""Waivers: accepted crosstalk risks, each tied to the geometry it was accepted for.

A waiver names a victim and an aggressor (wildcard patterns allowed), optionally a layer and an area,
says why, who accepted it and when, and optionally until when. It records the run as accepted
(coupled length, closest spacing, budget used) and a margin: a run that grows longer, comes closer or
uses more budget than recorded by more than the margin is no longer covered. Written as ``[[waiver]]``
tables in the rules file or in a separate waivers file (docs/rules.md, "Waivers").
"""
from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from pathlib import Path

from scanner.errors import InputError, printable
from scanner.toml_input import read_toml

#: margin used when a waiver states none: 10 % longer, closer or more budget than accepted
DEFAULT_MARGIN_PCT = 10.0

_REQUIRED = ("victim", "aggressor", "reason", "accepted_by", "accepted_on",
             "coupled_length_mm", "min_spacing_mm", "budget_used_pct")
_OPTIONAL = ("id", "layer", "area_mm", "expires_on", "margin_pct")
_TEXT = {"id", "victim", "aggressor", "layer", "reason", "accepted_by"}
_DATES = {"accepted_on", "expires_on"}


@dataclass(frozen=True)
class Waiver:
    """One accepted risk; ``area_mm`` is ``(x0, y0, x1, y1)`` in board millimetres."""

    id: str
    victim: str
    aggressor: str
    reason: str
    accepted_by: str
    accepted_on: dt.date
    coupled_length_mm: float
    min_spacing_mm: float
    budget_used_pct: float
    margin_pct: float = DEFAULT_MARGIN_PCT
    layer: str | None = None
    area_mm: tuple[float, float, float, float] | None = None
    expires_on: dt.date | None = None
    source: str = ""

    def expired(self, today: dt.date) -> bool:
        """Past its expiry date (a waiver holds through the day it names)."""
        return self.expires_on is not None and today > self.expires_on

    def to_dict(self) -> dict:
        return {"id": self.id, "victim": self.victim, "aggressor": self.aggressor, "layer": self.layer,
                "area_mm": None if self.area_mm is None else list(self.area_mm), "reason": self.reason,
                "accepted_by": self.accepted_by, "accepted_on": self.accepted_on.isoformat(),
                "expires_on": None if self.expires_on is None else self.expires_on.isoformat(),
                "coupled_length_mm": self.coupled_length_mm, "min_spacing_mm": self.min_spacing_mm,
                "budget_used_pct": self.budget_used_pct, "margin_pct": self.margin_pct, "source": self.source}


def load_waivers(path: str | Path, first: int = 1) -> tuple[Waiver, ...]:
    """The ``[[waiver]]`` tables of a waivers file (nothing else may be in it); ids default to W<first>, …"""
    return waivers_document(read_toml(path, "waivers file"), printable(str(path)), first)


def waivers_document(doc: dict, source: str, first: int = 1) -> tuple[Waiver, ...]:
    """The waivers of a parsed waivers file."""
    extra = set(doc) - {"waiver"}
    if extra:
        raise InputError(f"a waivers file holds only [[waiver]] tables; unknown key(s) {', '.join(sorted(extra))}",
                         source)
    return parse_waivers(doc.get("waiver", []), source, first)


def parse_waivers(raw, source: str, first: int = 1) -> tuple[Waiver, ...]:
    """Waivers from the parsed ``waiver`` array of tables; every key checked, errors name ``source``."""
    if not isinstance(raw, list):
        raise InputError("[[waiver]] must be an array of tables", source)
    out = [_waiver(item, f"[[waiver]] #{i + 1}", f"W{first + i}", source) for i, item in enumerate(raw)]
    check_unique_ids(out, source)
    return tuple(out)


def check_unique_ids(waivers, source: str) -> None:
    seen = set()
    for w in waivers:
        if w.id in seen:
            raise InputError(f"waiver id '{w.id}' is used twice", source)
        seen.add(w.id)


def _waiver(item, where: str, default_id: str, source: str) -> Waiver:
    def bad(msg: str) -> InputError:
        return InputError(f"{where}: {msg}", source)

    if not isinstance(item, dict):
        raise bad("must be a table")
    unknown = set(item) - set(_REQUIRED) - set(_OPTIONAL)
    if unknown:
        raise bad(f"unknown key(s) {', '.join(sorted(unknown))}; allowed: {', '.join(_REQUIRED + _OPTIONAL)}")
    missing = [k for k in _REQUIRED if k not in item]
    if missing:
        raise bad(f"needs {', '.join(missing)}")
    kw = {key: _value(key, value, bad) for key, value in item.items()}
    if kw["coupled_length_mm"] <= 0:
        raise bad("coupled_length_mm must be positive")
    if not 0 <= kw.get("margin_pct", DEFAULT_MARGIN_PCT) < 100:
        raise bad("margin_pct must be at least 0 and below 100")
    if kw.get("expires_on") is not None and kw["expires_on"] < kw["accepted_on"]:
        raise bad("expires_on is before accepted_on")
    kw.setdefault("id", default_id)
    return Waiver(source=source, **kw)


def _value(key: str, value, bad):
    if key in _TEXT:
        if not isinstance(value, str) or not value.strip():
            raise bad(f"'{key}' must be a non-empty string")
        return value.strip()
    if key in _DATES:
        return _date(key, value, bad)
    if key == "area_mm":
        return _area(value, bad)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < 0:
        raise bad(f"'{key}' must be a number, 0 or more")
    return float(value)


def _date(key: str, value, bad) -> dt.date:
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value.strip())
        except ValueError:
            pass
    raise bad(f"'{key}' must be a date (2026-03-01)")


def _area(value, bad) -> tuple[float, float, float, float]:
    ok = (isinstance(value, list) and len(value) == 4
          and all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in value))
    if not ok:
        raise bad("'area_mm' must be four numbers [x0, y0, x1, y1]")
    x0, y0, x1, y1 = map(float, value)
    if not (x0 < x1 and y0 < y1):
        raise bad("'area_mm' must be [x0, y0, x1, y1] with x0 < x1 and y0 < y1")
    return x0, y0, x1, y1
