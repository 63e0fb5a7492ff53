"""Use cases of the register: sites, machines, assessments, tasks, hazards,
ratings, safety functions and protective measures.

Each function validates everything first, raises :class:`ValidationError` with a
message per field when anything is wrong (nothing is written then), and commits
the change it owns. The audit trail is written by the session hook.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from sqlalchemy import case, func, literal, or_, select, union_all
from sqlalchemy.orm import Session, contains_eager, joinedload, selectinload
from sqlalchemy.orm.attributes import set_committed_value
from sqlalchemy.orm.exc import StaleDataError

from riskreg.engineering import risk
from riskreg.engineering.derivation import InputError
from riskreg.model import (
    Area,
    Assessment,
    AuditEntry,
    Hazard,
    Machine,
    ProtectiveMeasure,
    RiskRating,
    SafetyFunction,
    Site,
    Task,
    User,
    hazard_measure,
    hazard_safety_function,
)
from riskreg.vocab import (
    HAZARD_GROUPS,
    MACHINE_KINDS,
    MEASURE_KINDS,
    MEASURE_STATUSES,
    OPERATING_MODES,
    PHASES,
    RATING_METHODS,
    RATING_STAGES,
)

from .errors import Conflict, NotFound, ValidationError

DEFAULT_EDITIONS = {
    "ISO 13849-1": "2015",
    "IEC 62061": "2021",
    "ANSI B11.0": "2020",
    "ISO 13855": "2010",
}
PL_LEVELS = ("a", "b", "c", "d", "e")
SIL_LEVELS = ("SIL 1", "SIL 2", "SIL 3", "other measures", "none")
B11_LEVELS = ("negligible", "low", "medium", "high")


def _text(data: Mapping[str, Any], key: str, limit: int = 2000) -> str:
    value = data.get(key)
    return "" if value is None else str(value).strip()[:limit]


def _commit(session: Session, record: Machine | Hazard | None = None) -> None:
    """Commit; a write that lost a race names the other's change when it can."""
    try:
        session.commit()
    except StaleDataError:
        session.rollback()
        theirs = ""
        if record is not None:
            session.refresh(record)
            theirs = _their_change(record)
        raise Conflict(
            "This record was changed by someone else since you opened it. "
            + theirs
            + "Reload it to see their change, then make yours again."
        ) from None


def _check_version(obj: Machine | Hazard, expected: Any) -> None:
    if expected in (None, ""):
        return
    try:
        wanted = int(expected)
    except (TypeError, ValueError):
        raise ValidationError(
            {"version": "The form's version is not a number; reload the page."}
        ) from None
    if wanted != obj.version:
        raise Conflict(
            "This record was changed by someone else since you opened it "
            f"(your copy is version {wanted}, the register has version {obj.version}). "
            + _their_change(obj)
            + "Reload it to see their change, then make yours again."
        )


def _their_change(obj: Machine | Hazard) -> str:
    """Who changed the record last and which fields, from the audit trail."""
    session = Session.object_session(obj)
    if session is None:
        return ""
    entry = session.scalar(
        select(AuditEntry)
        .where(
            AuditEntry.entity == type(obj).__tablename__,
            AuditEntry.entity_id == obj.id,
            AuditEntry.action == "update",
        )
        .order_by(AuditEntry.id.desc())
        .limit(1)
    )
    if entry is None or not entry.before or not entry.after:
        return ""
    changed = [
        f"{k}: {entry.before.get(k)!r} → {entry.after.get(k)!r}"
        for k in sorted(entry.after)
        if k != "version" and entry.before.get(k) != entry.after.get(k)
    ]
    who = entry.user_email or "someone"
    when = entry.at.strftime("%Y-%m-%d %H:%M") if entry.at else ""
    return f"{who} changed it at {when} UTC: " + "; ".join(changed[:6]) + ". "


# --- sites and areas -----------------------------------------------------------


def create_site(
    session: Session,
    name: str,
    *,
    units: str = "mm",
    distance_method: str = "ISO",
    rating_method: str = "iso13849",
    editions: Mapping[str, str] | None = None,
    stop_time_allowance_percent: float = 0.0,
    base_url: str | None = None,
    commit: bool = True,
) -> Site:
    errors: dict[str, str] = {}
    name = (name or "").strip()
    if not name:
        errors["name"] = "Enter the site's name."
    elif session.scalar(select(Site.id).where(Site.name == name)):
        errors["name"] = f"A site named {name!r} already exists."
    if units not in ("mm", "in"):
        errors["units"] = "Choose mm or in."
    if distance_method not in ("ISO", "US"):
        errors["distance_method"] = "Choose ISO (ISO 13855) or US (29 CFR 1910.217 / ANSI B11.19)."
    if rating_method not in RATING_METHODS:
        errors["rating_method"] = f"Choose one of: {', '.join(RATING_METHODS)}."
    if not 0 <= stop_time_allowance_percent <= 100:
        errors["stop_time_allowance_percent"] = "Enter an allowance from 0 to 100 %."
    if errors:
        raise ValidationError(errors)
    site = Site(
        name=name,
        units=units,
        distance_method=distance_method,
        rating_method=rating_method,
        editions=dict(DEFAULT_EDITIONS, **(editions or {})),
        stop_time_allowance_percent=stop_time_allowance_percent,
        base_url=base_url,
    )
    session.add(site)
    if commit:
        session.commit()
    return site


