"""Comparing candidate safeguards for one hazard (ISO 12100 three-step method).

The candidates are ranked, best first, by these rules [std, from memory of
ISO 12100:2010 6.1-6.4, unless marked [practice]]:

1. Information for use (warnings, training, PPE, procedures: step 3) ranks
   behind every safeguard: it is not a substitute for safeguarding (6.4).
2. An option that fails a hard criterion drops behind the options that pass
   it: it cannot reach PLr, it does not fit the space (required distance more
   than the space available), or other people are exposed and it protects
   only the person using it (two-hand control, hold-to-run, enabling device
   [practice]).
3. Then by step: inherently safe design (step 1) before safeguarding (step 2).
4. Within safeguarding, by the selection criteria of 6.3.2 as recalled:

   - access to the hazard zone not needed in normal operation ("none"):
     fixed guards, then interlocking guards, then protective devices (6.3.2.2);
   - access now and then ("occasional": setting, clearing, cleaning, not in
     every cycle): interlocking guards, then fixed guards, which are liable to
     be left off when they must be removed often [practice], then protective
     devices;
   - access in normal operation ("frequent"): interlocking guards and
     protective devices (light curtain, multi-beam device, pressure mat,
     two-hand control) before fixed guards (6.3.2.3);
   - where parts or broken tools can be thrown out ("ejection"), guards come
     before protective devices: only a guard stops an ejected part, a device
     that detects a person does not [std, from memory; practice];
   - hold-to-run and enabling devices are the measures of the special modes
     (setting, teaching, maintenance, 6.3.2.4) and come after the others;
   - an emergency stop is a complementary protective measure (6.3.5.2), not a
     substitute for safeguarding, and comes last of step 2;
   - with hand feeding, devices that detect a body but not a hand (multi-beam
     device, pressure mat) come behind every other safeguard [practice].

5. Ties: lower cost first, unknown cost last, then the kind's name; options
   of the same kind that tie on everything keep the order they were given in.

``recommended`` is the first option with no problems. The ranking is advice:
the engineer chooses the safeguard and records the reasons.
"""

from __future__ import annotations

from collections.abc import Sequence
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
from .risk import PL_ORDER, pl_rank
from .standards import iso12100, pick

STEP1 = ("inherent_design",)
STEP2 = (
    "fixed_guard",
    "interlocking_guard",
    "interlocking_guard_locking",
    "light_curtain",
    "multi_beam",
    "pressure_mat",
    "two_hand_control",
    "hold_to_run",
    "enabling_device",
    "emergency_stop",
)
STEP3 = ("warning", "training", "ppe", "procedure")
KINDS = STEP1 + STEP2 + STEP3

ACCESS = {
    "none": "access to the hazard zone not needed in normal operation",
    "occasional": "access now and then (setting, clearing, cleaning), not in every cycle",
    "frequent": "access in normal operation, e.g. in every cycle",
}

GUARDS = ("fixed_guard", "interlocking_guard", "interlocking_guard_locking")
SENSING = ("light_curtain", "multi_beam", "pressure_mat")
BODY_DETECTION = ("multi_beam", "pressure_mat")
OPERATOR_ONLY = ("two_hand_control", "hold_to_run", "enabling_device")
SPECIAL_MODES = ("hold_to_run", "enabling_device")
# Options that act through a safety function of the control system, so PLr applies.
NEEDS_PL = (
    "interlocking_guard",
    "interlocking_guard_locking",
    *SENSING,
    *OPERATOR_ONLY,
)
# Options whose effect depends on a safety distance (ISO 13855).
NEEDS_DISTANCE = ("interlocking_guard", *SENSING, "two_hand_control")

_GROUP = {
    "fixed_guard": "fixed",
    "interlocking_guard": "movable",
    "interlocking_guard_locking": "movable",
    "light_curtain": "device",
    "multi_beam": "device",
    "pressure_mat": "device",
    "two_hand_control": "two_hand",
    "hold_to_run": "special",
    "enabling_device": "special",
    "emergency_stop": "complementary",
}
# Order of the safeguarding groups by access (before the ejection rule).
_ORDER = {
    "none": ("fixed", "movable", "device", "two_hand", "special", "complementary"),
    "occasional": ("movable", "fixed", "device", "two_hand", "special", "complementary"),
    "frequent": ("movable", "device", "two_hand", "fixed", "special", "complementary"),
}
_GROUP_WORDS = {
    "fixed": "fixed guards",
    "movable": "interlocking guards",
    "device": "protective devices that detect a person",
    "two_hand": "two-hand control devices",
    "special": "hold-to-run and enabling devices",
    "complementary": "complementary protective measures (emergency stop)",
}

