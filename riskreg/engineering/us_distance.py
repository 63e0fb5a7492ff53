"""US safety distances: 29 CFR 1910.217 formulas and the ANSI B11.19 general formula.

All lengths here are inches, as the US formulas are written; every result also
gives the distance in millimetres (1 in = 25.4 mm exactly). Times are seconds.

- :func:`two_hand_control`  Ds = 63 in/s × Ts               1910.217(c)(3)(vii)
- :func:`two_hand_trip`     Dm = 63 in/s × (1/2 + 1/N) × Tr  1910.217(c)(3)(viii)
- :func:`presence_sensing`  Ds = 63 in/s × Ts               1910.217(c)(3)(iii)
- :func:`general`           Ds = K (Ts + Tc + Tr + Tbm) + Dpf, K = 63 in/s  (ANSI B11.19)
- :func:`us_safety_distance` picks one of the above by device name.

The 1910.217 formulas apply to mechanical power presses only (1910.217(a)(5)
excludes press brakes, hydraulic and pneumatic presses); every 1910.217 result
carries that warning.

Tbm, the brake monitor's extra allowance, is accepted as given: it is the time
the brake monitor lets the stopping time grow before it trips (its setting
minus the measured Ts). The register does not derive it from the monitor.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from . import cautions
from .derivation import (
    Derivation,
    DerivationBuilder,
    InputError,
    Quantity,
    Result,
    require_choice,
    require_finite,
)
from .standards import ansi_b11_19, cfr1910_217, pick
from .units import MM_PER_IN, in_to_mm

# Float rounding allowance for the validity limit of the Dpf formula (inches);
# it only absorbs binary rounding, e.g. 63.5 mm converted to inches.
_TOL_IN = 1e-9

SCOPE_WARNING = (
    "29 CFR 1910.217 covers mechanical power presses only: press brakes, hydraulic and "
    "pneumatic presses are excluded by 1910.217(a)(5) [reg, from memory] and fall under "
    "1910.212 and the ANSI B11 standards; for them use the general formula (ANSI B11.19) "
    "or ISO 13855."
)
GREATER_THAN = (
    "1910.217 requires the installed distance to be greater than the computed value "
    "[reg, from memory]."
)
NO_ALLOWANCES = (
    "The 1910.217 formula has no allowance for the depth a hand reaches before it is "
    "detected, nor for device and control response times; the ANSI B11.19 general formula "
    "adds them and usually gives a larger distance: compare both [practice]."
)


@dataclass(frozen=True)
class UsDistanceResult(Result):
    """A minimum safety distance; the installed distance must exceed it."""

    device: str
    distance_in: float
    distance_mm: float
    formula: str
    time_s: float  # the time multiplied by the hand speed constant
    derivation: Derivation


def _g(value: float) -> str:
    return f"{value:.6g}"


def _time(name: str, value: float, *, positive: bool = False) -> float:
    return require_finite(name, value, minimum=0.0, unit="s", exclusive_min=positive)


def _mm_step(d: DerivationBuilder, symbol: str, distance_in: float) -> float:
    mm = in_to_mm(distance_in)
    d.step(f"{symbol} = {_g(distance_in)} in × {MM_PER_IN:g} mm/in = {_g(mm)} mm")
    return mm


def two_hand_control(stopping_time_s: float, edition: str | None = None) -> UsDistanceResult:
    """Ds = 63 in/s × Ts for a two-hand control on a part-revolution clutch press.

    Ts is the stopping time of the press measured at about 90° of crankshaft
    rotation, in seconds (29 CFR 1910.217(c)(3)(vii)).
    """
    ts = _time("stopping_time_s", stopping_time_s, positive=True)
    table = pick(cfr1910_217.EDITIONS, edition, cfr1910_217.DEFAULT_EDITION)
    formula = "Ds = 63 in/s × Ts"
    d = DerivationBuilder(
        "Safety distance of a two-hand control, 29 CFR 1910.217(c)(3)(vii)",
        formula,
        cautions.DISTANCE,
    )
    d.input("Ts stopping time", ts, "s", "measured at about 90° of crankshaft rotation")
    k = d.const(table["two_hand_control.hand_speed"])
    ds = k * ts
    d.step(f"Ds = {k:g} in/s × {_g(ts)} s = {_g(ds)} in")
    mm = _mm_step(d, "Ds", ds)
    d.warn(
        "Ts must be the press's stopping time measured at about 90° of crankshaft rotation "
        "on the downstroke [reg, from memory], where the slide moves fastest [practice]; "
        "use the worst of several measurements."
    )
    d.warn(
        "1910.217(c)(3)(vii) is for part-revolution clutch presses; on a full-revolution "
        "clutch press use the two-hand trip formula of (c)(3)(viii) [reg, from memory]."
    )
    d.warn(NO_ALLOWANCES)
    d.warn(GREATER_THAN)
    d.warn(SCOPE_WARNING)
    d.const(table["scope.excluded"])
    return UsDistanceResult("two-hand", ds, mm, formula, ts, d.build())


def two_hand_trip(
    engaging_points: int, revolution_time_s: float, edition: str | None = None
) -> UsDistanceResult:
    """Dm = 63 in/s × (1/2 + 1/N) × Tr for a two-hand trip on a full-revolution press.

    N is the number of clutch engaging points per revolution, Tr the time of one
    crankshaft revolution in seconds (29 CFR 1910.217(c)(3)(viii)).
    """
    if isinstance(engaging_points, bool) or not isinstance(engaging_points, int):
        raise InputError(
            "engaging_points",
            f"must be a whole number of clutch engaging points per revolution (1 or more), "
            f"got {engaging_points!r}",
        )
    if engaging_points < 1:
        raise InputError(
            "engaging_points",
            f"must be at least 1 clutch engaging point per revolution, got {engaging_points}",
        )
    n = engaging_points
    tr = _time("revolution_time_s", revolution_time_s, positive=True)
    table = pick(cfr1910_217.EDITIONS, edition, cfr1910_217.DEFAULT_EDITION)
    formula = "Dm = 63 in/s × Tm, Tm = (1/2 + 1/N) × Tr"
    d = DerivationBuilder(
        "Safety distance of a two-hand trip, 29 CFR 1910.217(c)(3)(viii)",
        formula,
        cautions.DISTANCE,
    )
    d.input("N clutch engaging points per revolution", n)
    d.input("Tr time of one crankshaft revolution", tr, "s", "60 / strokes per minute")
    half = d.const(table["two_hand_trip.fixed_revolutions"])
    k = d.const(table["two_hand_trip.hand_speed"])
    tm = (half + 1.0 / n) * tr
    d.step(f"Tm = ({half:g} + 1/{n}) × {_g(tr)} s = {_g(tm)} s")
    dm = k * tm
    d.step(f"Dm = {k:g} in/s × {_g(tm)} s = {_g(dm)} in")
    mm = _mm_step(d, "Dm", dm)
    if n == 1:
        d.step("One engaging point: Tm is the time of one and a half revolutions.")
    d.warn(
        "1910.217(c)(3)(viii) is for full-revolution clutch presses; Tm is the longest time "
        "from tripping to die closure [reg, from memory]."
    )
    d.warn(
        "A two-hand trip on a full-revolution clutch press needs an anti-repeat feature "
        "[reg, from memory]."
    )
    d.warn(GREATER_THAN)
    d.warn(SCOPE_WARNING)
    d.const(table["scope.excluded"])
    return UsDistanceResult("two-hand-trip", dm, mm, formula, tm, d.build())


def presence_sensing(stopping_time_s: float, edition: str | None = None) -> UsDistanceResult:
    """Ds = 63 in/s × Ts for a presence-sensing device (29 CFR 1910.217(c)(3)(iii))."""
    ts = _time("stopping_time_s", stopping_time_s, positive=True)
    table = pick(cfr1910_217.EDITIONS, edition, cfr1910_217.DEFAULT_EDITION)
    formula = "Ds = 63 in/s × Ts"
    d = DerivationBuilder(
        "Safety distance of a presence-sensing device, 29 CFR 1910.217(c)(3)(iii)",
        formula,
        cautions.DISTANCE,
    )
    d.input("Ts stopping time", ts, "s", "press stopping time, worst measured")
    k = d.const(table["presence_sensing.hand_speed"])
    ds = k * ts
    d.step(f"Ds = {k:g} in/s × {_g(ts)} s = {_g(ds)} in")
    mm = _mm_step(d, "Ds", ds)
    d.warn(
        "1910.217(c)(3)(iii) does not allow a presence-sensing device as the point-of-operation "
        "safeguard of a full-revolution clutch press [reg, from memory]."
    )
    d.warn(NO_ALLOWANCES)
    d.warn(GREATER_THAN)
    d.warn(SCOPE_WARNING)
    d.const(table["scope.excluded"])
    return UsDistanceResult("presence-sensing", ds, mm, formula, ts, d.build())


def general(
    stopping_time_s: float,
    control_time_s: float = 0.0,
    device_time_s: float = 0.0,
    brake_monitor_time_s: float = 0.0,
    object_sensitivity_in: float | None = None,
    dpf_in: float | None = None,
    edition: str | None = None,
) -> UsDistanceResult:
    """ANSI B11.19 general formula Ds = K (Ts + Tc + Tr + Tbm) + Dpf, K = 63 in/s.

    Ts machine stopping time, Tc control response time, Tr protective device
    response time, Tbm the brake monitor's extra allowance (its setting − Ts,
    accepted as given), all in seconds. Dpf, the depth penetration factor, is
    either computed for a light curtain from its object sensitivity
    (``object_sensitivity_in``, Dpf = 3.4 (S − 0.276) in, valid up to 2.5 in) or
    given directly (``dpf_in``, read from the standard for the device). One of
    the two is required: a distance without its penetration allowance would be
    too short.
    """
    ts = _time("stopping_time_s", stopping_time_s, positive=True)
    tc = _time("control_time_s", control_time_s)
    tr = _time("device_time_s", device_time_s)
    tbm = _time("brake_monitor_time_s", brake_monitor_time_s)
    if object_sensitivity_in is not None and dpf_in is not None:
        raise InputError(
            "dpf_in",
            "give either object_sensitivity_in (Dpf computed for a light curtain) or dpf_in "
            "(Dpf read from ANSI B11.19), not both",
        )
    if object_sensitivity_in is None and dpf_in is None:
        raise InputError(
            "object_sensitivity_in",
            "the general formula needs the depth penetration factor: give "
            "object_sensitivity_in (light curtain, up to 2.5 in) or dpf_in (Dpf read from "
            "ANSI B11.19 for the device; 0 only where the standard gives none)",
        )
    table = pick(ansi_b11_19.EDITIONS, edition, ansi_b11_19.DEFAULT_EDITION)
    formula = "Ds = K × (Ts + Tc + Tr + Tbm) + Dpf, K = 63 in/s"
    d = DerivationBuilder(
        "Safety distance, ANSI B11.19 general formula", formula, cautions.DISTANCE
    )
    d.input("Ts machine stopping time", ts, "s", "worst measured")
    d.input("Tc control response time", tc, "s")
    d.input("Tr protective device response time", tr, "s")
    d.input(
        "Tbm brake monitor allowance",
        tbm,
        "s",
        "brake monitor setting − Ts, accepted as given",
    )
    k = d.const(table["hand_speed"])
    dpf: float
    if object_sensitivity_in is not None:
        s = require_finite(
            "object_sensitivity_in",
            object_sensitivity_in,
            minimum=0.0,
            unit="in",
            exclusive_min=True,
        )
        limit = d.const(table["dpf.formula_max_sensitivity_in"])
        if s > limit + _TOL_IN:
            raise InputError(
                "object_sensitivity_in",
                f"{_g(s)} in ({_g(in_to_mm(s))} mm) is above the {limit:g} in limit of "
                f"Dpf = 3.4 (S − 0.276); take Dpf from the table of ANSI B11.19 for this "
                f"object sensitivity and enter it as dpf_in",
            )
        d.input("S object sensitivity", s, "in", f"{_g(in_to_mm(s))} mm")
        factor = d.const(table["dpf.factor"])
        offset = d.const(table["dpf.offset_in"])
        raw = factor * (s - offset)
        d.step(f"Dpf = {factor:g} × ({_g(s)} in − {offset:g} in) = {_g(raw)} in")
        if raw < 0:
            d.warn(
                f"The Dpf formula gives a negative allowance for S below {offset:g} in; "
                "no allowance is subtracted (Dpf = 0)."
            )
            d.step("Dpf < 0 → Dpf = 0")
            raw = 0.0
        dpf = raw
    else:
        assert dpf_in is not None
        dpf = require_finite("dpf_in", dpf_in, minimum=0.0, unit="in")
        d.input("Dpf depth penetration factor", dpf, "in", "as given, from ANSI B11.19")
        d.warn(
            "Dpf is as entered: check it against the table of ANSI B11.19 for the device "
            "and its object sensitivity."
        )
    t = ts + tc + tr + tbm
    d.step(f"T = {_g(ts)} + {_g(tc)} + {_g(tr)} + {_g(tbm)} s = {_g(t)} s")
    ds = k * t + dpf
    d.step(f"Ds = {k:g} in/s × {_g(t)} s + {_g(dpf)} in = {_g(ds)} in")
    mm = _mm_step(d, "Ds", ds)
    d.step(f"K = {k:g} in/s = {_g(in_to_mm(k))} mm/s")
    d.warn(
        "Tbm is accepted as given: enter the brake monitor's setting minus the measured Ts; "
        "the register does not derive it."
    )
    if tbm == 0:
        d.warn(
            "Tbm = 0: right only where no brake monitor allowance applies; with a brake "
            "monitor, the distance must cover the stopping time it lets the machine reach."
        )
    if tc == 0 or tr == 0:
        d.warn(
            "A control or device response time of 0 s is entered: include the real response "
            "times of the control and of the protective device if they are not already part "
            "of the measured stopping time."
        )
    return UsDistanceResult("general", ds, mm, formula, t, d.build())


DEVICES = {
    "two-hand": "two-hand control, part-revolution clutch press, 1910.217(c)(3)(vii)",
    "two-hand-trip": "two-hand trip, full-revolution clutch press, 1910.217(c)(3)(viii)",
    "presence-sensing": "presence-sensing device, 1910.217(c)(3)(iii)",
    "general": "any safeguarding device, ANSI B11.19 general formula",
}

_NEEDS: dict[str, tuple[str, ...]] = {
    "two-hand": ("stopping_time_s",),
    "two-hand-trip": ("engaging_points", "revolution_time_s"),
    "presence-sensing": ("stopping_time_s",),
    "general": ("stopping_time_s",),
}
_USES: dict[str, tuple[str, ...]] = {
    "two-hand": ("stopping_time_s",),
    "two-hand-trip": ("engaging_points", "revolution_time_s", "stopping_time_s"),
    "presence-sensing": ("stopping_time_s",),
    "general": (
        "stopping_time_s",
        "control_time_s",
        "device_time_s",
        "brake_monitor_time_s",
        "object_sensitivity_in",
        "dpf_in",
    ),
}


def us_safety_distance(
    device: str,
    stopping_time_s: float | None = None,
    engaging_points: int | None = None,
    revolution_time_s: float | None = None,
    control_time_s: float | None = None,
    device_time_s: float | None = None,
    brake_monitor_time_s: float | None = None,
    object_sensitivity_in: float | None = None,
    dpf_in: float | None = None,
    edition: str | None = None,
) -> UsDistanceResult:
    """The US safety distance for ``device`` (see :data:`DEVICES`).

    A parameter the device's formula needs but is missing, or one it does not
    use, is refused with an :class:`InputError` naming it. The one exception:
    a stopping time given with "two-hand-trip" is recorded and set aside with a
    warning, because 1910.217(c)(3)(viii) works from the revolution time.
    """
    dev = require_choice("device", device, DEVICES)
    values: dict[str, object] = {
        "stopping_time_s": stopping_time_s,
        "engaging_points": engaging_points,
        "revolution_time_s": revolution_time_s,
        "control_time_s": control_time_s,
        "device_time_s": device_time_s,
        "brake_monitor_time_s": brake_monitor_time_s,
        "object_sensitivity_in": object_sensitivity_in,
        "dpf_in": dpf_in,
    }
    for name in _NEEDS[dev]:
        if values[name] is None:
            raise InputError(name, f"is required for device {dev!r} ({DEVICES[dev]})")
    for name, value in values.items():
        if value is not None and name not in _USES[dev]:
            hint = (
                "; use device 'general' (ANSI B11.19) to include it"
                if name in _USES["general"]
                else ""
            )
            raise InputError(name, f"is not used by device {dev!r} ({DEVICES[dev]}){hint}")
    if dev == "two-hand":
        assert stopping_time_s is not None
        return two_hand_control(stopping_time_s, edition)
    if dev == "presence-sensing":
        assert stopping_time_s is not None
        return presence_sensing(stopping_time_s, edition)
    if dev == "general":
        assert stopping_time_s is not None
        return general(
            stopping_time_s,
            control_time_s=control_time_s or 0.0,
            device_time_s=device_time_s or 0.0,
            brake_monitor_time_s=brake_monitor_time_s or 0.0,
            object_sensitivity_in=object_sensitivity_in,
            dpf_in=dpf_in,
            edition=edition,
        )
    assert engaging_points is not None and revolution_time_s is not None
    r = two_hand_trip(engaging_points, revolution_time_s, edition)
    if stopping_time_s is None:
        return r
    ts = _time("stopping_time_s", stopping_time_s, positive=True)
    der = r.derivation
    der = dataclasses.replace(
        der,
        inputs=der.inputs + (Quantity("Ts stopping time (not used)", ts, "s"),),
        warnings=der.warnings
        + (
            "The stopping time given is not used: on a full-revolution clutch press the "
            "two-hand trip distance follows from the revolution time (1910.217(c)(3)(viii)).",
        ),
    )
    return dataclasses.replace(r, derivation=der)
