"""Type of a two-hand control device (ISO 13851) from its characteristics and Category.

The type is the highest one whose functional characteristics AND minimum
Category the device meets (ISO 13851 Table 1 [std, from memory]):

    I     simultaneous use of both hands, cessation, no accidental actuation,
          no defeat                                              Cat 1 / PL c
    II    I + re-initiation only after both actuators released   Cat 3 / PL d
    IIIA  II + synchronous actuation (both within 0.5 s)         Cat 1 / PL c
    IIIB  II + synchronous actuation                             Cat 3 / PL d
    IIIC  II + synchronous actuation                             Cat 4 / PL e

How the Category is read (the register's conservative reading, explained in
each result):

- Categories 3 and 4 meet a Category 1 minimum, and 4 meets a Category 3
  minimum: they tolerate the single fault that Category 1 only makes unlikely.
- Category B meets no type's minimum: no type.
- Category 2 is not counted as meeting any of the Categories the types name
  (1, 3, 4): it does not require Category 1's well-tried components, and its
  test must run at least 100 times as often as the demand, which a device
  demanded at every cycle can hardly achieve. No type; a design that also
  meets Category 1, 3 or 4 is to be entered as that Category.
- Where the Category is below the minimum of the type the characteristics
  reach, the device falls to the highest lower type whose minimum it meets
  (a Category 1 device with re-initiation but no synchronous actuation is
  Type I; with synchronous actuation it is IIIA).

Prevention of defeat is required by every type: without shrouding, the
actuators must be at least 260 mm apart (one hand) and 550 mm (hand and elbow
of the same arm). Where neither a spacing nor shrouding is given, defeat
prevention is not established and no type is claimed. A station with one
actuator is not a two-hand control for its operator: no type.
"""

from __future__ import annotations

from dataclasses import dataclass

from . import cautions
from .derivation import (
    Derivation,
    DerivationBuilder,
    InputError,
    Result,
    require_choice,
    require_finite,
)
from .standards import iso13851, pick

CATEGORIES = ("B", "1", "2", "3", "4")

# Which of the minimum Categories named by ISO 13851 (1, 3, 4) each Category meets.
_MEETS: dict[str, frozenset[str]] = {
    "B": frozenset(),
    "1": frozenset({"1"}),
    "2": frozenset(),
    "3": frozenset({"1", "3"}),
    "4": frozenset({"1", "3", "4"}),
}

# Types a level of characteristics can reach, best first.
_CANDIDATES = {
    "III": ("IIIC", "IIIB", "IIIA"),
    "II": ("II", "I"),
    "I": ("I",),
}

ALWAYS_ONLY_ITS_OPERATOR = (
    "A two-hand control protects only the person using it: anyone else near the hazard "
    "needs another safeguard [practice]."
)


@dataclass(frozen=True)
class TwoHandResult(Result):
    type: str | None
    type_pl: str | None
    category: str
    characteristics_level: str | None  # "I", "II", "III" from the characteristics alone
    synchronous: bool
    problems: tuple[str, ...]
    derivation: Derivation


def _flag(name: str, value: object) -> bool:
    if not isinstance(value, bool):
        raise InputError(name, f"must be True or False, got {value!r}")
    return value


