"""Engineering the safeguard: safeguard records, press data, stopping-time
measurements with their distance checks, safety-function PL verification,
the component library, option comparison and corrective actions.

Every check is computed by ``riskreg.engineering``; its result (with the
derivation) is stored beside the record it judged, so pages, PDFs and exports
show the same working.
"""

from __future__ import annotations

import datetime as dt
import os
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, joinedload

from riskreg.engineering import distance, espe, interlock, pl, stopping, two_hand, us_distance
from riskreg.engineering.derivation import InputError, Result
from riskreg.engineering.units import MM_PER_IN
from riskreg.model import (
    BrakeMonitorSetting,
    Component,
    CorrectiveAction,
    DistanceCheck,
    Hazard,
    HazardAccess,
    Machine,
    PressProfile,
    Safeguard,
    SafeguardOption,
    SafetyFunction,
    SafetyFunctionPart,
    StoppingTimeMeasurement,
)
from riskreg.vocab import MEASURE_KINDS

from . import evidence
from .errors import NotFound, ValidationError
from .register import _commit, required_level

SAFEGUARD_KINDS = {
    "two_hand_control": "Two-hand control device",
    "light_curtain": "Light curtain",
    "multi_beam": "Multi-beam device",
    "pressure_mat": "Pressure-sensitive mat",
    "interlocking_guard": "Interlocking guard",
    "interlocking_guard_locking": "Interlocking guard with guard locking",
    "fixed_guard": "Fixed guard (with feed opening)",
}
DISTANCE_KINDS = {
    "two_hand_control",
    "light_curtain",
    "multi_beam",
    "pressure_mat",
    "interlocking_guard",
}
SAFEGUARD_STATUSES = ("installed", "proposed", "removed")


# --- parsing helpers -------------------------------------------------------------


class _Errors:
    def __init__(self) -> None:
        self.errors: dict[str, str] = {}

    def add(self, key: str, message: str) -> None:
        self.errors.setdefault(key, message)

    def raise_if_any(self) -> None:
        if self.errors:
            raise ValidationError(self.errors)


def _num(
    data: Mapping[str, Any],
    key: str,
    errs: _Errors,
    *,
    lo: float | None = None,
    hi: float | None = None,
    required: bool = False,
    what: str = "",
    exclusive_lo: bool = False,
) -> float | None:
    raw = data.get(key)
    if raw in (None, ""):
        if required:
            errs.add(key, f"Enter {what or key.replace('_', ' ')}.")
        return None
    try:
        v = float(raw)
    except (TypeError, ValueError):
        errs.add(key, f"{what or key.replace('_', ' ').capitalize()} must be a number.")
        return None
    if v != v or v in (float("inf"), float("-inf")):
        errs.add(key, "Enter a finite number.")
        return None
    too_low = lo is not None and (v <= lo if exclusive_lo else v < lo)
    if too_low or (hi is not None and v > hi):
        lo_txt = f"more than {lo:g}" if exclusive_lo else f"{lo:g}"
        rng = f"from {lo_txt} to {hi:g}" if hi is not None else f"at least {lo_txt}"
        errs.add(key, f"{(what or key.replace('_', ' ')).capitalize()} must be {rng}; got {v:g}.")
        return None
    return v


def _int(
    data: Mapping[str, Any],
    key: str,
    errs: _Errors,
    lo: int,
    hi: int,
    required: bool = False,
    what: str = "",
) -> int | None:
    v = _num(data, key, errs, lo=lo, hi=hi, required=required, what=what)
    if v is None:
        return None
    if v != int(v):
        errs.add(key, f"{(what or key).capitalize()} must be a whole number.")
        return None
    return int(v)


def _bool(data: Mapping[str, Any], key: str) -> bool:
    v = data.get(key)
    return v in (True, "y", "yes", "on", "true", "1", 1)


def _choice(
    data: Mapping[str, Any],
    key: str,
    allowed: tuple[Any, ...],
    errs: _Errors,
    required: bool = True,
) -> Any:
    v = data.get(key)
    if v in (None, "") and not required:
        return None
    if v not in allowed:
        errs.add(key, f"Choose one of: {', '.join(str(a) for a in allowed)}.")
        return None
    return v


# --- safeguard records -------------------------------------------------------------