def create_area(session: Session, site: Site, name: str, *, commit: bool = True) -> Area:
    name = (name or "").strip()
    if not name:
        raise ValidationError({"name": "Enter the area's name (a line or cell)."})
    if session.scalar(select(Area.id).where(Area.site_id == site.id, Area.name == name)):
        raise ValidationError({"name": f"{site.name} already has an area named {name!r}."})
    area = Area(site=site, name=name)
    session.add(area)
    if commit:
        session.commit()
    return area


def get_site(session: Session, name: str | None = None) -> Site:
    """The named site, or the only one when no name is given."""
    if name:
        site = session.scalar(select(Site).where(Site.name == name))
        if site is None:
            names = ", ".join(session.scalars(select(Site.name).order_by(Site.name)))
            raise NotFound(f"No site named {name!r}. Sites: {names or 'none yet'}.")
        return site
    sites = list(session.scalars(select(Site).order_by(Site.id).limit(2)))
    if not sites:
        raise NotFound("The register has no site yet.")
    if len(sites) > 1:
        raise NotFound("The register has several sites: name one with --site.")
    return sites[0]


# --- machines ------------------------------------------------------------------

MACHINE_FIELDS = (
    "asset_tag",
    "name",
    "kind",
    "maker",
    "model",
    "serial",
    "year",
    "location",
    "notes",
    "area_id",
)


def _validate_machine(
    session: Session, site: Site, data: Mapping[str, Any], machine: Machine | None = None
) -> dict[str, Any]:
    errors: dict[str, str] = {}
    out: dict[str, Any] = {}
    tag = _text(data, "asset_tag", 40)
    if not tag:
        errors["asset_tag"] = "Enter the asset tag painted or labelled on the machine."
    else:
        clash = session.scalar(
            select(Machine.id).where(Machine.site_id == site.id, Machine.asset_tag == tag)
        )
        if clash and (machine is None or clash != machine.id):
            errors["asset_tag"] = f"Asset tag {tag!r} is already used at {site.name}."
    out["asset_tag"] = tag
    out["name"] = _text(data, "name", 120)
    if not out["name"]:
        errors["name"] = "Enter a name people on the floor use for this machine."
    kind = _text(data, "kind")
    if kind not in MACHINE_KINDS:
        errors["kind"] = f"Choose a kind: {', '.join(MACHINE_KINDS.values())}."
    out["kind"] = kind
    for key in ("maker", "model", "serial", "location"):
        out[key] = _text(data, key, 200)
    out["notes"] = _text(data, "notes", 10000)
    year = data.get("year")
    if year in (None, ""):
        out["year"] = None
    else:
        try:
            y = int(year)
        except (TypeError, ValueError):
            y = -1
        this_year = dt.date.today().year
        if not 1900 <= y <= this_year:
            errors["year"] = f"Enter the year built, from 1900 to {this_year}, or leave it empty."
        out["year"] = y
    area_id = data.get("area_id")
    if area_id in (None, ""):
        out["area_id"] = None
    else:
        try:
            aid = int(area_id)
        except (TypeError, ValueError):
            aid = -1
        area = session.get(Area, aid)
        if area is None or area.site_id != site.id:
            errors["area_id"] = f"Choose one of {site.name}'s areas."
        out["area_id"] = aid
    if errors:
        raise ValidationError(errors)
    return out


def create_machine(
    session: Session,
    site: Site,
    data: Mapping[str, Any],
    *,
    user: User | None = None,
    commit: bool = True,
) -> Machine:
    """A machine with its first (draft) assessment."""
    values = _validate_machine(session, site, data)
    machine = Machine(site=site, **values)
    session.add(machine)
    session.add(
        Assessment(
            machine=machine,
            revision=1,
            status="draft",
            created_by_id=user.id if user else None,
            assessors=user.name if user else "",
        )
    )
    if commit:
        session.commit()
    return machine


def update_machine(
    session: Session, machine: Machine, data: Mapping[str, Any], expected_version: Any = None
) -> Machine:
    _check_version(machine, expected_version)
    values = _validate_machine(session, machine.site, data, machine)
    for key, value in values.items():
        setattr(machine, key, value)
    _commit(session, machine)
    return machine


def set_do_not_operate(session: Session, machine: Machine, flag: bool, reason: str) -> Machine:
    reason = (reason or "").strip()
    if flag and not reason:
        raise ValidationError({"reason": "Say why the machine must not be operated."})
    machine.do_not_operate = flag
    machine.do_not_operate_reason = reason if flag else ""
    _commit(session)
    return machine


def retire_machine(session: Session, machine: Machine, active: bool = False) -> Machine:
    machine.active = active
    _commit(session)
    return machine


def machine_by_tag(session: Session, site: Site, asset_tag: str) -> Machine:
    machine = session.scalar(
        select(Machine).where(Machine.site_id == site.id, Machine.asset_tag == asset_tag)
    )
    if machine is None:
        raise NotFound(f"No machine with asset tag {asset_tag!r} at {site.name}.")
    return machine