NOT_SUBSTITUTE = "not a substitute for safeguarding"
NO_CANDIDATE = "no candidate meets every criterion"
ADVICE = (
    "The ranking is advice: the engineer chooses the safeguard, records why, and "
    "re-estimates the residual risk once it is chosen (ISO 12100:2010 6.1) [std, from memory]."
)


@dataclass(frozen=True)
class Candidate:
    """One safeguard being considered for a hazard.

    ``reachable_pl``: the PL (a-e) the device or design can reach, from its own
    assessment. ``required_distance_mm``: the safety distance it needs (ISO 13855
    or similar); ``space_available_mm``: the room there is for it. ``cost`` in
    any one currency, the same for all candidates. ``effect_on_work``: how it
    changes the work (shown with the reasons; not used in the ranking).
    """

    kind: str
    reachable_pl: str | None = None
    required_distance_mm: float | None = None
    space_available_mm: float | None = None
    cost: float | None = None
    effect_on_work: str = ""


@dataclass(frozen=True)
class OptionAssessment:
    kind: str
    step: int  # 1 inherent design, 2 safeguarding, 3 information for use
    rank: int  # 1 = first
    meets_plr: bool | None  # None: not checked or PLr does not apply
    fits_space: bool | None  # None: not checked
    protects_others: bool
    suits_access: bool
    handles_ejection: bool
    reasons: tuple[str, ...]
    problems: tuple[str, ...]


@dataclass(frozen=True)
class ComparisonResult(Result):
    options: tuple[OptionAssessment, ...]  # best first
    recommended: str | None
    derivation: Derivation


def _step(kind: str) -> int:
    if kind in STEP1:
        return 1
    if kind in STEP2:
        return 2
    return 3


NAMES = {
    "inherent_design": "inherently safe design measure",
    "fixed_guard": "fixed guard",
    "interlocking_guard": "interlocking guard",
    "interlocking_guard_locking": "interlocking guard with guard locking",
    "light_curtain": "light curtain",
    "multi_beam": "multi-beam device",
    "pressure_mat": "pressure-sensitive mat",
    "two_hand_control": "two-hand control device",
    "hold_to_run": "hold-to-run control",
    "enabling_device": "enabling device",
    "emergency_stop": "emergency stop",
    "warning": "warning",
    "training": "training",
    "ppe": "personal protective equipment",
    "procedure": "safe working procedure",
}


def _words(kind: str) -> str:
    return NAMES[kind]


def _n(x: float) -> str:
    return f"{x:.6g}"


def _flag(name: str, value: object) -> bool:
    if not isinstance(value, bool):
        raise InputError(name, f"must be True or False, got {value!r}")
    return value


def _optional_number(name: str, value: float | None, unit: str) -> float | None:
    if value is None:
        return None
    return require_finite(name, value, minimum=0.0, unit=unit)


def _check_candidate(i: int, c: object) -> Candidate:
    where = f"candidates[{i}]"
    if not isinstance(c, Candidate):
        raise InputError(where, f"must be a Candidate, got {type(c).__name__}")
    require_choice(f"{where}.kind", c.kind, KINDS)
    if c.reachable_pl is not None:
        require_choice(f"{where}.reachable_pl", c.reachable_pl, PL_ORDER)
    _optional_number(f"{where}.required_distance_mm", c.required_distance_mm, "mm")
    _optional_number(f"{where}.space_available_mm", c.space_available_mm, "mm")
    _optional_number(f"{where}.cost", c.cost, "")
    if not isinstance(c.effect_on_work, str):
        raise InputError(f"{where}.effect_on_work", "must be text (may be empty)")
    return c


@dataclass
class _Draft:
    """An option while it is assessed, before it has its rank."""

    c: Candidate
    step: int
    meets_plr: bool | None
    fits_space: bool | None
    protects_others: bool
    suits_access: bool
    handles_ejection: bool
    fails: list[str]
    reasons: list[str]
    problems: list[str]
    order: int  # position of its group in the safeguarding order