def _validate_parameters(kind: str, data: Mapping[str, Any], errs: _Errors) -> dict[str, Any]:
    p: dict[str, Any] = {}
    if kind == "two_hand_control":
        for key in (
            "simultaneous",
            "cessation",
            "reinitiation",
            "shrouded",
            "shielded",
            "anti_repeat",
            "series_wired",
        ):
            p[key] = _bool(data, key)
        window_ms = _num(
            data,
            "synchronous_window_ms",
            errs,
            lo=0,
            hi=10000,
            what="the synchronous actuation window in ms",
        )
        p["synchronous_window_s"] = None if window_ms is None else window_ms / 1000
        p["category"] = _choice(data, "category", ("B", "1", "2", "3", "4"), errs)
        p["spacing_mm"] = _num(
            data, "spacing_mm", errs, lo=0, hi=5000, what="the spacing between the actuators in mm"
        )
        if p["spacing_mm"] is None and not p["shrouded"]:
            errs.add(
                "spacing_mm",
                "Enter the spacing between the actuators, or tick "
                "'shrouded' if each actuator is shrouded.",
            )
        p["operators"] = _int(
            data, "operators", errs, 1, 20, required=True, what="the number of operators"
        )
        p["stations"] = _int(
            data, "stations", errs, 1, 20, required=True, what="the number of control stations"
        )
        p["actuators_per_station"] = _int(
            data, "actuators_per_station", errs, 1, 2, required=True, what="actuators per station"
        )
    elif kind in ("light_curtain", "multi_beam"):
        p["espe_type"] = _int(
            data, "espe_type", errs, 2, 4, required=True, what="the IEC 61496 type"
        )
        if kind == "light_curtain":
            p["resolution_mm"] = _num(
                data,
                "resolution_mm",
                errs,
                lo=0,
                hi=70,
                required=True,
                exclusive_lo=True,
                what="the detection capability (resolution) in mm",
            )
            p["blanking"] = _choice(data, "blanking", ("none", "fixed", "floating"), errs)
            p["blanked_size_mm"] = _num(data, "blanked_size_mm", errs, lo=0, hi=200) or 0.0
        else:
            p["beams"] = _int(data, "beams", errs, 1, 4, required=True, what="the number of beams")
        p["restart_interlock"] = _bool(data, "restart_interlock")
        p["person_can_stand_inside"] = _bool(data, "person_can_stand_inside")
        p["muting"] = _bool(data, "muting")
    elif kind in ("interlocking_guard", "interlocking_guard_locking"):
        p["device_type"] = _int(
            data, "device_type", errs, 1, 4, required=True, what="the ISO 14119 device type"
        )
        coding = data.get("coding") or None
        if coding not in (None, "low", "medium", "high"):
            errs.add("coding", "Choose a coding level: low, medium or high (coded types only).")
        p["coding"] = coding
        p["motivation_to_defeat"] = _choice(
            data, "motivation_to_defeat", ("low", "medium", "high"), errs
        )
        measures = data.get("measures_against_defeat") or []
        if isinstance(measures, str):
            measures = [m.strip() for m in measures.split(",") if m.strip()]
        p["measures_against_defeat"] = list(measures)
        p["switches_in_series"] = _int(data, "switches_in_series", errs, 1, 50) or 1
        p["guards_in_series"] = _int(data, "guards_in_series", errs, 1, 50) or 1
        p["claimed_dc_percent"] = _num(data, "claimed_dc_percent", errs, lo=0, hi=99.99)
        p["opening_c_mm"] = _num(
            data,
            "opening_c_mm",
            errs,
            lo=0,
            hi=2000,
            what="C for the opening (ISO 13857 reach-through) in mm",
        )
    elif kind == "fixed_guard":
        p["opening_mm"] = _num(
            data, "opening_mm", errs, lo=0, hi=1000, what="the largest opening in mm"
        )
        p["opening_distance_mm"] = _num(
            data,
            "opening_distance_mm",
            errs,
            lo=0,
            hi=2000,
            what="the opening's distance from the danger point",
        )
    return p


def save_safeguard(
    session: Session, machine: Machine, data: Mapping[str, Any], safeguard: Safeguard | None = None
) -> Safeguard:
    errs = _Errors()
    kind = safeguard.kind if safeguard else data.get("kind")
    if kind not in SAFEGUARD_KINDS:
        errs.add("kind", f"Choose a kind: {', '.join(SAFEGUARD_KINDS.values())}.")
        errs.raise_if_any()
    label = str(data.get("label") or "").strip()[:200]
    if not label:
        errs.add(
            "label",
            "Name the safeguard as people on the floor know it (e.g. 'front light curtain').",
        )
    response_ms = _num(
        data, "response_time_ms", errs, lo=0, hi=10000, what="the device's response time in ms"
    )
    installed = _num(
        data, "installed_distance_mm", errs, lo=0, hi=10000, what="the installed distance in mm"
    )
    status = data.get("status") or "installed"
    if status not in SAFEGUARD_STATUSES:
        errs.add("status", f"Choose a status: {', '.join(SAFEGUARD_STATUSES)}.")
    component = None
    if data.get("component_id") not in (None, ""):
        try:
            component = session.get(Component, int(data["component_id"]))
        except (TypeError, ValueError):
            component = None
        if component is None:
            errs.add("component_id", "Choose a part from the component library, or none.")
    measure = None
    if data.get("measure_id") not in (None, ""):
        try:
            mid = int(data["measure_id"])
        except (TypeError, ValueError):
            mid = -1
        measure = next((x for a in machine.assessments for x in a.measures if x.id == mid), None)
        if measure is None:
            errs.add("measure_id", "Choose one of this machine's protective measures, or none.")
    params = _validate_parameters(str(kind), data, errs)
    if kind in DISTANCE_KINDS and installed is None and status == "installed":
        errs.add(
            "installed_distance_mm",
            "Enter the distance measured from the device to the nearest danger point, in mm.",
        )
    errs.raise_if_any()
    if response_ms is None and component is not None and component.response_time_s is not None:
        response_ms = component.response_time_s * 1000
    if safeguard is None:
        safeguard = Safeguard(machine=machine, kind=str(kind))
        session.add(safeguard)
    safeguard.label = label
    safeguard.response_time_s = (response_ms or 0.0) / 1000
    safeguard.installed_distance_mm = installed
    safeguard.status = status
    safeguard.component = component
    if measure is not None or "measure_id" in data:
        safeguard.measure = measure
    safeguard.parameters = params
    _commit(session)
    return safeguard