def current_assessment(machine: Machine) -> Assessment:
    """The newest revision that is not superseded."""
    live = [a for a in machine.assessments if a.status != "superseded"]
    if not live:
        raise NotFound(f"{machine.asset_tag} has no current assessment.")
    return live[-1]


def update_assessment(session: Session, assessment: Assessment, data: Mapping[str, Any]) -> None:
    if assessment.status in ("approved", "superseded"):
        raise ValidationError(
            {"status": "An approved assessment cannot be changed; start a new revision."}
        )
    for key in (
        "scope",
        "intended_use",
        "foreseeable_misuse",
        "space_limits",
        "time_limits",
        "persons_exposed",
        "assessors",
    ):
        if key in data:
            setattr(assessment, key, _text(data, key, 10000))
    _commit(session)


def _editable(assessment: Assessment) -> None:
    if assessment.status == "in_review":
        raise ValidationError(
            {
                "assessment": f"Revision {assessment.revision} is in review: send it back to "
                "draft to change it."
            }
        )
    if assessment.status in ("approved", "superseded"):
        raise ValidationError(
            {
                "assessment": f"Revision {assessment.revision} is {assessment.status} and cannot "
                "change; start a new revision to edit."
            }
        )


def clone_machine(
    session: Session, source: Machine, data: Mapping[str, Any], *, user: User | None = None
) -> Machine:
    """A new machine of the same fleet, starting from a copy of the source's assessment."""
    base = {k: getattr(source, k) for k in MACHINE_FIELDS}
    base.update({k: v for k, v in data.items() if v not in (None, "")})
    base["serial"] = data.get("serial", "")
    values = _validate_machine(session, source.site, base)
    machine = Machine(site=source.site, **values)
    session.add(machine)
    src = current_assessment(source)
    copy = Assessment(
        machine=machine,
        revision=1,
        status="draft",
        created_by_id=user.id if user else None,
        scope=src.scope,
        intended_use=src.intended_use,
        foreseeable_misuse=src.foreseeable_misuse,
        space_limits=src.space_limits,
        time_limits=src.time_limits,
        persons_exposed=src.persons_exposed,
        assessors=user.name if user else src.assessors,
    )
    session.add(copy)
    with session.no_autoflush:
        copy_assessment_content(session, src, copy)
    session.commit()
    return machine


def copy_assessment_content(
    session: Session, src: Assessment, dst: Assessment, *, keep_origin: bool = False
) -> None:
    """Copy tasks, hazards with their current ratings, functions and measures.

    With ``keep_origin`` (a new revision of the same machine) each copy remembers the
    record it came from, so revisions can be compared.
    """

    def origin(x: Any) -> int | None:
        return x.id if keep_origin else None

    tasks: dict[int, Task] = {}
    for t in src.tasks:
        if t.archived:
            continue
        tasks[t.id] = Task(
            assessment=dst,
            origin_id=origin(t),
            phase=t.phase,
            description=t.description,
            performed_by=t.performed_by,
            frequency=t.frequency,
        )
        session.add(tasks[t.id])
    hazards: dict[int, Hazard] = {}
    for h in src.hazards:
        if h.archived:
            continue
        nh = Hazard(
            assessment=dst,
            origin_id=origin(h),
            task=tasks.get(h.task_id) if h.task_id else None,
            hazard_group=h.hazard_group,
            hazard_type=h.hazard_type,
            danger_zone=h.danger_zone,
            event=h.event,
            harm=h.harm,
            persons_exposed=h.persons_exposed,
            interim_measures=h.interim_measures,
        )
        for r in h.ratings:
            if r.superseded:
                continue
            nh.ratings.append(
                RiskRating(
                    stage=r.stage,
                    method=r.method,
                    parameters=dict(r.parameters),
                    edition=r.edition,
                    derived_level=r.derived_level,
                    derivation=r.derivation,
                    override_level=r.override_level,
                    override_source=r.override_source,
                    override_justification=r.override_justification,
                    override_approved_by=r.override_approved_by,
                )
            )
        hazards[h.id] = nh
        session.add(nh)
    functions: dict[int, SafetyFunction] = {}
    for f in src.safety_functions:
        if f.archived:
            continue
        functions[f.id] = SafetyFunction(
            assessment=dst,
            origin_id=origin(f),
            name=f.name,
            trigger=f.trigger,
            reaction=f.reaction,
            modes=f.modes,
            response_time_s=f.response_time_s,
            hazards=[hazards[h.id] for h in f.hazards if h.id in hazards],
        )
        session.add(functions[f.id])
    for m in src.measures:
        if m.archived:
            continue
        session.add(
            ProtectiveMeasure(
                assessment=dst,
                origin_id=origin(m),
                step=m.step,
                kind=m.kind,
                description=m.description,
                status=m.status,
                safety_function=functions.get(m.safety_function_id)
                if m.safety_function_id
                else None,
                hazards=[hazards[h.id] for h in m.hazards if h.id in hazards],
            )
        )


# --- tasks ---------------------------------------------------------------------


