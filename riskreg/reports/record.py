"""The record a report prints, gathered once through the services.

Each builder returns plain JSON data (str, int, float, bool, None, lists and
dicts). The same dict is rendered on the pages and embedded in the PDF as
``record.json``, so what is printed and what is archived cannot disagree.
Engineering results are never recomputed here: ratings, stopping times and
distance checks carry the derivations stored with them, and safeguard and
safety-function checks come from the same service calls the web pages use
(``safeguards.evaluate``, ``safeguards.verify_function``).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Iterable, Mapping
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from riskreg import vocab
from riskreg.engineering import cautions
from riskreg.model import (
    Area,
    Assessment,
    Hazard,
    Machine,
    RiskRating,
    Site,
    StoppingTimeMeasurement,
    Task,
)
from riskreg.services import due, register, safeguards, verification
from riskreg.services.errors import NotFound

SCHEMA = "riskreg-record/1"
PL_ORDER = ("a", "b", "c", "d", "e")
ProgressFn = Callable[[str, int, int | None], None]

CAUTIONS = (
    cautions.LOCAL_LAW,
    cautions.QUALIFIED_PERSON,
    cautions.MEASURED_STOP,
    cautions.NOT_SAFE,
)


# --- small conversions ------------------------------------------------------------------


def iso_datetime(value: dt.datetime | None) -> str | None:
    """UTC, to the second, with a Z: stored datetimes may come back without a zone."""
    if value is None:
        return None
    if value.tzinfo is None:
        value = value.replace(tzinfo=dt.UTC)
    return value.astimezone(dt.UTC).replace(microsecond=0).strftime("%Y-%m-%dT%H:%M:%SZ")


def iso_date(value: dt.date | None) -> str | None:
    return value.isoformat() if value is not None else None


def _num(value: float | None) -> float | None:
    """Floats without binary-rounding noise (as the engineering results give them)."""
    if value is None:
        return None
    return float(f"{float(value):.12g}")


def _label(mapping: Mapping[str, Any], key: str) -> str:
    value = mapping.get(key, key)
    return str(value[1] if isinstance(value, tuple) else value)


def _user_name(user: Any) -> str | None:
    return user.name if user is not None else None


# --- parts of a machine record -----------------------------------------------------------


def site_identity(site: Site) -> dict[str, Any]:
    return {
        "id": site.id,
        "name": site.name,
        "units": site.units,
        "distance_method": site.distance_method,
        "distance_method_label": "ISO 13855"
        if site.distance_method == "ISO"
        else "29 CFR 1910.217 / ANSI B11.19",
        "rating_method": site.rating_method,
        "rating_method_label": vocab.RATING_METHODS.get(site.rating_method, site.rating_method),
        "editions": dict(sorted((site.editions or {}).items())),
        "stop_time_allowance_percent": _num(site.stop_time_allowance_percent),
        "base_url": site.base_url,
    }


def machine_identity(m: Machine) -> dict[str, Any]:
    return {
        "id": m.id,
        "asset_tag": m.asset_tag,
        "name": m.name,
        "kind": m.kind,
        "kind_label": _label(vocab.MACHINE_KINDS, m.kind),
        "maker": m.maker,
        "model": m.model,
        "serial": m.serial,
        "year": m.year,
        "location": m.location,
        "area": m.area.name if m.area else None,
        "notes": m.notes,
        "active": m.active,
        "do_not_operate": m.do_not_operate,
        "do_not_operate_reason": m.do_not_operate_reason,
    }


def _assessment(a: Assessment) -> dict[str, Any]:
    return {
        "id": a.id,
        "revision": a.revision,
        "status": a.status,
        "status_label": vocab.ASSESSMENT_STATUSES.get(a.status, a.status),
        "scope": a.scope,
        "intended_use": a.intended_use,
        "foreseeable_misuse": a.foreseeable_misuse,
        "space_limits": a.space_limits,
        "time_limits": a.time_limits,
        "persons_exposed": a.persons_exposed,
        "assessors": a.assessors,
        "approver": _user_name(a.approver),
        "approved_at": iso_datetime(a.approved_at),
        "created_at": iso_datetime(a.created_at),
    }


def _rating(r: RiskRating | None) -> dict[str, Any] | None:
    if r is None:
        return None
    override = None
    if r.override_level:
        override = {
            "level": r.override_level,
            "source": r.override_source,
            "justification": r.override_justification,
            "approved_by": r.override_approved_by,
        }
    return {
        "id": r.id,
        "stage": r.stage,
        "method": r.method,
        "method_label": vocab.RATING_METHODS.get(r.method, r.method),
        "parameters": dict(r.parameters or {}),
        "edition": r.edition,
        "derived_level": r.derived_level,
        "level": r.level,
        "override": override,
        "created_at": iso_datetime(r.created_at),
        "result": r.derivation,
    }


def _option(o: Any) -> dict[str, Any]:
    return {
        "id": o.id,
        "kind": o.kind,
        "kind_label": _label(vocab.MEASURE_KINDS, o.kind),
        "reachable_pl": o.reachable_pl,
        "space_available_mm": _num(o.space_available_mm),
        "cost": _num(o.cost),
        "effect_on_work": o.effect_on_work,
        "chosen": o.chosen,
        "reason": o.reason,
    }


def _hazard(session: Session, h: Hazard, number: int) -> dict[str, Any]:
    access = safeguards.hazard_access(session, h)
    return {
        "id": h.id,
        "number": number,
        "task_id": h.task_id,
        "group": h.hazard_group,
        "group_label": vocab.HAZARD_GROUPS.get(h.hazard_group, h.hazard_group),
        "type": h.hazard_type,
        "danger_zone": h.danger_zone,
        "event": h.event,
        "harm": h.harm,
        "persons_exposed": h.persons_exposed,
        "interim_measures": h.interim_measures,
        "archived": h.archived,
        "residual_accepted_by": _user_name(h.residual_accepted_by),
        "residual_accepted_at": iso_datetime(h.residual_accepted_at),
        "initial": _rating(register.current_rating(h, "initial")),
        "residual": _rating(register.current_rating(h, "residual")),
        "access": None
        if access is None
        else {
            "access": access.access,
            "ejection": access.ejection,
            "other_people_exposed": access.other_people_exposed,
            "hand_feeding": access.hand_feeding,
            "chosen_reason": access.chosen_reason,
            "chosen_by": access.chosen_by,
        },
        "options": [_option(o) for o in safeguards.options_of(session, h)],
    }


def _part(p: safeguards.PartResult) -> dict[str, Any]:
    x = p.part
    return {
        "id": x.id,
        "role": x.role,
        "name": x.name,
        "given_pl": x.given_pl,
        "given_pfhd": _num(x.given_pfhd),
        "category": x.category,
        "mttfd_years": [_num(v) for v in x.mttfd_years] if x.mttfd_years else None,
        "b10d": _num(x.b10d),
        "days_per_year": _num(x.days_per_year),
        "hours_per_day": _num(x.hours_per_day),
        "cycle_time_s": _num(x.cycle_time_s),
        "dcavg_percent": _num(x.dcavg_percent),
        "ccf_points": x.ccf_points,
        "well_tried": x.well_tried,
        "test_rate_ratio": _num(x.test_rate_ratio),
        "installed_on": iso_date(x.installed_on),
        "pl": p.pl,
        "pfhd": _num(p.pfhd),
        "result": p.result.to_dict() if p.result is not None else None,
        "problems": list(p.problems),
    }


def _function(sf: Any, numbers: dict[int, int]) -> dict[str, Any]:
    req = register.required_level(sf)
    v = safeguards.verify_function(sf)
    return {
        "id": sf.id,
        "name": sf.name,
        "trigger": sf.trigger,
        "reaction": sf.reaction,
        "modes": [m for m in (sf.modes or "").split(",") if m],
        "response_time_s": _num(sf.response_time_s),
        "hazards": [numbers[h.id] for h in sf.hazards if h.id in numbers],
        "required": {
            "plr": req.plr,
            "sil": req.sil,
            "from_hazards": [numbers[i] for i in req.from_hazards if i in numbers],
        },
        "verification": {
            "required": v.required,
            "achieved": v.achieved,
            "passed": v.passed,
            "problems": list(v.problems),
            "series": v.series.to_dict() if v.series is not None else None,
            "parts": [_part(p) for p in v.parts],
        },
    }


def _safeguard(sg: Any, ev: safeguards.Evaluation) -> dict[str, Any]:
    comp = sg.component
    return {
        "id": sg.id,
        "kind": sg.kind,
        "kind_label": safeguards.SAFEGUARD_KINDS.get(sg.kind, sg.kind),
        "label": sg.label,
        "status": sg.status,
        "trusted": sg.trusted,
        "response_time_s": _num(sg.response_time_s),
        "installed_distance_mm": _num(sg.installed_distance_mm),
        "parameters": dict(sg.parameters or {}),
        "component": None
        if comp is None
        else {
            "maker": comp.maker,
            "model": comp.model,
            "kind": comp.kind,
            "pl": comp.pl,
            "category": comp.category,
            "pfhd": _num(comp.pfhd),
            "document": comp.document,
        },
        "measure_id": sg.measure_id,
        "distance_kind": sg.kind in safeguards.DISTANCE_KINDS,
        "evaluation": {
            "required_mm": _num(ev.required_mm),
            "installed_mm": _num(ev.installed_mm),
            "passed": ev.passed,
            "message": ev.message,
            "problems": list(ev.problems),
            "results": ev.derivations(),
        },
    }


def measurement_record(session: Session, m: StoppingTimeMeasurement) -> dict[str, Any]:
    checks = sorted(m.checks, key=lambda c: c.id)
    return {
        "id": m.id,
        "measured_on": iso_date(m.measured_on),
        "instrument": m.instrument,
        "position": m.position,
        "measured_by": m.measured_by,
        "trials_s": [_num(t) for t in m.trials_s],
        "allowance_percent": _num(m.allowance_percent),
        "brake_monitor_limit_s": _num(m.brake_monitor_limit_s),
        "t_used_s": _num(m.t_used_s),
        "notes": m.notes,
        "instrument_warning": safeguards.instrument_warning(session, m),
        "result": m.derivation,
        "checks": [
            {
                "id": c.id,
                "safeguard_id": c.safeguard_id,
                "safeguard": c.safeguard.label,
                "safeguard_kind": c.safeguard.kind,
                "method": c.method,
                "required_mm": _num(c.required_mm),
                "installed_mm": _num(c.installed_mm),
                "passed": c.passed,
                "message": c.message,
                "derivation": c.derivation,
            }
            for c in checks
        ],
    }


def _press(machine: Machine) -> dict[str, Any] | None:
    p = safeguards.press_profile(machine)
    if p is None:
        return None
    return {
        "clutch": p.clutch,
        "engaging_points": p.engaging_points,
        "revolution_time_s": _num(p.revolution_time_s),
        "brake_monitor": p.brake_monitor,
        "control_reliable": p.control_reliable,
        "anti_repeat": p.anti_repeat,
        "single_stroke": p.single_stroke,
        "monitor_settings": [
            {
                "set_on": iso_date(s.set_on),
                "setpoint_s": _num(s.setpoint_s),
                "set_by": s.set_by,
                "note": s.note,
            }
            for s in p.monitor_settings
        ],
    }


def _verification(v: Any) -> dict[str, Any]:
    kind = verification.KINDS.get(v.kind)
    return {
        "id": v.id,
        "kind": v.kind,
        "kind_label": kind.label if kind else v.kind,
        "performed_on": iso_date(v.performed_on),
        "performed_by": v.performed_by,
        "result": v.result,
        "result_label": verification.RESULTS.get(v.result, v.result),
        "safeguard": v.safeguard.label if v.safeguard else None,
        "measured_values": v.measured_values,
        "notes": v.notes,
        "press_serial": v.press_serial,
        "signature": v.signature,
        "instrument": v.instrument.name if v.instrument else None,
        "evidence_files": len(v.evidence),
    }


def _action(a: Any) -> dict[str, Any]:
    return {
        "id": a.id,
        "source": a.source,
        "title": a.title,
        "description": a.description,
        "owner": a.owner,
        "due_on": iso_date(a.due_on),
        "status": a.status,
        "safeguard": a.safeguard.label if a.safeguard else None,
        "created_at": iso_datetime(a.created_at),
    }


def _revisions(machine: Machine) -> list[dict[str, Any]]:
    out = []
    for a in machine.assessments:
        out.append(
            {
                "revision": a.revision,
                "status": a.status,
                "status_label": vocab.ASSESSMENT_STATUSES.get(a.status, a.status),
                "assessors": a.assessors,
                "approver": _user_name(a.approver),
                "approved_at": iso_datetime(a.approved_at),
                "created_at": iso_datetime(a.created_at),
                "hazards": sum(1 for h in a.hazards if not h.archived),
            }
        )
    return out


def _plr_rank(level: str | None) -> int:
    return PL_ORDER.index(level) if level in PL_ORDER else -1


def findings_of(rec: dict[str, Any]) -> dict[str, Any]:
    """What an auditor must look at: the reasons a machine has open findings.

    Failed or impossible distance checks of the latest measurement, safety
    functions below their PLr, safeguards not trusted or with problems of their
    own (e.g. a two-hand control type below the PLr), a missing stopping time
    where a distance depends on it, overdue items and a "do not operate" tag.
    """
    items: list[str] = []
    latest = rec["measurements"][0] if rec["measurements"] else None
    failed_checks = 0
    if latest is not None:
        for c in latest["checks"]:
            if c["passed"] is False:
                failed_checks += 1
                items.append(f"{c['safeguard']}: safety distance check failed — {c['message']}")
            elif c["passed"] is None:
                items.append(f"{c['safeguard']}: safety distance not checked — {c['message']}")
    pl_short = 0
    for f in rec["safety_functions"]:
        if f["verification"]["passed"] is False:
            pl_short += 1
            achieved = f["verification"]["achieved"] or "not determined"
            items.append(
                f"Safety function “{f['name']}”: achieved PL {achieved}, "
                f"required PL {f['verification']['required']}"
            )
    untrusted = 0
    installed_distance = False
    for s in rec["safeguards"]:
        if s["status"] != "installed":
            continue
        installed_distance = installed_distance or s["distance_kind"]
        if not s["trusted"]:
            untrusted += 1
            items.append(f"{s['label']}: NOT TRUSTED (its last verification failed)")
        checked = latest is not None and any(c["safeguard_id"] == s["id"] for c in latest["checks"])
        if checked and s["evaluation"]["message"].startswith("Cannot check"):
            continue  # the stored check of the latest measurement already says so
        for p in s["evaluation"]["problems"]:
            items.append(f"{s['label']}: {p}")
    if installed_distance and latest is None:
        items.append("No stopping-time measurement: no safety distance can be checked.")
    overdue = sum(1 for d in rec["due"] if d["days_overdue"] > 0)
    if overdue:
        items.append(f"{overdue} verification item(s) overdue.")
    if rec["machine"]["do_not_operate"]:
        items.append(f"Tagged DO NOT OPERATE: {rec['machine']['do_not_operate_reason']}")
    plrs = [
        h["initial"]["level"]
        for h in rec["hazards"]
        if h["initial"] and h["initial"]["method"] == "iso13849" and not h["archived"]
    ]
    sils = [
        h["initial"]["level"]
        for h in rec["hazards"]
        if h["initial"]
        and h["initial"]["method"] == "iec62061"
        and h["initial"]["level"].startswith("SIL")
        and not h["archived"]
    ]
    return {
        "highest_plr": max(plrs, key=_plr_rank) if plrs else None,
        "highest_sil": max(sils) if sils else None,
        "failed_distance_checks": failed_checks,
        "pl_shortfalls": pl_short,
        "not_trusted": untrusted,
        "overdue": overdue,
        "open_actions": len(rec["actions"]),
        "open_items": items,
        "open": bool(items),
    }


def machine_record(
    session: Session,
    machine: Machine,
    *,
    today: dt.date,
    due_rows: list[due.DueItem] | None = None,
) -> dict[str, Any]:
    """Everything the machine's report prints, as JSON data (no report identity)."""
    try:
        assessment: Assessment | None = register.current_assessment(machine)
    except NotFound:
        assessment = None
    site = machine.site
    tasks: list[Task] = []
    hazards: list[Hazard] = []
    if assessment is not None:
        tasks = list(assessment.tasks)
        hazards = list(assessment.hazards)
    live = [h for h in hazards if not h.archived]
    archived = [h for h in hazards if h.archived]
    numbers = {h.id: i for i, h in enumerate(live + archived, start=1)}
    hazard_recs = [_hazard(session, h, numbers[h.id]) for h in live + archived]
    measures = [x for x in assessment.measures if not x.archived] if assessment else []
    measure_numbers = {x.id: i for i, x in enumerate(measures, start=1)}
    for hr, h in zip(hazard_recs, live + archived, strict=True):
        hr["measures"] = [measure_numbers[x.id] for x in h.measures if x.id in measure_numbers]
    functions = [f for f in assessment.safety_functions if not f.archived] if assessment else []
    function_numbers = {f.id: i for i, f in enumerate(functions, start=1)}

    measurements = safeguards.measurements_of(machine)
    latest = measurements[0] if measurements else None
    profile = safeguards.press_profile(machine)
    guards = safeguards.safeguards_of(machine)
    evaluations = [
        safeguards.evaluate(sg, latest.t_used_s if latest else None, site.distance_method, profile)
        for sg in guards
    ]
    if due_rows is None:
        due_rows = due.due_items(session, site, today=today, machine_id=machine.id)
    rec: dict[str, Any] = {
        "site": site_identity(site),
        "machine": machine_identity(machine),
        "assessment": _assessment(assessment) if assessment else None,
        "revisions": _revisions(machine),
        "tasks": [
            {
                "id": t.id,
                "phase": t.phase,
                "phase_label": vocab.PHASES.get(t.phase, t.phase),
                "description": t.description,
                "performed_by": t.performed_by,
                "frequency": t.frequency,
                "archived": t.archived,
            }
            for t in tasks
        ],
        "hazards": hazard_recs,
        "measures": [
            {
                "id": x.id,
                "number": measure_numbers[x.id],
                "step": x.step,
                "step_label": vocab.MEASURE_STEPS.get(x.step, x.step),
                "kind": x.kind,
                "kind_label": _label(vocab.MEASURE_KINDS, x.kind),
                "description": x.description,
                "status": x.status,
                "status_label": vocab.MEASURE_STATUSES.get(x.status, x.status),
                "safety_function": function_numbers.get(x.safety_function_id or -1),
                "hazards": [numbers[h.id] for h in x.hazards if h.id in numbers],
            }
            for x in measures
        ],
        "safety_functions": [
            dict(_function(f, numbers), number=function_numbers[f.id]) for f in functions
        ],
        "press": _press(machine) if profile is not None else None,
        "safeguards": [_safeguard(sg, ev) for sg, ev in zip(guards, evaluations, strict=True)],
        "measurements": [measurement_record(session, m) for m in measurements],
        "verifications": [
            _verification(v) for v in verification.verifications_of(session, machine)
        ],
        "due": [d.to_json() for d in due_rows],
        "actions": [_action(a) for a in safeguards.actions_of(session, machine, open_only=True)],
    }
    rec["findings"] = findings_of(rec)
    return rec