def safeguards_of(machine: Machine) -> list[Safeguard]:
    session = Session.object_session(machine)
    assert session is not None
    return list(
        session.scalars(
            select(Safeguard).where(Safeguard.machine_id == machine.id).order_by(Safeguard.id)
        )
    )


def load_safeguard(session: Session, safeguard_id: int) -> Safeguard:
    s = session.get(Safeguard, safeguard_id)
    if s is None:
        raise NotFound(f"No safeguard number {safeguard_id}.")
    return s


# --- press data ----------------------------------------------------------------------


def save_press_profile(session: Session, machine: Machine, data: Mapping[str, Any]) -> PressProfile:
    errs = _Errors()
    clutch = _choice(data, "clutch", ("part", "full"), errs)
    points = _int(data, "engaging_points", errs, 1, 12, what="engaging points per revolution")
    rev_ms = _num(
        data,
        "revolution_time_ms",
        errs,
        lo=0,
        hi=60000,
        exclusive_lo=True,
        what="the time of one crankshaft revolution in ms",
    )
    if clutch == "full" and points is None:
        errs.add(
            "engaging_points", "A full-revolution clutch needs its engaging points per revolution."
        )
    errs.raise_if_any()
    profile = press_profile(machine)
    if profile is None:
        profile = PressProfile(machine=machine)
        session.add(profile)
    profile.clutch = clutch
    profile.engaging_points = points
    profile.revolution_time_s = None if rev_ms is None else rev_ms / 1000
    profile.brake_monitor = _bool(data, "brake_monitor")
    profile.control_reliable = _bool(data, "control_reliable")
    profile.anti_repeat = _bool(data, "anti_repeat")
    profile.single_stroke = _bool(data, "single_stroke")
    _commit(session)
    return profile


def press_profile(machine: Machine) -> PressProfile | None:
    session = Session.object_session(machine)
    assert session is not None
    return (
        session.execute(
            select(PressProfile)
            .where(PressProfile.machine_id == machine.id)
            .options(joinedload(PressProfile.monitor_settings))
        )
        .unique()
        .scalar_one_or_none()
    )


def add_monitor_setting(
    session: Session, machine: Machine, data: Mapping[str, Any]
) -> BrakeMonitorSetting:
    profile = press_profile(machine)
    errs = _Errors()
    if profile is None:
        errs.add("setpoint_ms", "Record the press data (clutch, brake monitor) first.")
        errs.raise_if_any()
    setpoint = _num(
        data,
        "setpoint_ms",
        errs,
        lo=0,
        hi=10000,
        exclusive_lo=True,
        required=True,
        what="the brake-monitor setpoint in ms",
    )
    on = _date(data, "set_on", errs)
    errs.raise_if_any()
    assert profile is not None and setpoint is not None and on is not None
    row = BrakeMonitorSetting(
        profile=profile,
        set_on=on,
        setpoint_s=setpoint / 1000,
        set_by=str(data.get("set_by") or "")[:200],
        note=str(data.get("note") or "")[:2000],
    )
    session.add(row)
    _commit(session)
    return row


def _date(data: Mapping[str, Any], key: str, errs: _Errors) -> dt.date | None:
    raw = data.get(key)
    if isinstance(raw, dt.date):
        value = raw
    else:
        try:
            value = dt.date.fromisoformat(str(raw))
        except ValueError:
            errs.add(key, "Enter a date as YYYY-MM-DD.")
            return None
    if value > dt.date.today():
        errs.add(key, "The date is in the future; enter the day it was done.")
        return None
    if value.year < 1950:
        errs.add(key, "Enter a date after 1950.")
        return None
    return value


# --- evaluation of one safeguard against a stopping time ------------------------------


@dataclass
class Evaluation:
    """What the register concludes of one safeguard, with the results that show why."""

    safeguard: Safeguard
    results: list[tuple[str, Result]] = field(default_factory=list)
    required_mm: float | None = None
    installed_mm: float | None = None
    passed: bool | None = None
    problems: list[str] = field(default_factory=list)
    message: str = ""

    def derivations(self) -> list[dict[str, Any]]:
        return [dict(r.to_dict(), name=name) for name, r in self.results]


def _latest_monitor_s(profile: PressProfile | None) -> float | None:
    if profile is None or not profile.brake_monitor or not profile.monitor_settings:
        return None
    return profile.monitor_settings[-1].setpoint_s


