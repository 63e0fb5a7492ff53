"""29 CFR 1910.217, mechanical power presses (US federal regulation).

Values recalled from memory [reg, from memory]: the regulation is public, so a
site can check every row against the current text of the eCFR and mark it
checked. The paragraphs used here have not been amended in decades as far as
recalled; the table is therefore kept as one edition, "current".

Rows:

- the hand speed constant 63 in/s of the three safety-distance formulas:
  two-hand control (c)(3)(vii), two-hand trip (c)(3)(viii) and presence-sensing
  device (c)(3)(iii); the distance must be *greater than* the computed value;
- the two-hand trip time Tm = (1/2 + 1/N) × Tr of (c)(3)(viii);
- the scope exclusions of (a)(5);
- Table O-10 (guard openings, referenced from (c)(2)(vi)): distance of the
  opening from the point-of-operation hazard → maximum width of the opening, in
  inches. Each row is ``(from_in, to_in, max_opening_in)``.
"""

from __future__ import annotations

from fractions import Fraction

from ..derivation import Constant, ConstantTable

SOURCE = "29 CFR 1910.217"
DEFAULT_EDITION = "current"


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


def _f(text: str) -> float:
    """'1 1/2' → 1.5: the table's mixed fractions, exactly as printed."""
    whole, _, frac = text.rpartition(" ") if " " in text else ("0", "", text)
    return float(int(whole) + Fraction(frac))


# Table O-10 as printed (inches): distance from the point of operation → max opening.
_O10 = (
    ("1/2", "1 1/2", "1/4"),
    ("1 1/2", "2 1/2", "3/8"),
    ("2 1/2", "3 1/2", "1/2"),
    ("3 1/2", "5 1/2", "5/8"),
    ("5 1/2", "6 1/2", "3/4"),
    ("6 1/2", "7 1/2", "7/8"),
    ("7 1/2", "12 1/2", "1 1/4"),
    ("12 1/2", "15 1/2", "1 1/2"),
    ("15 1/2", "17 1/2", "1 7/8"),
    ("17 1/2", "31 1/2", "2 1/8"),
)

TABLE_O10_ROWS = len(_O10)

_ROWS: list[Constant] = [
    _c(
        "two_hand_control.hand_speed",
        63.0,
        "in/s",
        "(c)(3)(vii)",
        "Ds = 63 in/s × Ts, Ts the stopping time measured at about 90° of crankshaft "
        "rotation; safety-distance sub-paragraph recalled as (c)(3)(vii)(c)",
    ),
    _c(
        "two_hand_trip.hand_speed",
        63.0,
        "in/s",
        "(c)(3)(viii)",
        "Dm = 63 in/s × Tm; sub-paragraph recalled as (c)(3)(viii)(c)",
    ),
    _c(
        "two_hand_trip.fixed_revolutions",
        0.5,
        "revolution",
        "(c)(3)(viii)",
        "Tm = (1/2 + 1/N) × Tr, N clutch engaging points per revolution, "
        "Tr the time of one crankshaft revolution",
    ),
    _c(
        "presence_sensing.hand_speed",
        63.0,
        "in/s",
        "(c)(3)(iii)",
        "Ds = 63 in/s × Ts; sub-paragraph recalled as (c)(3)(iii)(e)",
    ),
    _c(
        "scope.excluded",
        "press brakes, hydraulic and pneumatic power presses (and other machines listed there)",
        "",
        "(a)(5)",
        "machines excluded from 1910.217; they fall under 1910.212 and the ANSI B11 standards",
    ),
]
_ROWS += [
    _c(
        f"table_o10.row{i}",
        (_f(lo), _f(hi), _f(mx)),
        "in",
        "(c)(2)(vi), Table O-10",
        f"{lo} to {hi} in from the point of operation → opening at most {mx} in",
    )
    for i, (lo, hi, mx) in enumerate(_O10, start=1)
]

# The table's printed bands, for showing the row used.
TABLE_O10_LABELS = {i: f"{lo} to {hi} in" for i, (lo, hi, _mx) in enumerate(_O10, start=1)}
TABLE_O10_MAX_LABELS = {i: f"{mx} in" for i, (_lo, _hi, mx) in enumerate(_O10, start=1)}

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, tuple(_ROWS)),
}
