"""What the US power-press rules require of a press and its safeguards.

29 CFR 1910.217 covers mechanical power presses. Press brakes, hydraulic and
pneumatic power presses and the other machines listed in 1910.217(a)(5) are
excluded, and machines that are not power presses are outside it: for them
only the general machine-guarding notes (1910.212) are returned.

For a mechanical power press, as recalled [reg, from memory]:

- point-of-operation guards or devices on every operation (c)(1)(i);
- full-revolution clutch: a single-stroke mechanism (b)(3)(i); no
  presence-sensing device as point-of-operation safeguard (c)(3)(iii); a
  two-hand trip needs concurrent two-hand controls (b)(6)(i), anti-repeat
  (b)(6)(ii) and the distance Dm (c)(3)(viii);
- part-revolution clutch: two-hand controls with anti-repeat (b)(7)(v) at the
  distance Ds (c)(3)(vii); presence-sensing devices at Ds (c)(3)(iii); with
  either, control reliability (b)(13) and brake monitoring (b)(14), as
  (c)(5) asks where the operator's hands enter the point of operation;
- presence-sensing device initiation (PSDI) only under paragraph (h);
- periodic inspections (e)(1)(i) and the weekly inspection and test of the
  clutch/brake, anti-repeat and single-stroke mechanisms, certified
  (e)(1)(ii), unless the press meets (b)(13) and (b)(14).

Each requirement is one sentence ending with its clause in brackets. The
register reads "devices" as the safeguards fitted to the press.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from . import cautions
from .derivation import (
    Constant,
    Derivation,
    DerivationBuilder,
    InputError,
    Result,
    require_choice,
)
from .selection import KINDS as MEASURE_KINDS
from .standards import cfr1910_212, cfr1910_217, pick

COVERED = ("mechanical_press",)
# Machines 1910.217(a)(5) excludes, as recalled [reg, from memory].
EXCLUDED = (
    "press_brake",
    "hydraulic_press",
    "pneumatic_press",
    "bulldozer",
    "hot_bending_press",
    "hot_metal_press",
    "forging_press",
    "forging_hammer",
    "riveting_machine",
)
# Machines that are not power presses at all.
NOT_PRESSES = ("shear", "robot_cell", "conveyor", "other")
MACHINE_KINDS = COVERED + EXCLUDED + NOT_PRESSES
CLUTCHES = {"part": "part-revolution clutch", "full": "full-revolution clutch"}

# Safeguard kinds of the register plus the two press-only ones.
DEVICES = (*MEASURE_KINDS, "two_hand_trip", "psdi")
GUARDS = ("fixed_guard", "interlocking_guard", "interlocking_guard_locking")
PRESENCE_SENSING = ("light_curtain", "multi_beam", "pressure_mat", "psdi")
TWO_HAND = ("two_hand_control", "two_hand_trip")
POINT_OF_OPERATION = GUARDS + PRESENCE_SENSING + TWO_HAND


@dataclass(frozen=True)
class PressRulesResult(Result):
    applies: bool  # True: 29 CFR 1910.217 applies to this machine
    requirements: tuple[str, ...]  # each ends with its clause in brackets
    problems: tuple[str, ...]
    warnings: tuple[str, ...]
    derivation: Derivation


def _optional_flag(name: str, value: object) -> bool | None:
    if value is not None and not isinstance(value, bool):
        raise InputError(name, f"must be True, False or None (not stated), got {value!r}")
    return value


def _flag(name: str, value: object) -> bool:
    if not isinstance(value, bool):
        raise InputError(name, f"must be True or False, got {value!r}")
    return value


def _devices(value: object) -> tuple[str, ...]:
    if isinstance(value, str) or not isinstance(value, Sequence):
        raise InputError("devices", "must be a list of safeguard kinds (it may be empty)")
    out: list[str] = []
    for i, v in enumerate(value):
        require_choice(f"devices[{i}]", v, DEVICES)
        if v not in out:
            out.append(v)
    return tuple(out)


def _cite(row: Constant) -> str:
    return f"[{row.source}{row.clause}]"


def us_press_requirements(
    machine_kind: str,
    clutch: str,
    engaging_points: int | None,
    brake_monitor: bool,
    control_reliable: bool,
    devices: Sequence[str],
    anti_repeat: bool | None,
    single_stroke: bool | None,
    edition: str | None = None,
) -> PressRulesResult:
    """The 1910.217 requirements for a press with these features and safeguards.

    ``clutch``: "part" or "full" revolution. ``engaging_points``: clutch
    engaging points per revolution (full-revolution clutches). ``brake_monitor``
    and ``control_reliable``: the press meets (b)(14) and (b)(13). ``devices``:
    the safeguard kinds on the press (the register's kinds, plus
    "two_hand_trip" and "psdi"). ``anti_repeat``, ``single_stroke``: None when
    not stated. ``edition``: of the 1910.217 table.
    """
    kind = require_choice("machine_kind", machine_kind, MACHINE_KINDS)
    clu = require_choice("clutch", clutch, CLUTCHES)
    if engaging_points is not None and (
        isinstance(engaging_points, bool)
        or not isinstance(engaging_points, int)
        or engaging_points < 1
    ):
        raise InputError(
            "engaging_points",
            f"must be a whole number of clutch engaging points per revolution (1 or more), "
            f"or None, got {engaging_points!r}",
        )
    monitor = _flag("brake_monitor", brake_monitor)
    reliable = _flag("control_reliable", control_reliable)
    devs = _devices(devices)
    repeat = _optional_flag("anti_repeat", anti_repeat)
    stroke = _optional_flag("single_stroke", single_stroke)
    table = pick(cfr1910_217.EDITIONS, edition, cfr1910_217.DEFAULT_EDITION)

    d = DerivationBuilder(
        "US power-press requirements, 29 CFR 1910.217",
        "requirements = scope (a)(5) → clutch → safeguards on the press → inspections",
        cautions.REQUIREMENT,
    )
    d.input("machine", kind)
    d.input("clutch", clu, note=CLUTCHES[clu])
    d.input("clutch engaging points per revolution", engaging_points, note="None: not given")
    d.input("brake monitor (b)(14)", monitor)
    d.input("control reliability (b)(13)", reliable)
    d.input("safeguards on the press", ", ".join(devs) or "none")
    d.input("anti-repeat", repeat, note="None: not stated")
    d.input("single-stroke mechanism", stroke, note="None: not stated")
    requirements: list[str] = []

    def require(row: Constant) -> None:
        requirements.append(f"{d.const(row)} {_cite(row)}")

    scope = table["scope.excluded"]
    d.const(scope)
    if kind not in COVERED:
        general = pick(cfr1910_212.EDITIONS, None, cfr1910_212.DEFAULT_EDITION)
        if kind in EXCLUDED:
            d.step(f"{kind} is excluded by 1910.217(a)(5) → 1910.217 does not apply")
            d.warn(
                f"{kind.replace('_', ' ').capitalize()}: outside 29 CFR 1910.217, which "
                "excludes press brakes, hydraulic and pneumatic power presses and the other "
                "machines of (a)(5) [reg, from memory]; only the general machine-guarding "
                "notes are given."
            )
        else:
            d.step(f"{kind} is not a mechanical power press → 1910.217 does not apply")
            d.warn(
                "Not a mechanical power press, so outside 29 CFR 1910.217; only the general "
                "machine-guarding notes are given. If the machine is in fact a mechanical "
                "power press, enter it as one."
            )
        require(general["req.methods_of_guarding"])
        require(general["req.point_of_operation"])
        d.warn(
            "Where no specific rule covers a hazard, the general duty clause of the OSH Act "
            "(section 5(a)(1)) still applies, and the ANSI B11 standard for the machine "
            "(e.g. B11.3 press brakes, B11.2 hydraulic presses) shows the accepted means "
            "[reg/std, from memory]."
        )
        der = d.build()
        return PressRulesResult(
            applies=False,
            requirements=tuple(requirements),
            problems=der.problems,
            warnings=der.warnings,
            derivation=der,
        )

    d.step("mechanical power press → 1910.217 applies")
    require(table["req.point_of_operation"])
    fitted = [v for v in devs if v in POINT_OF_OPERATION]
    others = [v for v in devs if v not in POINT_OF_OPERATION]
    if not fitted:
        d.problem(
            "No point-of-operation guard or device on the press: every operation needs one "
            f"{_cite(table['req.point_of_operation'])}."
        )
    if others:
        d.warn(
            "Not point-of-operation guards or devices under 1910.217(c): "
            + ", ".join(others)
            + "; they may complement, not replace, the safeguards [reg, from memory]."
        )
    sensing = [v for v in devs if v in PRESENCE_SENSING]
    two_hand = [v for v in devs if v in TWO_HAND]

    if clu == "full":
        d.step("full-revolution clutch: the slide cannot be stopped once the stroke has started")
        require(table["req.single_stroke_full_revolution"])
        if stroke is False:
            d.problem(
                "No single-stroke mechanism on a full-revolution clutch press "
                f"{_cite(table['req.single_stroke_full_revolution'])}."
            )
        elif stroke is None:
            d.warn("Single-stroke mechanism not stated: a full-revolution clutch press needs one.")
        if sensing:
            require(table["req.full_revolution_no_presence_sensing"])
            d.problem(
                f"{', '.join(sensing)} on a full-revolution clutch press: a presence-sensing "
                "device may not be its point-of-operation safeguard, as the press cannot stop "
                "mid-stroke "
                f"{_cite(table['req.full_revolution_no_presence_sensing'])}."
            )
        if "psdi" in devs:
            require(table["req.psdi"])
            d.problem(
                "PSDI on a full-revolution clutch press: PSDI is allowed on part-revolution "
                f"clutch presses only {_cite(table['req.psdi'])}."
            )
        if two_hand:
            if "two_hand_control" in two_hand:
                d.warn(
                    "On a full-revolution clutch press two-hand controls act as a two-hand "
                    "trip: (b)(6) and (c)(3)(viii) apply [reg, from memory]."
                )
            require(table["req.two_hand_trip_controls"])
            require(table["req.two_hand_trip_anti_repeat"])
            require(table["req.two_hand_trip_distance"])
            fixed = d.const(table["two_hand_trip.fixed_revolutions"])
            d.const(table["two_hand_trip.hand_speed"])
            if engaging_points is not None:
                tm = fixed + 1 / engaging_points
                d.step(
                    f"Tm = (1/2 + 1/{engaging_points}) × Tr = {tm:.6g} × Tr; "
                    "Dm = 63 in/s × Tm (calc us-distance)"
                )
            else:
                d.warn(
                    "Clutch engaging points not given: Dm = 63 in/s × (1/2 + 1/N) × Tr needs "
                    "N, the engaging points per revolution."
                )
            if repeat is False:
                d.problem(
                    "No anti-repeat on a press with a two-hand trip "
                    f"{_cite(table['req.two_hand_trip_anti_repeat'])}."
                )
            elif repeat is None:
                d.warn("Anti-repeat not stated: a two-hand trip on this press needs it.")
        require(table["req.weekly_inspection"])
        if monitor and reliable:
            d.warn(
                "The press is entered as meeting (b)(13) and (b)(14), which are written for "
                "part-revolution clutch presses; the register keeps the weekly test for a "
                "full-revolution clutch press: check the exemption against the regulation "
                "text before taking it [reg, from memory]."
            )
    else:
        d.step("part-revolution clutch: the slide can be stopped during the stroke")
        if engaging_points is not None:
            d.warn("Clutch engaging points are used for full-revolution clutches only; not used.")
        if "two_hand_trip" in two_hand:
            d.warn(
                "A two-hand trip on a part-revolution clutch press only starts the stroke: "
                "two-hand controls must be held during the die-closing portion of the stroke "
                f"{_cite(table['req.two_hand_control_single_stroke'])}."
            )
        if two_hand:
            require(table["req.two_hand_control_single_stroke"])
            require(table["req.two_hand_control_distance"])
            d.const(table["two_hand_control.hand_speed"])
            if repeat is False:
                d.problem(
                    "No anti-repeat on a press with two-hand controls "
                    f"{_cite(table['req.two_hand_control_single_stroke'])}."
                )
            elif repeat is None:
                d.warn("Anti-repeat not stated: two-hand controls on this press need it.")
        if sensing:
            require(table["req.presence_sensing_distance"])
            d.const(table["presence_sensing.hand_speed"])
        if "psdi" in devs:
            require(table["req.psdi"])
        if two_hand or sensing:
            require(table["req.additional_safeguarding"])
            require(table["req.control_reliability"])
            require(table["req.brake_monitoring"])
            d.warn(
                "(c)(5) ties control reliability and brake monitoring to presses whose "
                "operator places hands in the point of operation [reg, from memory]; the "
                "register asks for them wherever two-hand controls or presence-sensing "
                "devices are used, which is the safe side."
            )
            if not reliable:
                d.problem(
                    "Two-hand controls or presence-sensing devices on a part-revolution press "
                    "without control reliability "
                    f"{_cite(table['req.control_reliability'])}."
                )
            if not monitor:
                d.problem(
                    "Two-hand controls or presence-sensing devices on a part-revolution press "
                    f"without a brake monitor {_cite(table['req.brake_monitoring'])}."
                )
        if monitor and reliable:
            require(table["req.weekly_exemption"])
            d.step("(b)(13) and (b)(14) met → exempt from the weekly test")
        else:
            require(table["req.weekly_inspection"])
            d.step("(b)(13) and (b)(14) not both met → weekly test applies")
    require(table["req.periodic_inspection"])
    d.warn(
        "Only the rules recalled here are listed: 1910.217 has further requirements "
        "(e.g. on brakes, counterbalances, foot controls, die setting and reporting of "
        "injuries) [reg, from memory]."
    )
    der = d.build()
    return PressRulesResult(
        applies=True,
        requirements=tuple(requirements),
        problems=der.problems,
        warnings=der.warnings,
        derivation=der,
    )