def cautions_of(records: Iterable[dict[str, Any]]) -> list[str]:
    """The module's cautions, then any other caution a stored derivation carries."""
    seen = list(CAUTIONS)

    def walk(value: Any) -> None:
        if isinstance(value, dict):
            for c in value.get("cautions") or ():
                if isinstance(c, str) and c not in seen:
                    seen.append(c)
            for v in value.values():
                if isinstance(v, (dict, list)):
                    walk(v)
        elif isinstance(value, list):
            for v in value:
                walk(v)

    for r in records:
        walk(r)
    return seen


def rests_on_recalled(value: Any) -> bool:
    """True when any derivation in the data uses a constant that is only recalled."""
    if isinstance(value, dict):
        if value.get("rests_on_recalled") is True:
            return True
        return any(rests_on_recalled(v) for v in value.values() if isinstance(v, (dict, list)))
    if isinstance(value, list):
        return any(rests_on_recalled(v) for v in value)
    return False


# --- machines of a site ------------------------------------------------------------------


def site_machines(session: Session, site: Site, area: str | None = None) -> list[Machine]:
    """Active machines of a site by area then asset tag, with what every record reads
    loaded up front."""
    q = (
        select(Machine)
        .outerjoin(Area, Area.id == Machine.area_id)
        .where(Machine.site_id == site.id, Machine.active.is_(True))
        .options(
            selectinload(Machine.area),
            selectinload(Machine.assessments).selectinload(Assessment.approver),
            selectinload(Machine.assessments)
            .selectinload(Assessment.hazards)
            .selectinload(Hazard.ratings),
            selectinload(Machine.assessments).selectinload(Assessment.tasks),
        )
    )
    if area is not None:
        q = q.where(Area.name == area)
    machines = list(session.scalars(q))
    machines.sort(key=lambda m: (m.area is None, m.area.name if m.area else "", m.asset_tag))
    return machines


