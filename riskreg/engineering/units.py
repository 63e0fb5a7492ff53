"""Lengths and times with their units.

Storage is SI (mm, s). A length or a time typed without a unit is refused,
because a distance typed in the wrong unit is a safety error.
"""

from __future__ import annotations

import math
import re

from .derivation import InputError

MM_PER_IN = 25.4

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_LENGTH_UNITS = {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": MM_PER_IN, '"': MM_PER_IN}
_TIME_UNITS = {"ms": 0.001, "s": 1.0}

LENGTH_FORMS = "a number with mm, cm, m or in, e.g. 14mm, 0.55in"
TIME_FORMS = "a number with ms or s, e.g. 180ms, 0.18s"


def mm_to_in(mm: float) -> float:
    return mm / MM_PER_IN


def in_to_mm(inches: float) -> float:
    return inches * MM_PER_IN


def _parse(name: str, text: str, units: dict[str, float], forms: str) -> float:
    if not isinstance(text, str):
        raise InputError(name, f"expected {forms}")
    m = re.fullmatch(rf"\s*({_NUMBER})\s*([a-zA-Z\"]*)\s*", text)
    if not m:
        raise InputError(name, f"{text!r} is not understood; use {forms}")
    number, unit = m.group(1), m.group(2).lower()
    if not unit:
        raise InputError(name, f"{text!r} has no unit; use {forms}")
    if unit not in units:
        raise InputError(name, f"unit {unit!r} is not accepted; use {forms}")
    value = float(number) * units[unit]
    if math.isinf(value) or math.isnan(value):
        raise InputError(name, f"{text!r} is not a finite number; use {forms}")
    return value


def parse_length_mm(name: str, text: str) -> float:
    """'14mm' → 14.0, '0.55in' → 13.97 (millimetres)."""
    return _parse(name, text, _LENGTH_UNITS, LENGTH_FORMS)


def parse_time_s(name: str, text: str) -> float:
    """'180ms' → 0.18, '0.18s' → 0.18 (seconds)."""
    return _parse(name, text, _TIME_UNITS, TIME_FORMS)