def add_task(
    session: Session, assessment: Assessment, data: Mapping[str, Any], *, commit: bool = True
) -> Task:
    _editable(assessment)
    errors: dict[str, str] = {}
    phase = _text(data, "phase")
    if phase not in PHASES:
        errors["phase"] = f"Choose a life-cycle phase: {', '.join(PHASES.values())}."
    description = _text(data, "description")
    if not description:
        errors["description"] = "Say what is done (e.g. 'hand-feed blanks into the die')."
    if errors:
        raise ValidationError(errors)
    task = Task(
        assessment=assessment,
        phase=phase,
        description=description,
        performed_by=_text(data, "performed_by", 200),
        frequency=_text(data, "frequency", 200),
    )
    session.add(task)
    if commit:
        session.commit()
    return task


# --- ratings -------------------------------------------------------------------


@dataclass(frozen=True)
class RatingOutcome:
    method: str
    level: str
    edition: str
    parameters: dict[str, Any]
    derivation: dict[str, Any]


def compute_rating(
    method: str, params: Mapping[str, Any], editions: Mapping[str, str] | None = None
) -> RatingOutcome:
    """Run the engineering core for one rating method; field-level errors on bad input."""
    editions = dict(DEFAULT_EDITIONS, **(editions or {}))
    if method not in RATING_METHODS:
        raise ValidationError({"method": f"Choose a method: {', '.join(RATING_METHODS)}."})
    try:
        if method == "iso13849":
            choices = {
                "severity": risk.SEVERITY,
                "frequency": risk.FREQUENCY,
                "avoidance": risk.AVOIDANCE,
            }
            wrong = {
                k: f"Choose {' or '.join(v)}." for k, v in choices.items() if params.get(k) not in v
            }
            if wrong:
                raise ValidationError(wrong)
            edition = editions["ISO 13849-1"]
            r = risk.required_pl(
                params["severity"], params["frequency"], params["avoidance"], edition
            )
            return RatingOutcome(
                method,
                r.plr,
                edition,
                {"severity": r.severity, "frequency": r.frequency, "avoidance": r.avoidance},
                r.to_dict(),
            )
        if method == "iec62061":
            fields = {"severity": "Se", "frequency": "Fr", "probability": "Pr", "avoidance": "Av"}
            missing = {k: f"Choose {v}." for k, v in fields.items() if params.get(k) in (None, "")}
            if missing:
                raise ValidationError(missing)
            ints: dict[str, int] = {}
            bad: dict[str, str] = {}
            for k, label in fields.items():
                try:
                    ints[k] = int(params[k])
                except (TypeError, ValueError):
                    bad[k] = f"{label} must be a whole number."
            if bad:
                raise ValidationError(bad)
            edition = editions["IEC 62061"]
            s = risk.required_sil(
                ints["severity"], ints["frequency"], ints["probability"], ints["avoidance"], edition
            )
            level = f"SIL {s.sil}" if s.sil else s.outcome
            return RatingOutcome(method, level, edition, ints, s.to_dict())
        b11 = {"severity": risk.B11_SEVERITY, "probability": risk.B11_PROBABILITY}
        wrong = {
            k: f"Choose one of: {', '.join(v)}." for k, v in b11.items() if params.get(k) not in v
        }
        if wrong:
            raise ValidationError(wrong)
        edition = editions["ANSI B11.0"]
        b = risk.b11_risk_level(params["severity"], params["probability"], edition)
        return RatingOutcome(
            method,
            b.risk_level,
            edition,
            {"severity": b.severity, "probability": b.probability},
            b.to_dict(),
        )
    except InputError as exc:
        raise ValidationError({exc.field: exc.message}) from None


def _validate_override(method: str, data: Mapping[str, Any]) -> dict[str, Any]:
    level = _text(data, "override_level")
    if not level:
        return {
            "override_level": None,
            "override_source": "",
            "override_justification": "",
            "override_approved_by": "",
        }
    allowed = {"iso13849": PL_LEVELS, "iec62061": SIL_LEVELS, "ansi_b11": B11_LEVELS}[method]
    errors: dict[str, str] = {}
    if level not in allowed:
        errors["override_level"] = f"Choose one of: {', '.join(allowed)}."
    for key, msg in (
        ("override_source", "Name the standard and clause (or regulation) that sets this level."),
        ("override_justification", "Explain why the derived level does not apply."),
        ("override_approved_by", "Name who approved the override."),
    ):
        if not _text(data, key):
            errors[key] = msg
    if errors:
        raise ValidationError(errors)
    return {
        "override_level": level,
        "override_source": _text(data, "override_source", 200),
        "override_justification": _text(data, "override_justification", 5000),
        "override_approved_by": _text(data, "override_approved_by", 200),
    }