def _distance_result(
    sg: Safeguard, t_stop_s: float, method: str, profile: PressProfile | None
) -> Result | None:
    p = sg.parameters
    rt = sg.response_time_s or 0.0
    if method == "US":
        if sg.kind == "two_hand_control":
            if profile is not None and profile.clutch == "full":
                if not profile.engaging_points or not profile.revolution_time_s:
                    raise InputError(
                        "press",
                        "a full-revolution press needs engaging points "
                        "and revolution time for the two-hand trip distance",
                    )
                return us_distance.two_hand_trip(profile.engaging_points, profile.revolution_time_s)
            return us_distance.two_hand_control(t_stop_s + rt)
        if sg.kind in ("light_curtain", "multi_beam"):
            monitor = _latest_monitor_s(profile)
            tbm = max(0.0, monitor - t_stop_s) if monitor is not None else 0.0
            if sg.kind == "light_curtain":
                d = float(p["resolution_mm"]) + (
                    float(p.get("blanked_size_mm") or 0) if p.get("blanking") == "floating" else 0.0
                )
                return us_distance.general(
                    t_stop_s,
                    device_time_s=rt,
                    brake_monitor_time_s=tbm,
                    object_sensitivity_in=d / MM_PER_IN,
                )
            return None
        return None
    if sg.kind == "two_hand_control":
        return distance.two_hand(t_stop_s, rt, shielded=bool(p.get("shielded")))
    if sg.kind == "light_curtain":
        d = float(p["resolution_mm"])
        if p.get("blanking") == "floating":
            d += float(p.get("blanked_size_mm") or 0)
        if d > 70:
            raise InputError(
                "resolution_mm",
                f"the effective detection capability is {d:g} mm "
                "(with blanking), above 70 mm: the curtain no "
                "longer detects a hand or an arm",
            )
        return distance.light_curtain(t_stop_s, rt, d)
    if sg.kind == "multi_beam":
        return distance.multi_beam(t_stop_s, rt, int(p["beams"]))
    if sg.kind == "pressure_mat":
        return distance.pressure_mat(t_stop_s, rt)
    if sg.kind == "interlocking_guard":
        if p.get("opening_c_mm") is None:
            raise InputError(
                "opening_c_mm",
                "enter C for the guard opening (ISO 13857 "
                "reach-through) to check the guard's distance",
            )
        return distance.interlocked_guard(t_stop_s, rt, float(p["opening_c_mm"]))
    return None


def required_pl_of(sg: Safeguard) -> str | None:
    """The highest current PLr over the hazards of the measure this safeguard implements."""
    if sg.measure is None:
        return None
    from .register import current_rating

    levels = []
    for h in sg.measure.hazards:
        r = current_rating(h, "initial")
        if r is not None and r.method == "iso13849" and not h.archived:
            levels.append(r.level)
    return max(levels) if levels else None


def evaluate(
    sg: Safeguard, t_stop_s: float | None, method: str = "ISO", profile: PressProfile | None = None
) -> Evaluation:
    """Device rules and, with a stopping time, the required against installed distance."""
    ev = Evaluation(safeguard=sg, installed_mm=sg.installed_distance_mm)
    p = sg.parameters
    try:
        if sg.kind == "two_hand_control":
            r = two_hand.evaluate_two_hand(
                bool(p.get("simultaneous")),
                bool(p.get("cessation")),
                bool(p.get("reinitiation")),
                p.get("synchronous_window_s"),
                category=str(p.get("category")),
                spacing_mm=p.get("spacing_mm"),
                shrouded=bool(p.get("shrouded")),
                operators=int(p.get("operators") or 1),
                stations=int(p.get("stations") or 1),
                actuators_per_station=int(p.get("actuators_per_station") or 2),
                anti_repeat=p.get("anti_repeat") if sg.machine.kind == "mechanical_press" else None,
                is_press=sg.machine.kind in ("mechanical_press", "hydraulic_press"),
            )
            ev.results.append(("Two-hand control type (ISO 13851)", r))
            ev.problems.extend(r.derivation.problems)
            plr = required_pl_of(sg)
            if plr is not None and (r.type_pl is None or r.type_pl < plr):
                shown = (
                    f"Type {r.type} corresponds to PL {r.type_pl}"
                    if r.type
                    else ("The device reaches no ISO 13851 type")
                )
                ev.problems.append(
                    f"{shown}, below the PLr {plr} of the hazards it guards "
                    "(ISO 13849-1 risk graph)."
                )
        if sg.kind == "light_curtain" and t_stop_s is not None:
            lc = espe.evaluate_light_curtain(
                int(p["espe_type"]),
                float(p["resolution_mm"]),
                required_pl_of(sg),
                str(p.get("blanking") or "none"),
                float(p.get("blanked_size_mm") or 0),
                bool(p.get("muting")),
                restart_interlock=bool(p.get("restart_interlock")),
                person_can_stand_inside=bool(p.get("person_can_stand_inside")),
                stopping_time_s=t_stop_s,
                response_time_s=sg.response_time_s or 0.0,
                installed_distance_mm=sg.installed_distance_mm,
            )
            ev.results.append(("Light curtain (IEC 61496 type, ISO 13855 resolution)", lc))
            ev.problems.extend(x for x in lc.derivation.problems if "short" not in x.lower())
        elif sg.kind == "light_curtain":
            ev.problems.append(
                "Record a stopping-time measurement to check the curtain's "
                "distance and restart interlock."
            )
        if sg.kind in ("interlocking_guard", "interlocking_guard_locking"):
            lock_check = t_stop_s is not None and sg.installed_distance_mm is not None
            il = interlock.evaluate_interlock(
                int(p["device_type"]),
                p.get("coding"),
                str(p["motivation_to_defeat"]),
                list(p.get("measures_against_defeat") or []),
                int(p.get("switches_in_series") or 1),
                int(p.get("guards_in_series") or 1),
                p.get("claimed_dc_percent"),
                stopping_time_s=t_stop_s if lock_check else None,
                response_time_s=(sg.response_time_s or 0.0) if lock_check else 0.0,
                distance_mm=sg.installed_distance_mm if lock_check else None,
                guard_locking=sg.kind == "interlocking_guard_locking",
            )
            ev.results.append(("Interlocking device (ISO 14119)", il))
            ev.problems.extend(il.derivation.problems)
        if t_stop_s is not None and sg.kind in DISTANCE_KINDS:
            dr = _distance_result(sg, t_stop_s, method, profile)
            if dr is not None:
                ev.results.append(("Safety distance", dr))
                ev.required_mm = float(dr.distance_mm)  # type: ignore[attr-defined]
    except InputError as exc:
        ev.problems.append(f"{exc.field}: {exc.message}")
        ev.passed = False
        ev.message = f"Cannot check: {exc.message}."
        return ev
    if ev.required_mm is not None:
        if ev.installed_mm is None:
            ev.passed = None
            ev.message = "No installed distance recorded: measure it on the machine."
        else:
            ev.passed = ev.installed_mm >= ev.required_mm
            gap = ev.installed_mm - ev.required_mm
            ev.message = (
                f"Installed {ev.installed_mm:.0f} mm, required {ev.required_mm:.0f} mm: "
                + (
                    f"{gap:.0f} mm to spare."
                    if ev.passed
                    else f"{-gap:.0f} mm short. Move the device out, reduce the stopping "
                    "time, or stop the machine until it is corrected."
                )
            )
    return ev