def _count(name: str, value: object, what: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(name, f"must be a whole number of {what} (1 or more), got {value!r}")
    if value < 1:
        raise InputError(name, f"must be at least 1 ({what}), got {value}")
    return value


def _category(value: object) -> str:
    if isinstance(value, int) and not isinstance(value, bool):
        value = str(value)
    if isinstance(value, str):
        value = value.strip().upper()
    return str(require_choice("category", value, CATEGORIES))


def evaluate_two_hand(
    simultaneous: bool,
    cessation: bool,
    reinitiation: bool,
    synchronous_window_s: float | None = None,
    *,
    category: str | int,
    spacing_mm: float | None = None,
    shrouded: bool = False,
    operators: int = 1,
    stations: int = 1,
    actuators_per_station: int = 2,
    anti_repeat: bool | None = None,
    is_press: bool = False,
    edition: str | None = None,
) -> TwoHandResult:
    """The ISO 13851 type a two-hand control device reaches, with the problems found.

    ``simultaneous``: the output needs both actuators actuated together (use of
    both hands). ``cessation``: the output stops when either is released.
    ``reinitiation``: a new output only after both have been released.
    ``synchronous_window_s``: the device's window for actuating both (None: no
    synchronous-actuation monitoring). ``spacing_mm``: clear distance between
    the actuators, for unshrouded actuators; ``shrouded``: shrouds or covers keep
    one hand, or hand and elbow of one arm, from reaching both.
    """
    sim = _flag("simultaneous", simultaneous)
    ces = _flag("cessation", cessation)
    rei = _flag("reinitiation", reinitiation)
    shr = _flag("shrouded", shrouded)
    press = _flag("is_press", is_press)
    if anti_repeat is not None:
        _flag("anti_repeat", anti_repeat)
    window = (
        None
        if synchronous_window_s is None
        else require_finite(
            "synchronous_window_s",
            synchronous_window_s,
            minimum=0.0,
            exclusive_min=True,
            unit="s",
        )
    )
    cat = _category(category)
    spacing = (
        None
        if spacing_mm is None
        else require_finite("spacing_mm", spacing_mm, minimum=0.0, exclusive_min=True, unit="mm")
    )
    if spacing is not None and shr:
        raise InputError(
            "spacing_mm",
            "give the spacing of unshrouded actuators, or shrouded=True, not both",
        )
    n_ops = _count("operators", operators, "operators")
    n_sta = _count("stations", stations, "operating stations")
    if isinstance(actuators_per_station, bool) or actuators_per_station not in (1, 2):
        raise InputError("actuators_per_station", f"must be 1 or 2, got {actuators_per_station!r}")
    table = pick(iso13851.EDITIONS, edition, iso13851.DEFAULT_EDITION)

    d = DerivationBuilder(
        "Two-hand control device type, ISO 13851",
        "type = highest type whose characteristics and minimum Category the device meets "
        "(ISO 13851 Table 1)",
        cautions.REQUIREMENT,
    )
    d.input("simultaneous use of both hands", sim)
    d.input("cessation when either actuator is released", ces)
    d.input("re-initiation only after both are released", rei)
    d.input("synchronous window", window, "s", "None: not monitored")
    d.input("Category (ISO 13849-1)", cat)
    d.input("spacing between actuators", spacing, "mm", "None: not given")
    d.input("shrouded", shr)
    d.input("operators", n_ops)
    d.input("operating stations", n_sta)
    d.input("actuators per station", actuators_per_station)
    d.input("anti-repeat", anti_repeat, note="None: not stated")
    d.input("machine is a press", press)

    # --- functional characteristics -------------------------------------------
    max_window = d.const(table["synchronous.max_window_s"])
    synchronous = window is not None and window <= max_window
    level: str | None = None
    if not sim:
        d.problem(
            "Simultaneous use of both hands is not provided: every type of ISO 13851 requires "
            "it, so the device reaches no type."
        )
    if not ces:
        d.problem(
            "The output does not cease when either actuator is released: every type of "
            "ISO 13851 requires cessation, so the device reaches no type."
        )
    if window is None:
        d.step("no synchronous actuation monitored → not synchronous")
    elif synchronous:
        d.step(f"synchronous window {window:g} s ≤ {max_window:g} s → synchronous actuation")
    else:
        d.step(f"synchronous window {window:g} s > {max_window:g} s → not synchronous")
        d.problem(
            f"The synchronous window of {window:g} s is longer than the {max_window:g} s "
            "ISO 13851 allows: that is not synchronous actuation, so no Type III; at most "
            "Type II, and only with re-initiation."
        )
    if sim and ces:
        if rei and synchronous:
            level = "III"
        elif rei:
            level = "II"
        else:
            level = "I"
            if synchronous:
                d.problem(
                    "Synchronous actuation is present but re-initiation is not: Type III "
                    "needs both, so the characteristics reach Type I only."
                )
        d.step(f"characteristics → Type {level} level")
    if sim and not synchronous:
        if rei:
            d.problem(
                "Without synchronous actuation one actuator can be tied or weighed down: "
                "re-initiation then blocks the next cycle, but the cycle started with the "
                "other hand alone still runs; only synchronous actuation (Type III) "
                "prevents it [practice]."
            )
        else:
            d.problem(
                "Without synchronous actuation or re-initiation (for example two push "
                "buttons wired in series) one operator can tie or weigh one actuator down "
                "and run the machine with the other hand, and one welded contact has the "
                "same effect: Type I at best [practice]."
            )

    # --- Category ---------------------------------------------------------------
    by_category: str | None = None
    if level is not None:
        for t in _CANDIDATES[level]:
            need = d.const(table[f"type.{t}.min_category"])
            d.const(table[f"type.{t}.requires"])
            if need in _MEETS[cat]:
                by_category = t
                break
        best = _CANDIDATES[level][0]
        if cat == "B":
            d.problem(
                "Category B meets no type's minimum: Types I and IIIA need Category 1 "
                "(well-tried components and principles), II and IIIB Category 3, IIIC "
                "Category 4. No type."
            )
        elif cat == "2":
            d.problem(
                "Category 2 is not counted as meeting any Category ISO 13851 names for the "
                "types (1, 3, 4): it does not require Category 1's well-tried components, "
                "and its test must run at least 100 times as often as the demand, which a "
                "two-hand control demanded at every cycle can hardly achieve [practice]. "
                "No type; a design that also meets Category 1, 3 or 4 should be entered so."
            )
        elif level == "II" and by_category == "I":
            d.problem(
                "Re-initiation is present, but Type II needs Category 3: with Category 1 "
                "the device reaches Type I only."
            )
        if by_category is not None:
            if level == "III":
                d.step(f"synchronous device, Category {cat} → Type {by_category}")
            elif by_category == best:
                d.step(f"Category {cat} meets Type {best}'s minimum → Type {best}")
        else:
            d.step(f"Category {cat} meets no type's minimum → no type")

    # --- stations and defeat ------------------------------------------------------
    device_ok = True
    if actuators_per_station == 1:
        device_ok = False
        d.problem(
            "One actuator per station leaves each operator a free hand: that is not a "
            "two-hand control for the operator, so no type [practice]."
        )
    one_hand = d.const(table["defeat.one_hand_mm"])
    hand_elbow = d.const(table["defeat.hand_elbow_mm"])
    if shr:
        d.step("actuators shrouded → defeat by one hand or hand and elbow taken as prevented")
    elif spacing is None:
        device_ok = False
        d.problem(
            "Prevention of defeat is not established: no spacing between the actuators is "
            "given and they are not shrouded. Every type requires it, so no type is claimed "
            f"until the spacing (at least {one_hand:g} mm against one hand and "
            f"{hand_elbow:g} mm against hand and elbow) or shrouding is recorded."
        )
    elif spacing < one_hand:
        device_ok = False
        d.problem(
            f"The actuators are {spacing:g} mm apart, less than {one_hand:g} mm, and not "
            "shrouded: one hand can operate both, so the device is defeated and reaches no "
            "type [practice]."
        )
    elif spacing < hand_elbow:
        device_ok = False
        d.problem(
            f"The actuators are {spacing:g} mm apart, less than {hand_elbow:g} mm, and not "
            "shrouded: the hand and elbow of one arm can operate both, so the device is "
            "defeated and reaches no type [practice]."
        )
    else:
        d.step(f"spacing {spacing:g} mm ≥ {hand_elbow:g} mm → defeat by one arm prevented")

    kind: str | None = by_category if device_ok else None
    if by_category is not None and not device_ok:
        d.step(
            f"characteristics and Category would give Type {by_category}; the problems above "
            "leave no type"
        )
    type_pl: str | None = None
    if kind is not None:
        type_pl = d.const(table[f"type.{kind}.pl"])
        d.step(f"Type {kind} corresponds to PL {type_pl} (ISO 13851 Table 1)")

    if n_sta < n_ops:
        d.problem(
            f"{n_ops} operators but only {n_sta} station(s): every operator needs a complete "
            "two-hand station of their own (1910.217(b)(7) requires a complete set of two "
            "hand controls per operator [reg, from memory]); an operator without one is not "
            "protected by it."
        )
    if n_ops > 1 or n_sta > 1:
        d.warn(
            "With several stations each one must itself be a complete two-hand control of "
            "the required type, and the machine may run only when all stations in use are "
            "actuated [practice]; on presses, stations are switched in and out in complete "
            "sets by a lockable selector (1910.217(b)(7)) [reg, from memory]."
        )
    if press:
        if anti_repeat is False:
            d.problem(
                "No anti-repeat on a press: anti-repeat (one stroke per actuation) is a "
                "separate press-control function that the two-hand control does not provide "
                "[practice]."
            )
        elif anti_repeat is None:
            d.warn(
                "Anti-repeat is not stated: a press needs it as a separate press-control "
                "function (one stroke per actuation) [practice]."
            )
        d.warn(
            "The two-hand control must also be at its safety distance from the hazard "
            "(calc us-distance, or ISO 13855)."
        )
    d.warn(
        "Prevention of accidental actuation and the other requirements of ISO 13851 not "
        "entered here must be verified on the device itself."
    )
    d.warn(ALWAYS_ONLY_ITS_OPERATOR)
    der = d.build()
    return TwoHandResult(
        type=kind,
        type_pl=type_pl,
        category=cat,
        characteristics_level=level,
        synchronous=synchronous,
        problems=der.problems,
        derivation=der,
    )