def _new_rating(
    hazard_editions: Mapping[str, str], data: Mapping[str, Any], user: User | None
) -> RiskRating:
    method = _text(data, "method") or "iso13849"
    stage = _text(data, "stage") or "initial"
    errors: dict[str, str] = {}
    if stage not in RATING_STAGES:
        errors["stage"] = "Choose before measures (initial) or residual."
    try:
        outcome = compute_rating(method, data, hazard_editions)
    except ValidationError as exc:
        errors.update(exc.errors)
        outcome = None
    try:
        override = _validate_override(method, data)
    except ValidationError as exc:
        errors.update(exc.errors)
        override = {}
    if errors or outcome is None:
        raise ValidationError(errors)
    return RiskRating(
        stage=stage,
        method=method,
        parameters=outcome.parameters,
        edition=outcome.edition,
        derived_level=outcome.level,
        derivation=outcome.derivation,
        created_by_id=user.id if user else None,
        **override,
    )


def rate_hazard(
    session: Session,
    hazard: Hazard,
    data: Mapping[str, Any],
    *,
    user: User | None = None,
    commit: bool = True,
) -> RiskRating:
    """Add a rating; an earlier rating of the same stage is kept but superseded."""
    _editable(hazard.assessment)
    rating = _new_rating(hazard.assessment.machine.site.editions, data, user)
    for old in hazard.ratings:
        if old.stage == rating.stage and not old.superseded:
            old.superseded = True
    hazard.ratings.append(rating)
    if commit:
        _commit(session)
    return rating


def current_rating(hazard: Hazard, stage: str) -> RiskRating | None:
    live = [r for r in hazard.ratings if r.stage == stage and not r.superseded]
    return live[-1] if live else None


# --- hazards -------------------------------------------------------------------

HAZARD_TEXT = {
    "hazard_type": 80,
    "danger_zone": 200,
    "event": 5000,
    "harm": 5000,
    "persons_exposed": 200,
    "interim_measures": 5000,
}


def _validate_hazard(assessment: Assessment, data: Mapping[str, Any]) -> dict[str, Any]:
    errors: dict[str, str] = {}
    out: dict[str, Any] = {}
    group = _text(data, "hazard_group")
    if group not in HAZARD_GROUPS:
        errors["hazard_group"] = f"Choose a hazard group: {', '.join(HAZARD_GROUPS.values())}."
    out["hazard_group"] = group
    for key, limit in HAZARD_TEXT.items():
        out[key] = _text(data, key, limit)
    if not out["event"] and not out["hazard_type"]:
        errors["event"] = "Say what could happen (e.g. 'hand crushed between the dies')."
    task_id = data.get("task_id")
    if task_id in (None, ""):
        out["task_id"] = None
    else:
        try:
            tid = int(task_id)
        except (TypeError, ValueError):
            tid = -1
        if tid not in {t.id for t in assessment.tasks}:
            errors["task_id"] = "Choose one of this assessment's tasks, or none."
        out["task_id"] = tid
    if errors:
        raise ValidationError(errors)
    return out


def add_hazard(
    session: Session,
    assessment: Assessment,
    data: Mapping[str, Any],
    rating: Mapping[str, Any] | None = None,
    *,
    user: User | None = None,
    photo_id: int | None = None,
    commit: bool = True,
) -> Hazard:
    """A hazard with an optional first rating; all validated before anything is written."""
    _editable(assessment)
    errors: dict[str, str] = {}
    try:
        values = _validate_hazard(assessment, data)
    except ValidationError as exc:
        errors.update(exc.errors)
        values = {}
    new_rating = None
    if rating:
        try:
            new_rating = _new_rating(assessment.machine.site.editions, rating, user)
        except ValidationError as exc:
            errors.update(exc.errors)
    if errors:
        raise ValidationError(errors)
    hazard = Hazard(assessment=assessment, photo_id=photo_id, **values)
    if new_rating is not None:
        hazard.ratings.append(new_rating)
    session.add(hazard)
    if commit:
        session.commit()
    return hazard


def update_hazard(
    session: Session,
    hazard: Hazard,
    data: Mapping[str, Any],
    expected_version: Any = None,
    rating: Mapping[str, Any] | None = None,
    *,
    user: User | None = None,
) -> Hazard:
    """Edit a hazard (the audit trail keeps the earlier values)."""
    _editable(hazard.assessment)
    _check_version(hazard, expected_version)
    errors: dict[str, str] = {}
    try:
        values = _validate_hazard(hazard.assessment, data)
    except ValidationError as exc:
        errors.update(exc.errors)
        values = {}
    new_rating = None
    if rating:
        try:
            new_rating = _new_rating(hazard.assessment.machine.site.editions, rating, user)
        except ValidationError as exc:
            errors.update(exc.errors)
    if errors:
        raise ValidationError(errors)
    for key, value in values.items():
        setattr(hazard, key, value)
    if new_rating is not None:
        current = current_rating(hazard, new_rating.stage)
        same = current is not None and (
            current.method == new_rating.method
            and current.parameters == new_rating.parameters
            and current.override_level == new_rating.override_level
        )
        if not same:
            if current is not None:
                current.superseded = True
            hazard.ratings.append(new_rating)
    _commit(session, hazard)
    return hazard


def archive_hazard(session: Session, hazard: Hazard, archived: bool = True) -> Hazard:
    """Archive rather than erase: the hazard stays in the record and the audit trail."""
    _editable(hazard.assessment)
    hazard.archived = archived
    _commit(session)
    return hazard