def _assess(
    c: Candidate,
    *,
    plr: str | None,
    access: str,
    ejection: bool,
    others: bool,
    hand_feeding: bool,
    order: tuple[str, ...],
) -> _Draft:
    kind = c.kind
    step = _step(kind)
    reasons: list[str] = []
    problems: list[str] = []
    fails: list[str] = []
    name = _words(kind)[0].upper() + _words(kind)[1:]

    # --- the step of the three-step method --------------------------------------
    if step == 1:
        reasons.append(
            "Inherently safe design is step 1 of the three-step method and comes before "
            "safeguarding (ISO 12100:2010 6.1) [std, from memory]."
        )
    elif step == 2:
        reasons.append(
            "Safeguarding is step 2: after inherently safe design, before information for "
            "use (ISO 12100:2010 6.1) [std, from memory]."
        )
    else:
        reasons.append(
            "Information for use is step 3 and ranks behind every safeguard: it deals with "
            "the risk left after design and safeguarding (ISO 12100:2010 6.4) "
            "[std, from memory]."
        )
        problems.append(
            f"{name} is information for use, {NOT_SUBSTITUTE}: use it only for the risk "
            "left once design and safeguarding have done what they can "
            "(ISO 12100:2010 6.4) [std, from memory]."
        )

    # --- PLr -----------------------------------------------------------------------
    meets_plr: bool | None = None
    if kind in NEEDS_PL:
        if plr is None:
            reasons.append("No PLr given: the PL it can reach is not checked.")
        elif c.reachable_pl is None:
            problems.append(
                f"The PL this {_words(kind)} can reach is not given: it cannot be checked "
                f"against PLr {plr}."
            )
        else:
            meets_plr = pl_rank(c.reachable_pl) >= pl_rank(plr)
            if meets_plr:
                reasons.append(f"It can reach PL {c.reachable_pl}, at least PLr {plr}.")
            else:
                fails.append(f"it reaches only PL {c.reachable_pl}, below PLr {plr}")
                problems.append(
                    f"It can reach only PL {c.reachable_pl}, below PLr {plr} "
                    "(ISO 13849-1) [std, from memory]."
                )
    else:
        what = {
            1: "a design measure, not a safety function of the control system",
            2: "a guard that does not act through the control system",
            3: "information for use, not a safety function",
        }[step]
        if kind == "emergency_stop":
            what = "a complementary measure whose PL comes from its own risk assessment"
        if plr is not None:
            reasons.append(f"PLr does not apply: it is {what} [practice].")
        if c.reachable_pl is not None:
            reasons.append(f"The PL {c.reachable_pl} entered for it is not used.")

    # --- space ---------------------------------------------------------------------
    fits_space: bool | None = None
    need, room = c.required_distance_mm, c.space_available_mm
    if need is not None and room is not None:
        fits_space = need <= room
        if fits_space:
            reasons.append(
                f"Its required distance of {_n(need)} mm fits the {_n(room)} mm available."
            )
        else:
            fails.append(
                f"its required distance of {_n(need)} mm is more than the {_n(room)} mm available"
            )
            problems.append(
                f"It needs {_n(need)} mm but only {_n(room)} mm is available: it does not fit "
                f"(short by {_n(need - room)} mm)."
            )
    elif kind in NEEDS_DISTANCE:
        problems.append(
            "Its fit is not checked: give the safety distance it needs (ISO 13855) and the "
            "space available."
        )
    elif need is not None or room is not None:
        problems.append(
            "Its fit is not checked: give both the distance it needs and the space available."
        )

    # --- who it protects -------------------------------------------------------------
    protects_others = kind not in OPERATOR_ONLY
    if not protects_others:
        if others:
            fails.append("it protects only the person using it, and other people are exposed")
            problems.append(
                f"{name} protects only the person using it; the other people exposed need "
                "another safeguard [practice]."
            )
        else:
            reasons.append(
                "It protects only the person using it; acceptable as no one else is exposed "
                "[practice]."
            )

    # --- access ------------------------------------------------------------------------
    suits_access = True
    if step == 2:
        group = _GROUP[kind]
        if group == "fixed" and access == "frequent":
            suits_access = False
            problems.append(
                "A fixed guard does not suit access in normal operation: it would have to be "
                "removed all the time, and is then left off; interlocking guards and "
                "protective devices come first (ISO 12100:2010 6.3.2.3) [std, from memory]."
            )
        elif group == "two_hand" and access == "none":
            suits_access = False
            problems.append(
                "A two-hand control ties the operator to every cycle; where no access is "
                "needed in normal operation a guard that keeps everyone out comes first "
                "(ISO 12100:2010 6.3.2.2) [std, from memory]."
            )
        elif group == "special" and access != "occasional":
            suits_access = False
            problems.append(
                f"{name} is a measure of the special modes (setting, teaching, fault finding, "
                "maintenance; ISO 12100:2010 6.3.2.4) [std, from memory], not a safeguard for "
                f"{ACCESS[access]}."
            )
        position = order.index(group) + 1
        reasons.append(
            f"With {ACCESS[access]}"
            + (" and a risk of ejection" if ejection else "")
            + f", {_GROUP_WORDS[group]} are no. {position} of the {len(order)} kinds of "
            "safeguard in order of preference (ISO 12100:2010 6.3.2) [std, from memory]."
        )

    if kind == "emergency_stop":
        problems.append(
            "An emergency stop is a complementary protective measure, not a substitute for "
            "safeguarding: it acts only when someone reaches it in time (ISO 12100:2010 "
            "6.3.5.2; ISO 13850) [std, from memory]."
        )

    # --- ejection ----------------------------------------------------------------------
    handles_ejection = kind in GUARDS
    if ejection:
        if handles_ejection:
            reasons.append(
                "As a guard it stops parts or broken tools thrown out [std, from memory]."
            )
        else:
            problems.append(
                f"{name} does not stop ejected parts or broken tools: only a guard does "
                "(ISO 12100:2010 6.3.2, as recalled) [std, from memory; practice]. "
                "Add a guard against the ejection."
            )

    # --- hand feeding --------------------------------------------------------------------
    sub = 0
    if hand_feeding:
        if kind in BODY_DETECTION:
            sub = 1
            problems.append(
                f"{name} detects a body, not a hand reaching into the hazard: with hand "
                "feeding it does not protect the hands [practice]."
            )
        elif kind in SPECIAL_MODES:
            problems.append(
                f"{name} leaves a hand free to reach into the hazard while feeding by hand "
                "[practice]."
            )
        elif kind == "light_curtain":
            reasons.append(
                "With hand feeding it must detect a hand: detection capability d ≤ 40 mm "
                "(ISO 13855:2010 6.2.3) [std, from memory]."
            )
        elif kind == "fixed_guard":
            reasons.append(
                "With hand feeding the guard needs a feed opening small enough, for its "
                "distance from the hazard, that fingers cannot reach the hazard (ISO 13857; "
                "in the US 1910.217 Table O-10) [std/reg, from memory]."
            )

    if fails:
        reasons.append(
            "It ranks behind the options that pass every hard criterion: " + "; ".join(fails) + "."
        )
    if c.cost is None:
        reasons.append("Its cost is not given: it ranks last among otherwise equal options.")
    else:
        reasons.append(
            f"Cost {_n(c.cost)}: among otherwise equal options the lower cost ranks first."
        )
    if c.effect_on_work:
        reasons.append(f"Effect on the work (as entered): {c.effect_on_work}")

    order_pos = order.index(_GROUP[kind]) if step == 2 else 0
    if sub:
        order_pos = len(order)  # behind every kind that can protect the hands
    return _Draft(
        c=c,
        step=step,
        meets_plr=meets_plr,
        fits_space=fits_space,
        protects_others=protects_others,
        suits_access=suits_access,
        handles_ejection=handles_ejection,
        fails=fails,
        reasons=reasons,
        problems=problems,
        order=order_pos,
    )


