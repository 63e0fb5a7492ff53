"""Guard openings by their distance from the point of operation.

US: 29 CFR 1910.217 Table O-10 [reg, from memory]. The distance of the opening
from the point-of-operation hazard picks a row; the row gives the largest
opening allowed. Rules of this module:

- Band edges: the printed bands share their end points (1/2–1 1/2, 1 1/2–2 1/2,
  …). A distance exactly on an edge belongs to the nearer row, the one with the
  smaller allowed opening (the conservative reading); the derivation says so.
- Outside the table (closer than 1/2 in or farther than 31 1/2 in) nothing is
  extrapolated: ``ok`` is None and the result carries a problem.
- Comparisons allow 1e-9 in for binary rounding only (e.g. 38.1 mm converted to
  inches), never more.

ISO 13857 (reach distances through openings): no values are included here.
They are not recalled with enough confidence to be put in data; a site that
needs them enters them from the standard with their own verification status.
"""

from __future__ import annotations

from dataclasses import dataclass

from . import cautions
from .derivation import Derivation, DerivationBuilder, Result, require_finite
from .standards import cfr1910_217, pick
from .units import in_to_mm, mm_to_in

_TOL_IN = 1e-9


@dataclass(frozen=True)
class OpeningResult(Result):
    distance_in: float
    opening_in: float
    max_opening_in: float | None
    max_opening_mm: float | None
    ok: bool | None  # None: outside Table O-10, not judged
    row: int | None  # 1-based row of Table O-10 used
    band: str | None  # that row's printed band of distances
    derivation: Derivation


def _g(value: float) -> str:
    return f"{value:.6g}"


def _evaluate(
    distance_in: float,
    opening_in: float,
    edition: str | None,
    entered_mm: tuple[float, float] | None,
) -> OpeningResult:
    table = pick(cfr1910_217.EDITIONS, edition, cfr1910_217.DEFAULT_EDITION)
    d = DerivationBuilder(
        "Guard opening, 29 CFR 1910.217 Table O-10",
        "maximum opening = Table O-10 (distance from the point of operation); "
        "pass when opening ≤ maximum",
        cautions.REQUIREMENT,
    )
    if entered_mm is None:
        d.input("distance of the opening from the point of operation", distance_in, "in")
        d.input("opening width", opening_in, "in", "the smallest dimension of the opening")
    else:
        dist_mm, open_mm = entered_mm
        d.input(
            "distance of the opening from the point of operation",
            dist_mm,
            "mm",
            f"{_g(distance_in)} in",
        )
        d.input(
            "opening width",
            open_mm,
            "mm",
            f"{_g(opening_in)} in; the smallest dimension of the opening",
        )
        d.step(
            f"{_g(dist_mm)} mm / 25.4 = {_g(distance_in)} in; "
            f"{_g(open_mm)} mm / 25.4 = {_g(opening_in)} in"
        )
    d.warn(
        "Table O-10 belongs to 29 CFR 1910.217, mechanical power presses; press brakes, "
        "hydraulic and pneumatic presses are excluded by 1910.217(a)(5) [reg, from memory]."
    )
    d.warn(
        "The table limits an opening by its distance only; the guard must also keep hands "
        "from reaching over, under or around it [practice]."
    )
    n = cfr1910_217.TABLE_O10_ROWS
    rows = [d.const(table[f"table_o10.row{i}"]) for i in range(1, n + 1)]
    first_lo = rows[0][0]
    last_hi = rows[-1][1]
    if distance_in < first_lo - _TOL_IN or distance_in > last_hi + _TOL_IN:
        side = (
            f"closer than {first_lo:g} in to"
            if distance_in < first_lo
            else f"farther than {last_hi:g} in from"
        )
        d.problem(
            f"The opening is {side} the point of operation: outside Table O-10 "
            f"({first_lo:g} to {last_hi:g} in). The register does not extrapolate the table; "
            "judge this opening by other means."
        )
        d.step(f"{_g(distance_in)} in is outside Table O-10 → not judged")
        return OpeningResult(distance_in, opening_in, None, None, None, None, None, d.build())
    row = next(i for i, r in enumerate(rows, start=1) if distance_in <= r[1] + _TOL_IN)
    _lo, hi, max_in = rows[row - 1]
    band = cfr1910_217.TABLE_O10_LABELS[row]
    if abs(distance_in - hi) <= _TOL_IN and row < n:
        d.step(
            f"{_g(distance_in)} in is on the edge between rows {row} and {row + 1}; "
            f"row {row} is used, the one with the smaller allowed opening (conservative)"
        )
    d.step(
        f"{_g(distance_in)} in → row {row} ({band}) → opening at most "
        f"{cfr1910_217.TABLE_O10_MAX_LABELS[row]} = {_g(max_in)} in ({_g(in_to_mm(max_in))} mm)"
    )
    ok = opening_in <= max_in + _TOL_IN
    if ok:
        d.step(f"opening {_g(opening_in)} in ≤ {_g(max_in)} in → pass")
    else:
        d.step(f"opening {_g(opening_in)} in > {_g(max_in)} in → fail")
        d.problem(
            f"The opening of {_g(opening_in)} in is wider than the {_g(max_in)} in Table O-10 "
            f"allows at {_g(distance_in)} in from the point of operation: narrow the opening "
            "or move the guard farther away."
        )
    return OpeningResult(
        distance_in, opening_in, max_in, in_to_mm(max_in), ok, row, band, d.build()
    )


def guard_opening_us(
    distance_in: float, opening_in: float, edition: str | None = None
) -> OpeningResult:
    """Check a guard opening against Table O-10; inputs in inches."""
    dist = require_finite("distance_in", distance_in, minimum=0.0, unit="in")
    opening = require_finite("opening_in", opening_in, minimum=0.0, exclusive_min=True, unit="in")
    return _evaluate(dist, opening, edition, None)


def guard_opening_us_mm(
    distance_mm: float, opening_mm: float, edition: str | None = None
) -> OpeningResult:
    """Check a guard opening against Table O-10; inputs in millimetres."""
    dist = require_finite("distance_mm", distance_mm, minimum=0.0, unit="mm")
    opening = require_finite("opening_mm", opening_mm, minimum=0.0, exclusive_min=True, unit="mm")
    return _evaluate(mm_to_in(dist), mm_to_in(opening), edition, (dist, opening))