def _raise_action(
    session: Session,
    machine: Machine,
    safeguard: Safeguard | None,
    source: str,
    title: str,
    description: str,
    due_days: int = 7,
) -> CorrectiveAction:
    """Open an action unless the same one is already open (one per safeguard and source)."""
    existing = (
        session.scalar(
            select(CorrectiveAction).where(
                CorrectiveAction.machine_id == machine.id,
                CorrectiveAction.safeguard_id == (safeguard.id if safeguard else None),
                CorrectiveAction.source == source,
                CorrectiveAction.status == "open",
            )
        )
        if safeguard is not None
        else None
    )
    if existing is not None:
        existing.description = description
        return existing
    action = CorrectiveAction(
        machine=machine,
        safeguard=safeguard,
        source=source,
        title=title,
        description=description,
        due_on=dt.date.today() + dt.timedelta(days=due_days),
    )
    session.add(action)
    return action


# --- stopping-time measurements ---------------------------------------------------


def record_measurement(
    session: Session, machine: Machine, data: Mapping[str, Any]
) -> StoppingTimeMeasurement:
    """Record trials, compute T, check every distance-dependent safeguard; shortfalls
    open corrective actions. All in one transaction."""
    errs = _Errors()
    on = _date(data, "measured_on", errs)
    raw = data.get("trials_ms")
    trials: list[float] = []
    if isinstance(raw, str):
        parts = [x for x in raw.replace(";", ",").replace(" ", ",").split(",") if x]
    else:
        parts = list(raw or [])
    for x in parts:
        try:
            v = float(x)
        except (TypeError, ValueError):
            errs.add(
                "trials_ms",
                f"{x!r} is not a number; enter each trial in ms, "
                "separated by commas (e.g. 182, 185, 190).",
            )
            break
        if not 0 < v <= 10000:
            errs.add(
                "trials_ms",
                f"A trial of {v:g} ms is not possible; each stopping time "
                "must be more than 0 and at most 10000 ms.",
            )
            break
        trials.append(v / 1000)
    if not parts:
        errs.add("trials_ms", "Enter the measured trials in ms, separated by commas.")
    site = machine.site
    allowance = _num(data, "allowance_percent", errs, lo=0, hi=100)
    if allowance is None:
        allowance = site.stop_time_allowance_percent or 0.0
    limit_ms = _num(data, "brake_monitor_limit_ms", errs, lo=0, hi=10000, exclusive_lo=True)
    instrument = None
    if data.get("instrument_id") not in (None, ""):
        from riskreg.model import Instrument

        try:
            instrument = session.get(Instrument, int(data["instrument_id"]))
        except (TypeError, ValueError):
            instrument = None
        if instrument is None or instrument.site_id != machine.site_id:
            errs.add("instrument_id", "Choose one of this site's instruments.")
    errs.raise_if_any()
    try:
        st = stopping.stopping_time_from_trials(
            trials,
            allowance_percent=allowance,
            brake_monitor_limit_s=None if limit_ms is None else limit_ms / 1000,
        )
    except InputError as exc:
        raise ValidationError({"trials_ms": exc.message}) from None
    m = StoppingTimeMeasurement(
        machine=machine,
        measured_on=on,
        instrument=str(data.get("instrument") or "")[:200],
        position=str(data.get("position") or "")[:200],
        measured_by=str(data.get("measured_by") or "")[:200],
        trials_s=trials,
        allowance_percent=allowance,
        brake_monitor_limit_s=None if limit_ms is None else limit_ms / 1000,
        t_used_s=st.t_used_s,
        derivation=st.to_dict(),
        notes=str(data.get("notes") or "")[:5000],
    )
    if instrument is not None:
        m.instrument_id = instrument.id
    session.add(m)
    profile = press_profile(machine)
    for sg in safeguards_of(machine):
        if sg.status != "installed" or sg.kind not in DISTANCE_KINDS:
            continue
        ev = evaluate(sg, st.t_used_s, site.distance_method, profile)
        session.add(
            DistanceCheck(
                measurement=m,
                safeguard=sg,
                method=site.distance_method,
                required_mm=ev.required_mm,
                installed_mm=ev.installed_mm,
                passed=ev.passed,
                message=ev.message,
                derivation={"results": ev.derivations(), "problems": ev.problems},
            )
        )
        if ev.passed is False:
            _raise_action(
                session,
                machine,
                sg,
                "distance",
                f"{sg.label}: safety distance too short for the measured stopping time",
                f"Measured on {on}: T = {st.t_used_s * 1000:.0f} ms. {ev.message}",
            )
    _commit(session)
    return m