def due_by_machine(
    session: Session, site: Site, today: dt.date
) -> tuple[dict[int, list[due.DueItem]], list[due.DueItem]]:
    """The site's due items in one pass: per machine, and the site's own (instruments)."""
    per: dict[int, list[due.DueItem]] = {}
    own: list[due.DueItem] = []
    for item in due.due_items(session, site, today=today):
        if item.machine_id is None:
            own.append(item)
        else:
            per.setdefault(item.machine_id, []).append(item)
    return per, own


def site_records(
    session: Session,
    site: Site,
    machines: list[Machine],
    *,
    today: dt.date,
    progress: ProgressFn | None = None,
) -> tuple[list[dict[str, Any]], list[due.DueItem]]:
    per, own = due_by_machine(session, site, today)
    out = []
    for i, m in enumerate(machines, start=1):
        out.append(machine_record(session, m, today=today, due_rows=per.get(m.id, [])))
        if progress is not None:
            progress("machines", i, len(machines))
    return out, own


def summary_row(rec: dict[str, Any]) -> dict[str, Any]:
    f = rec["findings"]
    a = rec["assessment"]
    return {
        "machine_id": rec["machine"]["id"],
        "asset_tag": rec["machine"]["asset_tag"],
        "name": rec["machine"]["name"],
        "area": rec["machine"]["area"],
        "revision": a["revision"] if a else None,
        "status": a["status_label"] if a else "no current assessment",
        "hazards": sum(1 for h in rec["hazards"] if not h["archived"]),
        "highest_plr": f["highest_plr"],
        "highest_sil": f["highest_sil"],
        "failed_distance_checks": f["failed_distance_checks"],
        "pl_shortfalls": f["pl_shortfalls"],
        "not_trusted": f["not_trusted"],
        "overdue": f["overdue"],
        "open_actions": f["open_actions"],
        "do_not_operate": rec["machine"]["do_not_operate"],
        "open_findings": f["open"],
    }