def accept_residual(session: Session, hazard: Hazard, user: User, interim: str = "") -> Hazard:
    if current_rating(hazard, "residual") is None:
        raise ValidationError({"residual": "Rate the residual risk before accepting it."})
    hazard.residual_accepted_by_id = user.id
    hazard.residual_accepted_at = dt.datetime.now(dt.UTC)
    if interim:
        hazard.interim_measures = interim.strip()[:5000]
    _commit(session)
    return hazard


# --- safety functions and measures ----------------------------------------------


def _hazards_of(assessment: Assessment, ids: Iterable[Any], field: str) -> list[Hazard]:
    wanted: set[int] = set()
    for i in ids or ():
        try:
            wanted.add(int(i))
        except (TypeError, ValueError):
            raise ValidationError({field: "Choose hazards from this assessment."}) from None
    by_id = {h.id: h for h in assessment.hazards if not h.archived}
    unknown = wanted - set(by_id)
    if unknown:
        raise ValidationError({field: "Choose hazards from this assessment."})
    return [by_id[i] for i in sorted(wanted)]


def add_safety_function(
    session: Session, assessment: Assessment, data: Mapping[str, Any], *, commit: bool = True
) -> SafetyFunction:
    _editable(assessment)
    errors: dict[str, str] = {}
    name = _text(data, "name", 200)
    if not name:
        errors["name"] = (
            "Name the safety function (e.g. 'stop the slide when the curtain is broken')."
        )
    modes = data.get("modes") or []
    if isinstance(modes, str):
        modes = [m.strip() for m in modes.split(",") if m.strip()]
    bad = [m for m in modes if m not in OPERATING_MODES]
    if bad:
        errors["modes"] = f"Operating modes are: {', '.join(OPERATING_MODES)}."
    response = data.get("response_time_s")
    rt: float | None = None
    if response not in (None, ""):
        try:
            rt = float(response)
        except (TypeError, ValueError):
            rt = -1.0
        if not 0 <= rt <= 10:
            errors["response_time_s"] = "Enter the response time in seconds, from 0 to 10."
    try:
        hazards = _hazards_of(assessment, data.get("hazard_ids") or [], "hazard_ids")
    except ValidationError as exc:
        errors.update(exc.errors)
        hazards = []
    if errors:
        raise ValidationError(errors)
    sf = SafetyFunction(
        assessment=assessment,
        name=name,
        trigger=_text(data, "trigger"),
        reaction=_text(data, "reaction"),
        modes=",".join(modes),
        response_time_s=rt,
        hazards=hazards,
    )
    session.add(sf)
    if commit:
        session.commit()
    return sf


@dataclass(frozen=True)
class RequiredLevel:
    plr: str | None
    sil: str | None
    from_hazards: tuple[int, ...]


def required_level(sf: SafetyFunction) -> RequiredLevel:
    """The highest required level over the function's linked hazards (initial ratings)."""
    best_pl: str | None = None
    best_sil: str | None = None
    ids: list[int] = []
    for h in sf.hazards:
        if h.archived:
            continue
        r = current_rating(h, "initial")
        if r is None:
            continue
        ids.append(h.id)
        if r.method == "iso13849" and (best_pl is None or r.level > best_pl):
            best_pl = r.level
        if r.method == "iec62061" and r.level.startswith("SIL"):
            if best_sil is None or r.level > best_sil:
                best_sil = r.level
    return RequiredLevel(best_pl, best_sil, tuple(ids))


def add_measure(
    session: Session, assessment: Assessment, data: Mapping[str, Any], *, commit: bool = True
) -> ProtectiveMeasure:
    _editable(assessment)
    errors: dict[str, str] = {}
    kind = _text(data, "kind")
    if kind not in MEASURE_KINDS:
        errors["kind"] = "Choose a kind of measure from the list."
    status = _text(data, "status") or "proposed"
    if status not in MEASURE_STATUSES:
        errors["status"] = f"Choose a status: {', '.join(MEASURE_STATUSES)}."
    sf_id = data.get("safety_function_id")
    sf: SafetyFunction | None = None
    if sf_id not in (None, ""):
        try:
            sid = int(sf_id)
        except (TypeError, ValueError):
            sid = -1
        sf = next((f for f in assessment.safety_functions if f.id == sid), None)
        if sf is None:
            errors["safety_function_id"] = "Choose one of this assessment's safety functions."
    try:
        hazards = _hazards_of(assessment, data.get("hazard_ids") or [], "hazard_ids")
    except ValidationError as exc:
        errors.update(exc.errors)
        hazards = []
    if not hazards and "hazard_ids" not in errors:
        errors["hazard_ids"] = "Choose the hazard or hazards this measure reduces."
    if errors:
        raise ValidationError(errors)
    step = MEASURE_KINDS[kind][0]
    m = ProtectiveMeasure(
        assessment=assessment,
        step=step,
        kind=kind,
        description=_text(data, "description", 5000),
        status=status,
        safety_function=sf,
        hazards=hazards,
    )
    session.add(m)
    if commit:
        session.commit()
    return m


def set_measure_status(session: Session, measure: ProtectiveMeasure, status: str) -> None:
    _editable(measure.assessment)
    if status not in MEASURE_STATUSES:
        raise ValidationError({"status": f"Choose a status: {', '.join(MEASURE_STATUSES)}."})
    measure.status = status
    _commit(session)


