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

# Requirements used by riskreg.engineering.press (added later; rows above unchanged).
# Each value is the requirement in plain words, recalled from memory
# [reg, from memory]; check each against the current eCFR text.
_ROWS += [
    _c(
        "req.point_of_operation",
        "The employer must provide and ensure the use of point-of-operation guards or "
        "properly applied and adjusted point-of-operation devices on every operation "
        "performed on the press.",
        "",
        "(c)(1)(i)",
    ),
    _c(
        "req.single_stroke_full_revolution",
        "A press with a full-revolution clutch must have a single-stroke mechanism.",
        "",
        "(b)(3)(i)",
        "sub-paragraph as recalled; to be checked",
    ),
    _c(
        "req.full_revolution_no_presence_sensing",
        "A presence-sensing device may not be used as the point-of-operation safeguard on a "
        "press with a full-revolution clutch, which cannot stop the slide once the stroke "
        "has started.",
        "",
        "(c)(3)(iii)",
        "recalled as (c)(3)(iii)(a)",
    ),
    _c(
        "req.presence_sensing_distance",
        "A presence-sensing device must be set at least the safety distance "
        "Ds = 63 in/s × Ts from the point of operation.",
        "",
        "(c)(3)(iii)",
        "recalled as (c)(3)(iii)(e)",
    ),
    _c(
        "req.two_hand_trip_controls",
        "The hand controls of a two-hand trip must be protected against unintended "
        "operation and require the concurrent use of both hands to trip the press.",
        "",
        "(b)(6)(i)",
    ),
    _c(
        "req.two_hand_trip_anti_repeat",
        "A two-hand trip on a full-revolution clutch press must have an anti-repeat feature.",
        "",
        "(b)(6)(ii)",
    ),
    _c(
        "req.two_hand_trip_distance",
        "The hand controls of a two-hand trip must be at least the safety distance "
        "Dm = 63 in/s × Tm from the point of operation, Tm = (1/2 + 1/N) × Tr.",
        "",
        "(c)(3)(viii)",
    ),
    _c(
        "req.two_hand_control_single_stroke",
        "Two-hand controls for single stroke on a part-revolution clutch press must require "
        "concurrent pressure from both hands during the die-closing portion of the stroke "
        "and have an anti-repeat feature.",
        "",
        "(b)(7)(v)",
        "sub-paragraph as recalled; to be checked",
    ),
    _c(
        "req.two_hand_control_distance",
        "Two-hand controls must be at least the safety distance Ds = 63 in/s × Ts from the "
        "point of operation, Ts the stopping time measured at about 90° of crankshaft "
        "rotation.",
        "",
        "(c)(3)(vii)",
    ),
    _c(
        "req.additional_safeguarding",
        "Where a two-hand control or a presence-sensing device safeguards a part-revolution "
        "clutch press whose operator feeds or removes parts by placing hands in the point of "
        "operation, the press must have a control system meeting (b)(13) and a brake monitor "
        "meeting (b)(14).",
        "",
        "(c)(5)",
        "recalled as (c)(5)(i)",
    ),
    _c(
        "req.control_reliability",
        "Control reliability: a failure within the control system must not prevent the "
        "normal stopping action and must prevent the next stroke until the failure is "
        "corrected.",
        "",
        "(b)(13)",
    ),
    _c(
        "req.brake_monitoring",
        "Brake monitoring: the brake monitor must detect deterioration of the braking "
        "performance and prevent the next stroke when the stopping time or distance grows "
        "beyond its setting.",
        "",
        "(b)(14)",
    ),
    _c(
        "req.periodic_inspection",
        "A programme of periodic and regular inspections of the press, its parts, auxiliary "
        "equipment and safeguards must be followed, with a certification record of the "
        "date, the inspector's signature and the press serial number.",
        "",
        "(e)(1)(i)",
    ),
    _c(
        "req.weekly_inspection",
        "The clutch/brake mechanism, the anti-repeat feature and the single-stroke mechanism "
        "must be inspected and tested at least weekly, any maintenance done before the press "
        "runs, and a certification record kept (date, signature, press serial number).",
        "",
        "(e)(1)(ii)",
    ),
    _c(
        "req.weekly_exemption",
        "Presses that meet (b)(13) and (b)(14) are exempt from the weekly inspection and "
        "test; the periodic inspections still apply.",
        "",
        "(e)(1)(ii)",
    ),
    _c(
        "req.psdi",
        "Presence-sensing device initiation (PSDI) must meet paragraph (h): part-revolution "
        "clutch presses only, control reliability and brake monitoring, and certification "
        "and validation of the safety system by a third-party validation organization, "
        "renewed yearly.",
        "",
        "(h)",
        "sub-paragraphs of (h) not recalled one by one",
    ),
]

# The table's printed bands, for showing the row used.
TABLE_O10_LABELS = {i: f"{lo} to {hi} in" for i, (lo, hi, _mx) in enumerate(_O10, start=1)}
TABLE_O10_MAX_LABELS = {i: f"{mx} in" for i, (_lo, _hi, mx) in enumerate(_O10, start=1)}

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, tuple(_ROWS)),
}