def measurements_of(machine: Machine) -> list[StoppingTimeMeasurement]:
    session = Session.object_session(machine)
    assert session is not None
    return list(
        session.scalars(
            select(StoppingTimeMeasurement)
            .where(StoppingTimeMeasurement.machine_id == machine.id)
            .options(joinedload(StoppingTimeMeasurement.checks))
            .order_by(StoppingTimeMeasurement.measured_on.desc(), StoppingTimeMeasurement.id.desc())
        ).unique()
    )


def latest_measurement(machine: Machine) -> StoppingTimeMeasurement | None:
    ms = measurements_of(machine)
    return ms[0] if ms else None


# --- safety-function PL verification ------------------------------------------------


@dataclass
class PartResult:
    part: SafetyFunctionPart
    pl: str | None
    pfhd: float | None
    result: Result | None
    problems: list[str]


@dataclass
class FunctionVerification:
    function: SafetyFunction
    required: str | None
    parts: list[PartResult]
    achieved: str | None
    series: Result | None
    passed: bool | None
    problems: list[str]


def _part_result(part: SafetyFunctionPart) -> PartResult:
    problems: list[str] = []
    if part.given_pl or part.given_pfhd is not None:
        return PartResult(part, part.given_pl, part.given_pfhd, None, problems)
    try:
        mttfd = [float(x) for x in (part.mttfd_years or [])]
        if not mttfd and part.b10d:
            c = pl.component_mttfd(
                float(part.b10d),
                float(part.days_per_year or 0),
                float(part.hours_per_day or 0),
                float(part.cycle_time_s or 0),
            )
            mttfd = [c.mttfd_years]
        r = pl.achieved_pl(
            str(part.category),
            mttfd,
            float(part.dcavg_percent or 0),
            ccf_points=part.ccf_points,
            well_tried=part.well_tried,
            test_rate_ratio=part.test_rate_ratio,
        )
    except InputError as exc:
        return PartResult(part, None, None, None, [f"{exc.field}: {exc.message}"])
    return PartResult(part, r.pl, r.pfhd, r, list(r.problems))


def verify_function(sf: SafetyFunction) -> FunctionVerification:
    """Achieved PL of the function's parts in series against its PLr."""
    req = required_level(sf).plr
    parts = [_part_result(p) for p in sf.parts]
    problems: list[str] = []
    achieved: str | None = None
    series: Result | None = None
    if not parts:
        problems.append("No parts recorded: enter the input, logic and output parts.")
    elif any(p.pl is None and p.pfhd is None for p in parts):
        problems.append("A part has no PL: fix its data first.")
    else:
        try:
            if all(p.pfhd is not None for p in parts):
                series = pl.series_pfhd(
                    [float(p.pfhd) for p in parts],  # type: ignore[arg-type]
                    [p.pl for p in parts] if all(p.pl for p in parts) else None,
                )
            else:
                series = pl.series_pl_count([str(p.pl) for p in parts])
            achieved = series.pl  # type: ignore[attr-defined]
            problems.extend(series.derivation.problems)  # type: ignore[attr-defined]
        except InputError as exc:
            problems.append(f"{exc.field}: {exc.message}")
    passed: bool | None = None
    if req and achieved:
        passed = achieved >= req
        if not passed:
            problems.append(f"Achieved PL {achieved} is below the required PL {req}.")
    elif req and not achieved:
        passed = False
    return FunctionVerification(sf, req, parts, achieved, series, passed, problems)