# --- overview ------------------------------------------------------------------


@dataclass(frozen=True)
class MachineRow:
    machine: Machine
    area_name: str
    open_hazards: int
    highest_plr: str | None
    highest_sil: str | None
    proposed_measures: int


def _current_assessment_ids(site_id: int) -> Any:
    """Subquery: the newest non-superseded assessment id per machine of a site."""
    return (
        select(func.max(Assessment.id).label("aid"))
        .join(Machine, Machine.id == Assessment.machine_id)
        .where(Machine.site_id == site_id, Assessment.status != "superseded")
        .group_by(Assessment.machine_id)
        .scalar_subquery()
    )


OVERVIEW_PAGE_SIZE = 50  # machines per page of the site overview (a tablet-length list)


@dataclass(frozen=True)
class OverviewPage:
    """One page of a site's machines, by area, with the number of them all."""

    rows: list[MachineRow]
    total: int  # machines that match, over all pages
    page: int  # 1-based; a page past the end is brought back to the last one
    pages: int
    per_page: int


def _overview_query(site: Site, search: str, include_retired: bool, pg: bool) -> Any:
    """The site's machines that match, by area (machines without one last), then tag."""

    def text_key(expr: Any) -> Any:
        return expr.collate("C") if pg else expr  # code-point order, as Python sorts

    q = (
        select(Machine)
        .outerjoin(Area, Area.id == Machine.area_id)
        .where(Machine.site_id == site.id)
        .order_by(Area.name.is_(None), text_key(Area.name), text_key(Machine.asset_tag))
    )
    if not include_retired:
        q = q.where(Machine.active.is_(True))
    if search:
        like = f"%{search.strip().lower()}%"
        q = q.where(func.lower(Machine.asset_tag).like(like) | func.lower(Machine.name).like(like))
    return q


def _overview_rows(
    session: Session, site: Site, machines: list[Machine], only_these: bool
) -> list[MachineRow]:
    """Counts and levels of the machines, in three set-based queries (over the given
    machines when ``only_these``, else over the whole site)."""
    if not machines:
        return []
    current = _current_assessment_ids(site.id)
    if only_these:
        current = (
            select(func.max(Assessment.id))
            .where(
                Assessment.machine_id.in_([m.id for m in machines]),
                Assessment.status != "superseded",
            )
            .group_by(Assessment.machine_id)
            .scalar_subquery()
        )
    hazard_counts = dict(
        session.execute(
            select(Assessment.machine_id, func.count(Hazard.id))
            .join(Hazard, Hazard.assessment_id == Assessment.id)
            .where(
                Assessment.id.in_(current),
                Hazard.archived.is_(False),
                Hazard.residual_accepted_at.is_(None),
            )
            .group_by(Assessment.machine_id)
        ).all()
    )
    levels: dict[int, list[tuple[str, str]]] = {}
    level_expr = func.coalesce(RiskRating.override_level, RiskRating.derived_level)
    for machine_id, method, level in session.execute(
        select(Assessment.machine_id, RiskRating.method, level_expr)
        .join(Hazard, Hazard.assessment_id == Assessment.id)
        .join(RiskRating, RiskRating.hazard_id == Hazard.id)
        .where(
            Assessment.id.in_(current),
            Hazard.archived.is_(False),
            RiskRating.stage == "initial",
            RiskRating.superseded.is_(False),
            RiskRating.method.in_(("iso13849", "iec62061")),
        )
        .group_by(Assessment.machine_id, RiskRating.method, level_expr)
    ):
        levels.setdefault(machine_id, []).append((method, level))
    proposed = dict(
        session.execute(
            select(
                Assessment.machine_id,
                func.sum(case((ProtectiveMeasure.status == "proposed", 1), else_=0)),
            )
            .join(ProtectiveMeasure, ProtectiveMeasure.assessment_id == Assessment.id)
            .where(Assessment.id.in_(current), ProtectiveMeasure.archived.is_(False))
            .group_by(Assessment.machine_id)
        ).all()
    )
    rows = []
    for m in machines:
        lv = levels.get(m.id, [])
        pls = [level for method, level in lv if method == "iso13849" and level in PL_LEVELS]
        sils = [level for method, level in lv if method == "iec62061" and level.startswith("SIL")]
        rows.append(
            MachineRow(
                machine=m,
                area_name=m.area.name if m.area else "",
                open_hazards=int(hazard_counts.get(m.id, 0)),
                highest_plr=max(pls) if pls else None,
                highest_sil=max(sils) if sils else None,
                proposed_measures=int(proposed.get(m.id) or 0),
            )
        )
    return rows


def site_overview(
    session: Session, site: Site, search: str = "", include_retired: bool = False
) -> list[MachineRow]:
    """Machines by area with counts, in a fixed number of set-based queries."""
    pg = session.get_bind().dialect.name == "postgresql"
    q = _overview_query(site, search, include_retired, pg).options(contains_eager(Machine.area))
    machines = list(session.scalars(q))
    return _overview_rows(session, site, machines, only_these=False)


