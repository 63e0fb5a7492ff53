"""Safety distances (ISO 13855), guard locking need, and crushing gaps (ISO 13854).

All lengths are in mm and all times in s. T, the overall stopping performance, is
the stopping time of the machine plus the response time of the protective device,
both measured. Every result gives the distance in mm and in inches
(1 in = 25.4 mm exactly) and carries its derivation and the distance cautions.

Values of the standards are recalled from memory [std, from memory]; they live in
:mod:`riskreg.engineering.standards.iso13855` and
:mod:`riskreg.engineering.standards.iso13854`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TypeVar

from . import cautions
from .derivation import (
    Derivation,
    DerivationBuilder,
    InputError,
    Result,
    require_choice,
    require_finite,
)
from .standards import ConstantTable as _Table
from .standards import iso13854, iso13855, pick
from .units import mm_to_in

MAX_TIME_S = 10.0

DEVICES = (
    "light-curtain",
    "multi-beam",
    "parallel",
    "mat",
    "two-hand",
    "interlocked-guard",
)

BODY_PARTS = tuple(iso13854.GAPS)

REACH_OVER_TABLE = "the reach-over table of ISO 13855 (Table 1 in the 2010 edition)"


# --- results ------------------------------------------------------------------


@dataclass(frozen=True)
class DistanceResult(Result):
    """A minimum distance S = K·T + C from the protective device to the hazard."""

    device: str
    distance_mm: float
    distance_in: float
    k_mm_per_s: float
    c_mm: float
    t_s: float
    governed_by: str
    derivation: Derivation


@dataclass(frozen=True)
class GuardLockingResult(Result):
    """Whether the hazard can still be moving when a person reaches it."""

    guard_locking_needed: bool
    time_to_reach_s: float
    stopping_time_s: float
    margin_s: float
    distance_mm: float | None
    derivation: Derivation


@dataclass(frozen=True)
class GapResult(Result):
    """The minimum gap that avoids crushing one part of the body."""

    body_part: str
    gap_mm: float
    gap_in: float
    derivation: Derivation


@dataclass(frozen=True)
class GapCheckResult(Result):
    """A gap on the machine (``gap_mm``) compared with the minimum for a body part."""

    body_part: str
    gap_mm: float
    gap_in: float
    minimum_gap_mm: float
    minimum_gap_in: float
    passed: bool
    derivation: Derivation


# --- helpers ------------------------------------------------------------------


def _n(x: float) -> str:
    """A number for a derivation step, without binary noise."""
    return f"{x:.6g}"


def _tidy(x: float) -> float:
    """Drop floating-point noise below a nanometre (608.0000000000001 → 608.0)."""
    return round(x, 9) + 0.0


def _time(name: str, value: float) -> float:
    v = require_finite(name, value, minimum=0.0, unit="s")
    if v > MAX_TIME_S:
        raise InputError(
            name,
            f"must be at most {MAX_TIME_S:g} s, got {v:g} s; a time that long is outside "
            "what this calculation accepts (check the unit: 180 ms is 0.18 s)",
        )
    return v


def _start(title: str, formula: str, edition: str | None) -> tuple[DerivationBuilder, _Table]:
    table = pick(iso13855.EDITIONS, edition, iso13855.DEFAULT_EDITION)
    d = DerivationBuilder(title, formula, cautions.DISTANCE)
    if table.edition in iso13855.CARRIED_OVER:
        d.warn(iso13855.CARRIED_OVER[table.edition])
    return d, table


def _overall_time(
    d: DerivationBuilder, stopping_time_s: float, response_time_s: float, device_word: str
) -> float:
    ts = _time("stopping_time_s", stopping_time_s)
    tr = _time("response_time_s", response_time_s)
    d.input("stopping time of the machine", ts, "s", note="measured, worst of several trials")
    d.input(f"response time of the {device_word}", tr, "s")
    t = ts + tr
    d.step(f"T = {_n(ts)} s + {_n(tr)} s = {_n(t)} s")
    if ts == 0:
        d.warn(
            "A stopping time of 0 s is not a real measurement: enter the machine's measured "
            "stopping time."
        )
    return t


def _result(
    d: DerivationBuilder,
    device: str,
    s: float,
    k: float,
    c: float,
    t: float,
    governed_by: str,
) -> DistanceResult:
    s = _tidy(s)
    d.step(f"S = {_n(s)} mm = {_n(mm_to_in(s))} in")
    return DistanceResult(
        device=device,
        distance_mm=s,
        distance_in=mm_to_in(s),
        k_mm_per_s=float(k),
        c_mm=_tidy(c),
        t_s=_tidy(t),
        governed_by=governed_by,
        derivation=d.build(),
    )


def _hand_procedure(
    d: DerivationBuilder, table: _Table, t: float, c: float, label: str
) -> tuple[float, float, str]:
    """K = 2000 mm/s, at least 100 mm; above 500 mm recompute with K = 1600, at least 500."""
    k1 = d.const(table["k.hand_arm"])
    s_min = d.const(table["curtain.s_min_k2000"])
    switch = d.const(table["curtain.s_switch_k1600"])
    s1 = k1 * t + c
    d.step(f"{label} = {k1} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s1)} mm  (K = {k1} mm/s)")
    if s1 <= switch:
        if s1 < s_min:
            d.step(f"{_n(s1)} mm is below the {s_min} mm minimum → {label} = {s_min} mm")
            return float(s_min), k1, f"K = {k1} mm/s, raised to the {s_min} mm minimum"
        d.step(f"{_n(s1)} mm ≤ {switch} mm → K = {k1} mm/s stands")
        return s1, k1, f"K = {k1} mm/s"
    k2 = d.const(table["k.body"])
    s2 = k2 * t + c
    d.step(
        f"{_n(s1)} mm > {switch} mm → recompute with K = {k2} mm/s: "
        f"{label} = {k2} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s2)} mm"
    )
    if s2 < switch:
        d.step(f"{_n(s2)} mm is below the {switch} mm minimum for K = {k2} → {label} = {switch} mm")
        return float(switch), k2, f"K = {k2} mm/s, raised to the {switch} mm minimum"
    d.step(f"{_n(s2)} mm ≥ {switch} mm → K = {k2} mm/s stands")
    return s2, k2, f"K = {k2} mm/s (S with K = {k1} mm/s exceeded {switch} mm)"


def _reach_over_inputs(
    hazard_height_mm: float | None,
    top_beam_height_mm: float | None,
    reach_over_c_mm: float | None,
) -> tuple[float, float, float] | None:
    """The three reach-over values, all or none."""
    if hazard_height_mm is None and top_beam_height_mm is None and reach_over_c_mm is None:
        return None
    together = (
        "is needed for the reach-over check, which takes hazard_height_mm, "
        "top_beam_height_mm and reach_over_c_mm together: give "
    )
    if hazard_height_mm is None:
        raise InputError(
            "hazard_height_mm", together + "the height a of the hazard above the reference plane"
        )
    if top_beam_height_mm is None:
        raise InputError(
            "top_beam_height_mm",
            together + "the height b of the top beam above the reference plane",
        )
    if reach_over_c_mm is None:
        raise InputError(
            "reach_over_c_mm",
            together + f"C_RO read from {REACH_OVER_TABLE} for these heights "
            "(the register does not hold that table)",
        )
    a = require_finite("hazard_height_mm", hazard_height_mm, minimum=0.0, unit="mm")
    b = require_finite("top_beam_height_mm", top_beam_height_mm, minimum=0.0, unit="mm")
    c = require_finite("reach_over_c_mm", reach_over_c_mm, minimum=0.0, unit="mm")
    return a, b, c


# --- ISO 13855 distances ---------------------------------------------------------


def light_curtain(
    stopping_time_s: float,
    response_time_s: float,
    resolution_mm: float,
    *,
    hazard_height_mm: float | None = None,
    top_beam_height_mm: float | None = None,
    reach_over_c_mm: float | None = None,
    edition: str | None = None,
) -> DistanceResult:
    """Light curtain with a vertical field, normal approach (ISO 13855 6.2).

    d ≤ 40 mm: S = 2000·T + 8(d − 14), C ≥ 0, S ≥ 100 mm; if S > 500 mm,
    S = 1600·T + 8(d − 14), S ≥ 500 mm. 40 < d ≤ 70 mm: S = 1600·T + 850.
    With the three reach-over values, S = max(S_RT, S_RO), S_RO = K·T + C_RO,
    C_RO read by the caller from the standard's reach-over table.
    """
    d, table = _start(
        "Safety distance, light curtain (normal approach), ISO 13855",
        "S = K × T + C;  S = max(S_RT, S_RO) when reach over the top is checked",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "light curtain")
    d_hand = table.value("curtain.d_max_hand")
    d_body = table.value("curtain.d_max_body")
    res = require_finite("resolution_mm", resolution_mm, unit="mm")
    if res <= 0:
        raise InputError(
            "resolution_mm",
            f"must be greater than 0 mm, got {_n(res)} mm; the light-curtain formulas accept "
            f"a detection capability 0 < d ≤ {d_body} mm",
        )
    if res > d_body:
        raise InputError(
            "resolution_mm",
            f"d = {_n(res)} mm is above {d_body} mm: a device that coarse does not detect a "
            "hand or an arm, so the light-curtain formulas do not apply (they accept "
            f"0 < d ≤ {d_body} mm); for separate beams use the multi-beam device",
        )
    ro = _reach_over_inputs(hazard_height_mm, top_beam_height_mm, reach_over_c_mm)
    d.input(
        "detection capability d",
        res,
        "mm",
        note="effective value; with floating blanking it grows by the blanked size [practice]",
    )

    if res <= d.const(table["curtain.d_max_hand"]):
        factor = d.const(table["curtain.c_factor"])
        offset = d.const(table["curtain.c_d_offset"])
        c_raw = factor * (res - offset)
        c = max(0.0, c_raw)
        if c_raw < 0:
            d.step(
                f"C = {factor} × ({_n(res)} mm − {offset} mm) = {_n(c_raw)} mm → 0 mm "
                "(C is never below 0)"
            )
        else:
            d.step(f"C = {factor} × ({_n(res)} mm − {offset} mm) = {_n(c)} mm")
        s_rt, k_rt, how_rt = _hand_procedure(d, table, t, c, "S_RT")
    else:
        d.const(table["curtain.d_max_body"])
        k_rt = d.const(table["k.body"])
        c = float(d.const(table["curtain.c_body"]))
        d.step(f"{d_hand} mm < d = {_n(res)} mm ≤ {d_body} mm → C = {_n(c)} mm, K = {k_rt} mm/s")
        s_rt = k_rt * t + c
        d.step(f"S_RT = {k_rt} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s_rt)} mm")
        how_rt = f"K = {k_rt} mm/s, C = {_n(c)} mm"

    if ro is None:
        d.warn(
            "Reaching over the top of the field was not checked: the standard takes "
            "S = max(S_RT, S_RO). Give the hazard height, the top-beam height and C_RO "
            f"from {REACH_OVER_TABLE} to check it."
        )
        return _result(d, "light-curtain", s_rt, k_rt, c, t, f"reach-through, {how_rt}")

    a, b, c_ro = ro
    d.input("height of the hazard a", a, "mm")
    d.input("height of the top beam b", b, "mm")
    d.input(
        "C_RO reach-over allowance",
        c_ro,
        "mm",
        note=f"given by the user, read from {REACH_OVER_TABLE}; not held by the register",
    )
    if res <= d_hand:
        d.step(
            "Reach over: the same K procedure as for reach-through is applied "
            "[std, from memory; to be checked]"
        )
        s_ro, k_ro, how_ro = _hand_procedure(d, table, t, c_ro, "S_RO")
    else:
        k_ro = k_rt
        s_ro = k_ro * t + c_ro
        d.step(f"S_RO = {k_ro} mm/s × {_n(t)} s + {_n(c_ro)} mm = {_n(s_ro)} mm")
        how_ro = f"K = {k_ro} mm/s"
    if s_ro > s_rt:
        d.step(f"S = max(S_RT, S_RO) = max({_n(s_rt)}, {_n(s_ro)}) mm → reach over governs")
        return _result(
            d, "light-curtain", s_ro, k_ro, c_ro, t, f"reach-over (C_RO from the user), {how_ro}"
        )
    d.step(f"S = max(S_RT, S_RO) = max({_n(s_rt)}, {_n(s_ro)}) mm → reach through governs")
    return _result(d, "light-curtain", s_rt, k_rt, c, t, f"reach-through, {how_rt}")


def multi_beam(
    stopping_time_s: float,
    response_time_s: float,
    beams: int,
    *,
    edition: str | None = None,
) -> DistanceResult:
    """Multi-beam device (body detection): S = 1600·T + 850; one beam at 750 mm: C = 1200."""
    d, table = _start(
        "Safety distance, multi-beam device, ISO 13855",
        "S = K × T + C",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "multi-beam device")
    if isinstance(beams, bool) or not isinstance(beams, int) or not 1 <= beams <= 4:
        raise InputError(
            "beams",
            f"must be 1, 2, 3 or 4, got {beams!r}: the standard gives the beam heights for "
            "2, 3 and 4 beams and a single beam at 750 mm; for a device with closely spaced "
            "beams use its detection capability with the light-curtain device",
        )
    d.input("number of beams", beams)
    k = d.const(table["multibeam.k"])
    if beams == 1:
        c = float(d.const(table["single_beam.c"]))
        height = d.const(table["single_beam.height"])
        d.step(f"one beam → C = {_n(c)} mm")
        d.warn(f"Recommended: the single beam at {height} mm above the reference plane.")
    else:
        c = float(d.const(table["multibeam.c"]))
        heights = d.const(table[f"beams.{beams}"])
        d.step(f"{beams} beams → C = {_n(c)} mm")
        shown = ", ".join(str(h) for h in heights)
        d.warn(f"Recommended beam heights above the reference plane for {beams} beams: {shown} mm.")
    if beams <= 2:
        d.warn(
            "With one or two beams a person can crawl under or step over the beams; use them "
            "only where the risk assessment allows it [practice]."
        )
    s = k * t + c
    d.step(f"S = {k} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s)} mm")
    return _result(d, "multi-beam", s, k, c, t, f"K = {k} mm/s, C = {_n(c)} mm")


def parallel_approach(
    stopping_time_s: float,
    response_time_s: float,
    height_mm: float,
    resolution_mm: float,
    *,
    edition: str | None = None,
) -> DistanceResult:
    """Horizontal field at height H: S = 1600·T + (1200 − 0.4·H), C ≥ 850 mm."""
    d, table = _start(
        "Safety distance, parallel approach (horizontal field), ISO 13855",
        "S = K × T + (1200 − 0.4 × H), with 1200 − 0.4 × H ≥ 850 mm; H ≥ 15 × (d − 50)",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "protective device")
    h_max = table.value("parallel.h_max")
    h = require_finite("height_mm", height_mm, unit="mm")
    if not 0 <= h <= h_max:
        raise InputError(
            "height_mm",
            f"H = {_n(h)} mm is outside the range of the parallel-approach formula: "
            f"H must be from 0 to {h_max} mm above the reference plane",
        )
    res = require_finite("resolution_mm", resolution_mm, unit="mm")
    if res <= 0:
        raise InputError(
            "resolution_mm",
            f"must be greater than 0 mm, got {_n(res)} mm (the detection capability d)",
        )
    d.input("height of the detection zone H", h, "mm")
    d.input("detection capability d", res, "mm")
    d.const(table["parallel.h_max"])

    k = d.const(table["parallel.k"])
    base = d.const(table["parallel.c_base"])
    factor = d.const(table["parallel.h_factor"])
    c_min = d.const(table["parallel.c_min"])
    c_raw = base - factor * h
    if c_raw < c_min:
        c = float(c_min)
        d.step(f"C = {base} − {factor} × {_n(h)} mm = {_n(c_raw)} mm → {c_min} mm (C ≥ {c_min} mm)")
    else:
        c = c_raw
        d.step(f"C = {base} − {factor} × {_n(h)} mm = {_n(c)} mm")
    s = k * t + c
    d.step(f"S = {k} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s)} mm")

    df = d.const(table["parallel.d_factor"])
    off = d.const(table["parallel.d_offset"])
    h_needed = df * (res - off)
    d_allowed = h / df + off
    if h_needed <= h:
        d.step(
            f"H ≥ {df} × (d − {off}): {df} × ({_n(res)} − {off}) = {_n(h_needed)} mm ≤ {_n(h)} mm → met"
        )
    else:
        d.step(
            f"H ≥ {df} × (d − {off}): {df} × ({_n(res)} − {off}) = {_n(h_needed)} mm > {_n(h)} mm → not met"
        )
        if h_needed > h_max:
            fix = f"no height up to {h_max} mm allows d = {_n(res)} mm: use a finer device"
        else:
            fix = f"raise the field to at least {_n(h_needed)} mm or use a finer device"
        d.problem(
            f"d = {_n(res)} mm is too coarse for H = {_n(h)} mm: H ≥ {df}(d − {off}) allows at "
            f"most d = {_n(d_allowed)} mm at this height; {fix}."
        )
    crawl = d.const(table["parallel.h_crawl"])
    if h > crawl:
        d.warn(
            f"The field is higher than {crawl} mm above the reference plane: a person may "
            "crawl under it undetected; assess this risk."
        )
    return _result(d, "parallel", s, k, c, t, f"K = {k} mm/s, C = {_n(c)} mm")


def pressure_mat(
    stopping_time_s: float,
    response_time_s: float,
    *,
    edition: str | None = None,
) -> DistanceResult:
    """Pressure-sensitive mat or floor: S = 1600·T + 1200."""
    d, table = _start(
        "Safety distance, pressure-sensitive mat, ISO 13855",
        "S = K × T + C",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "mat and its control unit")
    k = d.const(table["mat.k"])
    c = float(d.const(table["mat.c"]))
    s = k * t + c
    d.step(f"S = {k} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s)} mm")
    d.warn("S is measured from the hazard to the outer edge of the mat's sensing area.")
    return _result(d, "mat", s, k, c, t, f"K = {k} mm/s, C = {_n(c)} mm")


def two_hand(
    stopping_time_s: float,
    response_time_s: float,
    shielded: bool = False,
    *,
    edition: str | None = None,
) -> DistanceResult:
    """Two-hand control device: S = 1600·T + 250; C = 0 with shielding; S ≥ 100 mm."""
    d, table = _start(
        "Safety distance, two-hand control device, ISO 13855",
        "S = K × T + C, at least the minimum distance",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "two-hand control device")
    if not isinstance(shielded, bool):
        raise InputError("shielded", f"must be true or false, got {shielded!r}")
    d.input(
        "shielded",
        shielded,
        note="shielding removes the risk of hands encroaching on the hazard before release",
    )
    k = d.const(table["two_hand.k"])
    if shielded:
        c = float(d.const(table["two_hand.c_shielded"]))
        d.step(f"shielded → C = {_n(c)} mm")
    else:
        c = float(d.const(table["two_hand.c"]))
        d.step(f"not shielded → C = {_n(c)} mm")
    s_min = d.const(table["two_hand.s_min"])
    s = k * t + c
    d.step(f"S = {k} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s)} mm")
    how = f"K = {k} mm/s, C = {_n(c)} mm"
    if s < s_min:
        d.step(f"{_n(s)} mm is below the {s_min} mm minimum → S = {s_min} mm")
        s = float(s_min)
        how += f", raised to the {s_min} mm minimum"
    d.warn(
        "A two-hand control protects only the person using it; anyone else near the hazard "
        "needs another safeguard [practice]."
    )
    return _result(d, "two-hand", s, k, c, t, how)


def interlocked_guard(
    stopping_time_s: float,
    response_time_s: float,
    opening_c_mm: float | None = None,
    *,
    edition: str | None = None,
) -> DistanceResult:
    """Interlocking guard without guard locking: S = 1600·T + C.

    C is the reach-through allowance for the guard opening from ISO 13857, which
    the register does not hold: the caller supplies it.
    """
    d, table = _start(
        "Safety distance, interlocking guard without guard locking, ISO 13855",
        "S = K × T + C, C from the ISO 13857 reach-through values for the opening",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "interlocking device")
    if opening_c_mm is None:
        raise InputError(
            "opening_c_mm",
            "is required: give C, the reach-through allowance for the guard opening read "
            "from ISO 13857 (0 only where no part of the body can reach past the guard plane)",
        )
    c = require_finite("opening_c_mm", opening_c_mm, minimum=0.0, unit="mm")
    d.input(
        "C reach-through allowance for the opening",
        c,
        "mm",
        note="given by the user from ISO 13857; not held by the register",
    )
    k = d.const(table["guard.k"])
    s = k * t + c
    d.step(f"S = {k} mm/s × {_n(t)} s + {_n(c)} mm = {_n(s)} mm")
    d.warn(
        "If the guard cannot be placed at least this far from the hazard, guard locking is "
        "needed (ISO 14119)."
    )
    return _result(
        d, "interlocked-guard", s, k, c, t, f"K = {k} mm/s, C = {_n(c)} mm (from the user)"
    )


# --- guard locking ----------------------------------------------------------------


def guard_locking_needed(
    stopping_time_s: float,
    distance_mm: float | None = None,
    *,
    response_time_s: float = 0.0,
    time_to_reach_s: float | None = None,
    opening_c_mm: float | None = None,
    opening_time_s: float = 0.0,
    edition: str | None = None,
) -> GuardLockingResult:
    """Guard locking is needed when the hazard can still move when a person reaches it.

    T = stopping time of the machine + response time of the interlock. The time to
    reach the hazard after opening is either the caller's ``time_to_reach_s`` or
    ``opening_time_s + (distance_mm − C) / 1600 mm/s``, C being the reach-through
    allowance of the opening (ISO 13857, given by the caller; 0 if not given).
    Guard locking is needed when T exceeds the time to reach; equality is the limit.
    """
    d, table = _start(
        "Guard locking need, interlocking guard (ISO 14119, ISO 13855 approach speed)",
        "guard locking needed when T > time to reach; time to reach = t_open + (distance − C) / K",
        edition,
    )
    t = _overall_time(d, stopping_time_s, response_time_s, "interlocking device")
    if (distance_mm is None) == (time_to_reach_s is None):
        raise InputError(
            "distance_mm",
            "give exactly one of distance_mm (the distance from the guard opening to the "
            "hazard) and time_to_reach_s (your own time to reach the hazard after opening)",
        )
    if response_time_s == 0:
        d.warn(
            "Response time of the interlocking device taken as 0 s: include the response of "
            "the interlock and the control in T."
        )
    dist: float | None = None
    if time_to_reach_s is not None:
        if opening_c_mm is not None or opening_time_s != 0:
            raise InputError(
                "time_to_reach_s",
                "is the whole time to reach the hazard: give opening_c_mm and opening_time_s "
                "only with distance_mm",
            )
        reach = require_finite("time_to_reach_s", time_to_reach_s, minimum=0.0, unit="s")
        d.input("time to reach the hazard after opening", reach, "s", note="given by the user")
        d.step(f"time to reach = {_n(reach)} s (given)")
    else:
        assert distance_mm is not None  # exactly one of the two was given
        dist = require_finite("distance_mm", distance_mm, minimum=0.0, unit="mm")
        t_open = _time("opening_time_s", opening_time_s)
        d.input("distance from the guard opening to the hazard", dist, "mm")
        k = d.const(table["guard.k"])
        if opening_c_mm is None:
            c = 0.0
            d.warn(
                "No reach-through allowance C given: the distance must then be the shortest "
                "path a body part can take from the open guard to the hazard; otherwise give "
                "C for the opening from ISO 13857."
            )
        else:
            c = require_finite("opening_c_mm", opening_c_mm, minimum=0.0, unit="mm")
            d.input(
                "C reach-through allowance for the opening",
                c,
                "mm",
                note="from ISO 13857, given by the user",
            )
        path = max(0.0, dist - c)
        if dist - c <= 0:
            d.step(
                f"distance − C = {_n(dist)} mm − {_n(c)} mm ≤ 0 → the hazard is within reach "
                "as soon as the guard opens"
            )
        else:
            d.step(f"path to the hazard = {_n(dist)} mm − {_n(c)} mm = {_n(path)} mm")
        reach = t_open + path / k
        if t_open:
            d.input(
                "opening time of the guard", t_open, "s", note="credit taken, given by the user"
            )
            d.warn(
                f"Credit is taken for {_n(t_open)} s of guard opening time: valid only if the "
                "interlock signals the stop at the start of the opening movement and no one "
                "can reach in sooner; measure it, do not estimate it [practice]."
            )
            d.step(f"time to reach = {_n(t_open)} s + {_n(path)} mm / {k} mm/s = {_n(reach)} s")
        else:
            d.step(f"time to reach = {_n(path)} mm / {k} mm/s = {_n(reach)} s")
        s_needed = k * t + c
        d.step(
            f"distance needed without guard locking: S = {k} mm/s × {_n(t)} s + {_n(c)} mm "
            f"= {_n(s_needed)} mm" + (" (less the credited opening time)" if t_open else "")
        )
    reach = _tidy(reach)
    t = _tidy(t)
    needed = t > reach
    if needed:
        d.step(f"T = {_n(t)} s > time to reach {_n(reach)} s → guard locking is needed")
    else:
        d.step(f"T = {_n(t)} s ≤ time to reach {_n(reach)} s → guard locking is not needed")
    return GuardLockingResult(
        guard_locking_needed=needed,
        time_to_reach_s=reach,
        stopping_time_s=t,
        margin_s=_tidy(reach - t),
        distance_mm=dist,
        derivation=d.build(),
    )


# --- ISO 13854 gaps ---------------------------------------------------------------


def _gap_start(
    body_part: str, edition: str | None, title: str
) -> tuple[DerivationBuilder, str, float]:
    part = require_choice("body_part", body_part, BODY_PARTS)
    table = pick(iso13854.EDITIONS, edition, iso13854.DEFAULT_EDITION)
    d = DerivationBuilder(
        title, "gap ≥ minimum gap for the body part (ISO 13854)", cautions.DISTANCE
    )
    d.input("body part", part, note=iso13854.GAPS[part][1])
    minimum = float(d.const(table[f"gap.{part}"]))
    d.step(f"minimum gap for the {part} = {_n(minimum)} mm = {_n(mm_to_in(minimum))} in")
    d.warn(
        f"The gap avoids crushing of the {part} only where no larger part of the body can "
        "enter; check the other parts, or keep the gap out of reach (ISO 13857)."
    )
    return d, part, minimum


def minimum_gap(body_part: str, *, edition: str | None = None) -> GapResult:
    """The ISO 13854 minimum gap for one body part."""
    d, part, minimum = _gap_start(body_part, edition, "Minimum gap to avoid crushing, ISO 13854")
    return GapResult(body_part=part, gap_mm=minimum, gap_in=mm_to_in(minimum), derivation=d.build())


def check_gap(body_part: str, gap_mm: float, *, edition: str | None = None) -> GapCheckResult:
    """Pass when the gap on the machine is at least the ISO 13854 minimum for the body part."""
    d, part, minimum = _gap_start(body_part, edition, "Gap check against crushing, ISO 13854")
    gap = require_finite("gap_mm", gap_mm, minimum=0.0, unit="mm")
    d.input("gap on the machine", gap, "mm")
    passed = gap >= minimum
    if passed:
        d.step(f"{_n(gap)} mm ≥ {_n(minimum)} mm → passes")
    else:
        d.step(f"{_n(gap)} mm < {_n(minimum)} mm → fails")
        d.problem(
            f"The gap of {_n(gap)} mm is narrower than the {_n(minimum)} mm minimum for the "
            f"{part}: widen it to at least {_n(minimum)} mm, or keep the {part} from reaching "
            "it (ISO 13857)."
        )
    return GapCheckResult(
        body_part=part,
        gap_mm=gap,
        gap_in=mm_to_in(gap),
        minimum_gap_mm=minimum,
        minimum_gap_in=mm_to_in(minimum),
        passed=passed,
        derivation=d.build(),
    )


# --- dispatcher -------------------------------------------------------------------

# device → (required parameters, optional parameters), with what each one is
_PARAMS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "light-curtain": (
        ("resolution_mm",),
        ("hazard_height_mm", "top_beam_height_mm", "reach_over_c_mm"),
    ),
    "multi-beam": (("beams",), ()),
    "parallel": (("height_mm", "resolution_mm"), ()),
    "mat": ((), ()),
    "two-hand": ((), ("shielded",)),
    "interlocked-guard": (("opening_c_mm",), ()),
}

_WHAT = {
    "resolution_mm": "the detection capability d of the device, mm",
    "height_mm": "the height H of the detection zone above the reference plane, mm",
    "beams": "the number of beams, 1 to 4",
    "opening_c_mm": "C for the guard opening from ISO 13857, mm",
}


_V = TypeVar("_V")


def _need(device: str, name: str, value: _V | None) -> _V:
    if value is None:
        raise InputError(name, f"is required for device {device!r}: {_WHAT[name]}")
    return value


def safety_distance(
    device: str,
    stopping_time_s: float,
    response_time_s: float,
    resolution_mm: float | None = None,
    height_mm: float | None = None,
    shielded: bool = False,
    *,
    beams: int | None = None,
    opening_c_mm: float | None = None,
    hazard_height_mm: float | None = None,
    top_beam_height_mm: float | None = None,
    reach_over_c_mm: float | None = None,
    edition: str | None = None,
) -> DistanceResult:
    """The safety distance for one kind of device; refuses parameters it does not use."""
    dev = require_choice("device", device, DEVICES)
    given: dict[str, object] = {
        "resolution_mm": resolution_mm,
        "height_mm": height_mm,
        "shielded": shielded if shielded else None,
        "beams": beams,
        "opening_c_mm": opening_c_mm,
        "hazard_height_mm": hazard_height_mm,
        "top_beam_height_mm": top_beam_height_mm,
        "reach_over_c_mm": reach_over_c_mm,
    }
    required, optional = _PARAMS[dev]
    for name, value in given.items():
        if value is not None and name not in required and name not in optional:
            users = ", ".join(repr(k) for k, (r, o) in _PARAMS.items() if name in r or name in o)
            raise InputError(name, f"does not apply to device {dev!r}; it is used by {users}")
    ts, tr = stopping_time_s, response_time_s
    if dev == "light-curtain":
        return light_curtain(
            ts,
            tr,
            _need(dev, "resolution_mm", resolution_mm),
            hazard_height_mm=hazard_height_mm,
            top_beam_height_mm=top_beam_height_mm,
            reach_over_c_mm=reach_over_c_mm,
            edition=edition,
        )
    if dev == "multi-beam":
        return multi_beam(ts, tr, _need(dev, "beams", beams), edition=edition)
    if dev == "parallel":
        return parallel_approach(
            ts,
            tr,
            _need(dev, "height_mm", height_mm),
            _need(dev, "resolution_mm", resolution_mm),
            edition=edition,
        )
    if dev == "mat":
        return pressure_mat(ts, tr, edition=edition)
    if dev == "two-hand":
        return two_hand(ts, tr, shielded, edition=edition)
    return interlocked_guard(ts, tr, _need(dev, "opening_c_mm", opening_c_mm), edition=edition)