def save_part(session: Session, sf: SafetyFunction, data: Mapping[str, Any]) -> SafetyFunctionPart:
    errs = _Errors()
    role = _choice(data, "role", ("input", "logic", "output"), errs)
    name = str(data.get("name") or "").strip()[:200]
    if not name:
        errs.add("name", "Name the part (e.g. 'light curtain', 'safety relay', 'valve').")
    given_pl = data.get("given_pl") or None
    if given_pl is not None and given_pl not in ("a", "b", "c", "d", "e"):
        errs.add("given_pl", "Choose PL a to e from the part's data sheet, or leave empty.")
    given_pfhd = _num(
        data,
        "given_pfhd",
        errs,
        lo=0,
        hi=1e-4,
        exclusive_lo=True,
        what="the PFHd from the data sheet (per hour)",
    )
    category = data.get("category") or None
    mttfd_raw = str(data.get("mttfd_years") or "").replace(";", ",")
    mttfd: list[float] = []
    for x in [v.strip() for v in mttfd_raw.split(",") if v.strip()]:
        try:
            mttfd.append(float(x))
        except ValueError:
            errs.add(
                "mttfd_years", "Enter MTTFd in years, one value per channel, separated by commas."
            )
    if len(mttfd) > 2:
        errs.add("mttfd_years", "Enter one MTTFd per channel: one or two values.")
    if any(v <= 0 for v in mttfd):
        errs.add("mttfd_years", "MTTFd must be more than 0 years.")
    b10d = _num(data, "b10d", errs, lo=0, exclusive_lo=True, what="B10d in cycles")
    dop = _num(data, "days_per_year", errs, lo=0, hi=366, exclusive_lo=True)
    hop = _num(data, "hours_per_day", errs, lo=0, hi=24, exclusive_lo=True)
    tcycle = _num(
        data, "cycle_time_s", errs, lo=0, hi=1e7, exclusive_lo=True, what="the cycle time in s"
    )
    dc = _num(data, "dcavg_percent", errs, lo=0, hi=99.99, what="DCavg in %")
    ccf = _int(data, "ccf_points", errs, 0, 100, what="the CCF score")
    ratio = _num(data, "test_rate_ratio", errs, lo=0, exclusive_lo=True)
    if given_pl is None and given_pfhd is None:
        if category not in ("B", "1", "2", "3", "4"):
            errs.add(
                "category", "Choose the Category, or give the PL/PFHd from the part's data sheet."
            )
        if not mttfd and b10d is None:
            errs.add("mttfd_years", "Enter MTTFd (years) or B10d with its usage.")
        if b10d is not None and not mttfd and None in (dop, hop, tcycle):
            errs.add("b10d", "With B10d, enter days per year, hours per day and cycle time.")
        if dc is None:
            errs.add("dcavg_percent", "Enter DCavg in % (0 when there is no diagnostics).")
    errs.raise_if_any()
    part = SafetyFunctionPart(
        safety_function=sf,
        role=role,
        name=name,
        given_pl=given_pl,
        given_pfhd=given_pfhd,
        category=category,
        mttfd_years=mttfd or None,
        b10d=b10d,
        days_per_year=dop,
        hours_per_day=hop,
        cycle_time_s=tcycle,
        dcavg_percent=dc,
        ccf_points=ccf,
        well_tried=_bool(data, "well_tried"),
        test_rate_ratio=ratio,
    )
    session.add(part)
    session.flush()
    v = verify_function(sf)
    if v.passed is False and v.achieved is not None:
        _raise_action(
            session,
            sf.assessment.machine,
            None,
            "pl",
            f"Safety function '{sf.name}' does not reach its PLr",
            "; ".join(v.problems),
        )
    _commit(session)
    return part


# --- component library -----------------------------------------------------------


def save_component(session: Session, data: Mapping[str, Any]) -> Component:
    errs = _Errors()
    maker = str(data.get("maker") or "").strip()[:120]
    model = str(data.get("model") or "").strip()[:120]
    kind = str(data.get("kind") or "").strip()[:60]
    for key, value in (("maker", maker), ("model", model), ("kind", kind)):
        if not value:
            errs.add(key, f"Enter the {key}.")
    given_pl = data.get("pl") or None
    if given_pl is not None and given_pl not in ("a", "b", "c", "d", "e"):
        errs.add("pl", "Choose PL a to e, or leave empty.")
    category = data.get("category") or None
    if category is not None and category not in ("B", "1", "2", "3", "4"):
        errs.add("category", "Choose Category B, 1, 2, 3 or 4, or leave empty.")
    pfhd = _num(data, "pfhd", errs, lo=0, hi=1e-4, exclusive_lo=True, what="PFHd per hour")
    b10d = _num(data, "b10d", errs, lo=0, exclusive_lo=True, what="B10d")
    mttfd = _num(data, "mttfd_years", errs, lo=0, hi=2500, exclusive_lo=True, what="MTTFd")
    rt = _num(data, "response_time_ms", errs, lo=0, hi=10000, what="the response time in ms")
    espe = _int(data, "espe_type", errs, 2, 4, what="the IEC 61496 type")
    document = str(data.get("document") or "").strip()[:300]
    if not document:
        errs.add("document", "Name the data sheet or certificate the values come from.")
    errs.raise_if_any()
    c = Component(
        maker=maker,
        model=model,
        kind=kind,
        pl=given_pl,
        category=category,
        pfhd=pfhd,
        b10d=b10d,
        mttfd_years=mttfd,
        response_time_s=None if rt is None else rt / 1000,
        espe_type=espe,
        document=document,
        notes=str(data.get("notes") or "")[:5000],
    )
    session.add(c)
    _commit(session)
    return c


def components(session: Session) -> list[Component]:
    return list(session.scalars(select(Component).order_by(Component.maker, Component.model)))


# --- safeguard options per hazard --------------------------------------------------


def hazard_access(session: Session, hazard: Hazard) -> HazardAccess | None:
    return session.scalar(select(HazardAccess).where(HazardAccess.hazard_id == hazard.id))


def save_access(session: Session, hazard: Hazard, data: Mapping[str, Any]) -> HazardAccess:
    errs = _Errors()
    access = _choice(data, "access", ("none", "occasional", "frequent"), errs)
    errs.raise_if_any()
    row = hazard_access(session, hazard) or HazardAccess(hazard=hazard)
    session.add(row)
    row.access = access
    row.ejection = _bool(data, "ejection")
    row.other_people_exposed = _bool(data, "other_people_exposed")
    row.hand_feeding = _bool(data, "hand_feeding")
    _commit(session)
    return row