def site_overview_page(
    session: Session,
    site: Site,
    search: str = "",
    include_retired: bool = False,
    *,
    page: int = 1,
    per_page: int = OVERVIEW_PAGE_SIZE,
) -> OverviewPage:
    """One page of :func:`site_overview` (same order, same rows), with the total."""
    pg = session.get_bind().dialect.name == "postgresql"
    q = _overview_query(site, search, include_retired, pg)
    total = int(session.scalar(q.with_only_columns(func.count(Machine.id)).order_by(None)) or 0)
    pages = max(1, -(-total // per_page))
    page = min(max(1, page), pages)
    q = q.options(contains_eager(Machine.area)).limit(per_page).offset((page - 1) * per_page)
    machines = list(session.scalars(q))
    return OverviewPage(
        _overview_rows(session, site, machines, only_these=True), total, page, pages, per_page
    )


def machine_in_service(session: Session, site: Site, ref: str) -> Any | None:
    """Id, asset tag and name of a site's machine in service, found by its asset tag or
    its number (the tag wins); None when there is none."""
    which = Machine.asset_tag == ref
    if ref.isdigit() and len(ref) <= 9:
        which = or_(which, Machine.id == int(ref))
    return session.execute(
        select(Machine.id, Machine.asset_tag, Machine.name)
        .where(Machine.site_id == site.id, Machine.active.is_(True), which)
        .order_by(case((Machine.asset_tag == ref, 0), else_=1))
        .limit(1)
    ).first()


def list_machines(session: Session, site: Site | None = None) -> list[Machine]:
    q = select(Machine).options(selectinload(Machine.area), selectinload(Machine.site))
    if site is not None:
        q = q.where(Machine.site_id == site.id)
    return list(session.scalars(q.order_by(Machine.site_id, Machine.asset_tag)))


def load_machine_page(session: Session, machine_id: int) -> Machine:
    """A machine with what its page shows of its revisions (tasks, hazards with their
    ratings and measures, safety functions and their hazards, measures and their
    hazards), in a fixed number of queries: none per hazard, measure or function when
    the page is drawn.

    The two many-to-many links (hazard–measure, hazard–function) are read in one query
    by hazard (the first column of each link table's key) and set on both sides, rather
    than joined: a join through a link table makes SQLite read the whole table. (A
    measure's or function's hazards are of its own assessment: the services and the
    import check it.)"""
    machine = session.scalar(
        select(Machine)
        .where(Machine.id == machine_id)
        .options(
            joinedload(Machine.site),
            joinedload(Machine.area),
            joinedload(Machine.photo),
            selectinload(Machine.assessments).options(
                joinedload(Assessment.approver),
                joinedload(Assessment.tasks),
                selectinload(Assessment.hazards).options(
                    joinedload(Hazard.ratings),
                    joinedload(Hazard.residual_accepted_by),
                    joinedload(Hazard.photo),
                ),
                selectinload(Assessment.safety_functions),
                selectinload(Assessment.measures).joinedload(ProtectiveMeasure.safety_function),
            ),
        )
    )
    if machine is None:
        raise NotFound(f"No machine number {machine_id}.")
    hazards = {h.id: h for a in machine.assessments for h in a.hazards}
    measures = {m.id: m for a in machine.assessments for m in a.measures}
    functions = {f.id: f for a in machine.assessments for f in a.safety_functions}
    if not hazards:
        for x in (*measures.values(), *functions.values()):
            set_committed_value(x, "hazards", [])
        return machine
    hm, hsf = hazard_measure.c, hazard_safety_function.c
    links = session.execute(
        union_all(
            select(literal("m").label("side"), hm.hazard_id, hm.measure_id.label("other")).where(
                hm.hazard_id.in_(list(hazards))
            ),
            select(
                literal("f").label("side"), hsf.hazard_id, hsf.safety_function_id.label("other")
            ).where(hsf.hazard_id.in_(list(hazards))),
        )
    ).all()
    on_hazard: dict[int, list[int]] = {h: [] for h in hazards}
    on_measure: dict[int, list[int]] = {m: [] for m in measures}
    on_function: dict[int, list[int]] = {f: [] for f in functions}
    unknown = False
    for side, hazard_id, other in links:
        if side == "m":
            on_hazard[hazard_id].append(other)
            if other in on_measure:
                on_measure[other].append(hazard_id)
            else:
                unknown = True  # linked to a measure of another machine: leave it lazy
        elif other in on_function:
            on_function[other].append(hazard_id)
    for h_id, ids in on_hazard.items():
        if not unknown:
            set_committed_value(hazards[h_id], "measures", [measures[i] for i in sorted(ids)])
    for m_id, ids in on_measure.items():
        set_committed_value(measures[m_id], "hazards", [hazards[i] for i in sorted(ids)])
    for f_id, ids in on_function.items():
        set_committed_value(functions[f_id], "hazards", [hazards[i] for i in sorted(ids)])
    return machine


def load_machine(session: Session, machine_id: int) -> Machine:
    machine = session.get(Machine, machine_id)
    if machine is None:
        raise NotFound(f"No machine number {machine_id}.")
    return machine