def _key(o: _Draft) -> tuple[bool, bool, int, int, tuple[int, float], str]:
    cost = (0, o.c.cost) if o.c.cost is not None else (1, 0.0)
    return (o.step == 3, bool(o.fails), o.step, o.order, cost, o.c.kind)


def compare_options(
    candidates: Sequence[Candidate],
    *,
    plr: str | None,
    access: str,
    ejection: bool,
    other_people_exposed: bool,
    hand_feeding: bool = False,
    edition: str | None = None,
) -> ComparisonResult:
    """Rank candidate safeguards for one hazard, best first, with the reasons.

    ``plr``: the required performance level of the hazard (a-e) or None.
    ``access``: "none", "occasional" or "frequent" (see :data:`ACCESS`).
    ``ejection``: parts, material or broken tools can be thrown out.
    ``other_people_exposed``: people other than the operator can reach the hazard.
    ``hand_feeding``: the operator feeds or removes parts by hand.
    ``edition``: edition of ISO 12100 (the table of :mod:`standards.iso12100`).
    """
    if isinstance(candidates, (str, bytes)) or not isinstance(candidates, Sequence):
        raise InputError("candidates", "must be a list of Candidate")
    if not candidates:
        raise InputError("candidates", "give at least one candidate safeguard to compare")
    checked = [_check_candidate(i, c) for i, c in enumerate(candidates)]
    if plr is not None:
        require_choice("plr", plr, PL_ORDER)
    acc = require_choice("access", access, ACCESS)
    ej = _flag("ejection", ejection)
    others = _flag("other_people_exposed", other_people_exposed)
    feeding = _flag("hand_feeding", hand_feeding)
    table = pick(iso12100.EDITIONS, edition, iso12100.DEFAULT_EDITION)

    d = DerivationBuilder(
        "Comparison of candidate safeguards, ISO 12100 three-step method",
        "rank by: information for use last; hard criteria (PLr, space, people protected) "
        "passed; step 1 before step 2; ISO 12100 6.3.2 order for the access and ejection; "
        "cost; kind",
        cautions.REQUIREMENT,
    )
    d.input("PLr", plr, note="None: not given")
    d.input("access", acc, note=ACCESS[acc])
    d.input("risk of ejection", ej)
    d.input("other people exposed", others)
    d.input("hand feeding", feeding)
    for i, c in enumerate(checked):
        d.input(
            f"candidate {i + 1}",
            c.kind,
            note=(
                f"PL {c.reachable_pl or '—'}, needs "
                f"{'—' if c.required_distance_mm is None else _n(c.required_distance_mm)} mm, "
                f"space {'—' if c.space_available_mm is None else _n(c.space_available_mm)} mm, "
                f"cost {'—' if c.cost is None else _n(c.cost)}"
            ),
        )
    d.const(table["three_step.order"])
    d.const(table["information.not_substitute"])
    if any(_step(c.kind) == 2 for c in checked):
        if acc != "frequent":
            d.const(table["selection.no_access"])
        if acc != "none":
            d.const(table["selection.frequent_access"])
        if any(c.kind in SPECIAL_MODES for c in checked):
            d.const(table["selection.special_modes"])
        if ej:
            d.const(table["selection.ejection"])
        if any(c.kind == "emergency_stop" for c in checked):
            d.const(table["complementary.emergency_stop"])

    order: tuple[str, ...] = _ORDER[acc]
    if ej:
        # guards before protective devices, keeping the access order within each
        order = tuple(g for g in order if g in ("fixed", "movable")) + tuple(
            g for g in order if g not in ("fixed", "movable")
        )
    d.step(
        "order of the kinds of safeguard: "
        + ", ".join(_GROUP_WORDS[g] for g in order)
        + f" ({acc} access"
        + (", ejection" if ej else "")
        + ")"
    )

    drafts = [
        _assess(
            c,
            plr=plr,
            access=acc,
            ejection=ej,
            others=others,
            hand_feeding=feeding,
            order=order,
        )
        for c in checked
    ]
    drafts.sort(key=_key)
    options = tuple(
        OptionAssessment(
            kind=o.c.kind,
            step=o.step,
            rank=i + 1,
            meets_plr=o.meets_plr,
            fits_space=o.fits_space,
            protects_others=o.protects_others,
            suits_access=o.suits_access,
            handles_ejection=o.handles_ejection,
            reasons=tuple(o.reasons),
            problems=tuple(o.problems),
        )
        for i, o in enumerate(drafts)
    )
    for o in options:
        state = "no problems" if not o.problems else f"{len(o.problems)} problem(s)"
        d.step(f"{o.rank}. {o.kind} (step {o.step}): {state}")

    recommended = next((o.kind for o in options if not o.problems), None)
    if recommended is None:
        d.problem(
            f"No recommendation: {NO_CANDIDATE}. Every option has at least one problem; add "
            "or change a candidate, or combine measures and record why."
        )
        d.step("no option without problems → no recommendation")
    else:
        d.step(f"first option without problems: {recommended}")
    if feeding and any(c.kind == "fixed_guard" for c in checked):
        d.warn(
            "A fixed guard for hand feeding needs a feed opening small enough for its distance "
            "from the hazard (ISO 13857; in the US 1910.217 Table O-10) [std/reg, from memory]."
        )
    d.warn(ADVICE)
    return ComparisonResult(options=options, recommended=recommended, derivation=d.build())