def add_option(session: Session, hazard: Hazard, data: Mapping[str, Any]) -> SafeguardOption:
    errs = _Errors()
    kind = data.get("kind")
    if kind not in MEASURE_KINDS:
        errs.add("kind", "Choose a kind of measure from the list.")
    reachable = data.get("reachable_pl") or None
    if reachable is not None and reachable not in ("a", "b", "c", "d", "e"):
        errs.add("reachable_pl", "Choose PL a to e, or leave empty if not known.")
    space = _num(data, "space_available_mm", errs, lo=0, hi=10000, what="the space available in mm")
    cost = _num(data, "cost", errs, lo=0, hi=1e9, what="the cost")
    errs.raise_if_any()
    opt = SafeguardOption(
        hazard=hazard,
        kind=kind,
        reachable_pl=reachable,
        space_available_mm=space,
        cost=cost,
        effect_on_work=str(data.get("effect_on_work") or "")[:2000],
    )
    session.add(opt)
    _commit(session)
    return opt


def options_of(session: Session, hazard: Hazard) -> list[SafeguardOption]:
    return list(
        session.scalars(
            select(SafeguardOption)
            .where(SafeguardOption.hazard_id == hazard.id)
            .order_by(SafeguardOption.id)
        )
    )


def choose_option(session: Session, option: SafeguardOption, reason: str, by: str) -> None:
    reason = (reason or "").strip()
    if not reason:
        raise ValidationError(
            {"reason": "Write why this option was chosen; the reason is kept with the assessment."}
        )
    for o in options_of(session, option.hazard):
        o.chosen = o.id == option.id
        o.reason = reason if o.id == option.id else o.reason
    access = hazard_access(session, option.hazard) or HazardAccess(hazard=option.hazard)
    session.add(access)
    access.chosen_reason = reason
    access.chosen_by = by
    _commit(session)


# --- corrective actions ------------------------------------------------------------


def actions_of(
    session: Session, machine: Machine, open_only: bool = False
) -> list[CorrectiveAction]:
    q = select(CorrectiveAction).where(CorrectiveAction.machine_id == machine.id)
    if open_only:
        q = q.where(CorrectiveAction.status == "open")
    return list(session.scalars(q.order_by(CorrectiveAction.status.desc(), CorrectiveAction.id)))


def add_action(session: Session, machine: Machine, data: Mapping[str, Any]) -> CorrectiveAction:
    errs = _Errors()
    title = str(data.get("title") or "").strip()[:300]
    if not title:
        errs.add("title", "Say what must be done.")
    due = data.get("due_on")
    due_on = None
    if due not in (None, ""):
        try:
            due_on = due if isinstance(due, dt.date) else dt.date.fromisoformat(str(due))
        except ValueError:
            errs.add("due_on", "Enter a due date as YYYY-MM-DD.")
    errs.raise_if_any()
    a = CorrectiveAction(
        machine=machine,
        source="manual",
        title=title,
        description=str(data.get("description") or "")[:5000],
        owner=str(data.get("owner") or "")[:200],
        due_on=due_on,
    )
    session.add(a)
    _commit(session)
    return a


def actions_of_site(session: Session, site_id: int) -> list[CorrectiveAction]:
    """A site's corrective actions: open ones first (soonest due first), then closed."""
    rows = list(
        session.scalars(
            select(CorrectiveAction)
            .join(Machine, Machine.id == CorrectiveAction.machine_id)
            .where(Machine.site_id == site_id)
        )
    )
    still_open = sorted(
        (a for a in rows if a.status == "open"), key=lambda a: (a.due_on or dt.date.max, a.id)
    )
    closed = sorted((a for a in rows if a.status != "open"), key=lambda a: -a.id)
    return still_open + closed


def close_action(
    session: Session,
    action: CorrectiveAction,
    note: str,
    evidence_file: tuple[str, bytes] | None = None,
    *,
    instance_path: str | os.PathLike[str] | None = None,
    user_id: int | None = None,
) -> None:
    """Close with a note; an optional file (name, content) is kept as the closing evidence.
    The note and the file are both checked before anything is written."""
    note = (note or "").strip()
    errors: dict[str, str] = {}
    if not note:
        errors["closing_note"] = "Say what was done to close the action, and where the evidence is."
    if evidence_file is not None:
        try:
            evidence.check_upload(
                evidence_file[1], evidence_file[0], evidence.ALL_TYPES, "closing_file"
            )
        except ValidationError as exc:
            errors.update(exc.errors)
        if instance_path is None:
            raise ValueError("instance_path is needed to store a closing file")
    if errors:
        raise ValidationError(errors)
    if evidence_file is not None and instance_path is not None:
        row = evidence.store(
            session,
            instance_path,
            evidence_file[1],
            evidence_file[0],
            user_id=user_id,
            field="closing_file",
        )
        session.flush()
        action.closing_evidence_id = row.id
    action.status = "closed"
    action.closing_note = note[:5000]
    action.closed_at = dt.datetime.now(dt.UTC)
    _commit(session)


def instrument_warning(session: Session, m: StoppingTimeMeasurement) -> str | None:
    """A warning when the measurement was taken with an out-of-calibration instrument."""
    if m.instrument_id is None:
        return None
    from riskreg.model import Instrument

    from .verification import calibration_due, in_calibration

    ins = session.get(Instrument, m.instrument_id)
    if ins is None or in_calibration(ins, m.measured_on):
        return None
    due = calibration_due(ins)
    when = f"its calibration ran out on {due}" if due else "it has no calibration recorded"
    return (
        f"Measured with {ins.name}, which was not in calibration on {m.measured_on} "
        f"({when}): repeat the measurement with a calibrated instrument."
    )
