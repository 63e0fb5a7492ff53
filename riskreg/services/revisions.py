"""Revisions and approvals, the difference between revisions, re-evaluation against
current constants, and management of change.

An approved revision is immutable: its ratings keep the derivation stored when they
were made, and approval stores a snapshot of the safeguard checks and the PL
verification as they stood. A corrected constant or a change of the site's editions
never alters it; :func:`re_evaluate` shows what would change.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy.orm import Session

from riskreg.model import Assessment, Hazard, Machine, Modification, Safeguard, User

from . import safeguards as sg_service
from .errors import Forbidden, ValidationError
from .register import _commit, compute_rating, copy_assessment_content, current_rating
from .users import has_role

MODIFICATION_KINDS = {
    "die_set": "New or changed die set / tooling",
    "control": "Control system change",
    "guard": "Guard or protective device moved, added or removed",
    "brake": "Brake, clutch or valve work",
    "other": "Other modification",
}


def _people_of(a: Assessment) -> set[int]:
    """Who worked on a revision: its creator and everyone who rated a hazard in it."""
    ids = {a.created_by_id} if a.created_by_id else set()
    for h in a.hazards:
        ids.update(r.created_by_id for r in h.ratings if r.created_by_id)
    return ids


def submit(session: Session, a: Assessment, user: User) -> None:
    if a.status != "draft":
        raise ValidationError(
            {
                "status": f"Only a draft can be sent for review; this "
                f"revision is {a.status.replace('_', ' ')}."
            }
        )
    live = [h for h in a.hazards if not h.archived]
    if not live:
        raise ValidationError({"status": "Record at least one hazard before review."})
    unrated = [h.id for h in live if current_rating(h, "initial") is None]
    if unrated:
        raise ValidationError(
            {
                "status": "Rate every hazard before review; unrated: "
                + ", ".join(f"#{i}" for i in unrated)
                + "."
            }
        )
    a.status = "in_review"
    a.submitted_at = dt.datetime.now(dt.UTC)
    _commit(session)


def return_to_draft(session: Session, a: Assessment, user: User, reason: str) -> None:
    if a.status != "in_review":
        raise ValidationError({"status": "Only a revision in review can go back to draft."})
    if not (reason or "").strip():
        raise ValidationError({"reason": "Say what must be changed before approval."})
    a.status = "draft"
    a.change_reason = (
        a.change_reason + "\n" if a.change_reason else ""
    ) + f"Returned by {user.name}: {reason.strip()[:2000]}"
    _commit(session)


def snapshot(a: Assessment) -> dict[str, Any]:
    """The checks as they stand: safeguard evaluations and PL verifications."""
    m = a.machine
    latest = sg_service.latest_measurement(m)
    profile = sg_service.press_profile(m)
    guards = []
    for s in sg_service.safeguards_of(m):
        ev = sg_service.evaluate(
            s, latest.t_used_s if latest else None, m.site.distance_method, profile
        )
        guards.append(
            {
                "safeguard": s.label,
                "kind": s.kind,
                "status": s.status,
                "required_mm": ev.required_mm,
                "installed_mm": ev.installed_mm,
                "passed": ev.passed,
                "message": ev.message,
                "problems": ev.problems,
                "results": ev.derivations(),
            }
        )
    functions = []
    for f in a.safety_functions:
        if f.archived:
            continue
        v = sg_service.verify_function(f)
        functions.append(
            {
                "name": f.name,
                "required": v.required,
                "achieved": v.achieved,
                "passed": v.passed,
                "problems": v.problems,
                "series": v.series.to_dict() if v.series else None,
            }
        )
    return {
        "editions": dict(m.site.editions),
        "distance_method": m.site.distance_method,
        "stopping_time": None
        if latest is None
        else {"measured_on": latest.measured_on.isoformat(), "t_used_s": latest.t_used_s},
        "safeguards": guards,
        "safety_functions": functions,
    }


def approve(session: Session, a: Assessment, approver: User) -> None:
    if not has_role(approver, "approver"):
        raise Forbidden("Approval needs the approver role.")
    if a.status != "in_review":
        raise ValidationError({"status": "Send the revision for review before approving it."})
    if not a.machine.site.allow_self_approval and approver.id in _people_of(a):
        raise ValidationError(
            {
                "status": "You worked on this revision: another approver must "
                "approve it (the site does not allow approving one's "
                "own work)."
            }
        )
    for other in a.machine.assessments:
        if other.id != a.id and other.status == "approved":
            other.status = "superseded"
    a.status = "approved"
    a.approver_id = approver.id
    a.approved_at = dt.datetime.now(dt.UTC)
    a.snapshot = snapshot(a)
    _commit(session)


def new_revision(
    session: Session, machine: Machine, user: User | None, reason: str = ""
) -> Assessment:
    """A draft copy of the approved revision; the approved one stays as it is."""
    live = [x for x in machine.assessments if x.status != "superseded"]
    if not live:
        raise ValidationError({"assessment": "This machine has no assessment to revise."})
    current = live[-1]
    if current.status in ("draft", "in_review"):
        raise ValidationError(
            {
                "assessment": f"Revision {current.revision} is still "
                f"{current.status.replace('_', ' ')}: edit it."
            }
        )
    new = Assessment(
        machine=machine,
        revision=max(x.revision for x in machine.assessments) + 1,
        status="draft",
        created_by_id=user.id if user else None,
        scope=current.scope,
        intended_use=current.intended_use,
        foreseeable_misuse=current.foreseeable_misuse,
        space_limits=current.space_limits,
        time_limits=current.time_limits,
        persons_exposed=current.persons_exposed,
        assessors=user.name if user else current.assessors,
        change_reason=(reason or "").strip()[:5000],
    )
    session.add(new)
    with session.no_autoflush:
        copy_assessment_content(session, current, new, keep_origin=True)
    _commit(session)
    return new


def editable_revision(session: Session, machine: Machine, user: User | None) -> Assessment:
    """The draft to edit: the current one, or a new revision of an approved one."""
    live = [x for x in machine.assessments if x.status != "superseded"]
    current = live[-1]
    if current.status == "approved":
        return new_revision(session, machine, user, "Edited after approval")
    return current


# --- what changed between two revisions ---------------------------------------------


@dataclass
class Change:
    what: str  # "hazard", "rating", "measure", "task", "safety function"
    action: str  # added, changed, removed
    label: str
    fields: list[tuple[str, Any, Any]] = field(default_factory=list)


HAZARD_FIELDS = (
    "hazard_group",
    "hazard_type",
    "danger_zone",
    "event",
    "harm",
    "persons_exposed",
    "interim_measures",
)


def _rating_view(h: Hazard) -> dict[str, str | None]:
    out: dict[str, str | None] = {}
    for stage in ("initial", "residual"):
        r = current_rating(h, stage)
        out[stage] = None if r is None else f"{r.method} {r.level}"
    return out


def diff(previous: Assessment | None, current: Assessment) -> list[Change]:
    """Hazards, ratings, measures, tasks and functions added, changed or removed."""
    changes: list[Change] = []

    def pairs(
        old_items: list[Any], new_items: list[Any]
    ) -> tuple[list[Any], list[Any], list[tuple[Any, Any]]]:
        old = {x.id: x for x in old_items if not x.archived}
        matched: list[tuple[Any, Any]] = []
        added = []
        for n in new_items:
            if n.archived:
                continue
            o = old.pop(n.origin_id, None) if n.origin_id else None
            if o is None:
                added.append(n)
            else:
                matched.append((o, n))
        return added, list(old.values()), matched

    prev_h = previous.hazards if previous else []
    added, removed, matched = pairs(prev_h, current.hazards)
    for h in added:
        changes.append(Change("hazard", "added", f"#{h.id} {h.hazard_type or h.hazard_group}"))
    for h in removed:
        changes.append(Change("hazard", "removed", f"#{h.id} {h.hazard_type or h.hazard_group}"))
    for o, n in matched:
        f = [
            (k, getattr(o, k), getattr(n, k))
            for k in HAZARD_FIELDS
            if getattr(o, k) != getattr(n, k)
        ]
        if f:
            changes.append(Change("hazard", "changed", f"#{n.id} {n.hazard_type}", f))
        ro, rn = _rating_view(o), _rating_view(n)
        rf = [(stage, ro[stage], rn[stage]) for stage in ro if ro[stage] != rn[stage]]
        if rf:
            changes.append(Change("rating", "changed", f"#{n.id} {n.hazard_type}", rf))
    for what, attr, fields_ in (
        ("measure", "measures", ("kind", "status", "description")),
        ("task", "tasks", ("phase", "description", "performed_by", "frequency")),
        ("safety function", "safety_functions", ("name", "trigger", "reaction", "modes")),
    ):
        a_, r_, m_ = pairs(getattr(previous, attr) if previous else [], getattr(current, attr))
        for x in a_:
            changes.append(Change(what, "added", _label(x)))
        for x in r_:
            changes.append(Change(what, "removed", _label(x)))
        for o, n in m_:
            f = [
                (k, getattr(o, k), getattr(n, k)) for k in fields_ if getattr(o, k) != getattr(n, k)
            ]
            if f:
                changes.append(Change(what, "changed", _label(n), f))
    return changes


def _label(x: Any) -> str:
    for attr in ("name", "description", "kind"):
        v = getattr(x, attr, None)
        if v:
            return str(v)[:80]
    return f"#{x.id}"


def previous_of(a: Assessment) -> Assessment | None:
    older = [x for x in a.machine.assessments if x.revision < a.revision]
    return older[-1] if older else None


# --- re-evaluation against the current constants and editions --------------------------


@dataclass
class Reevaluation:
    hazard: Hazard
    stage: str
    stored_level: str
    stored_edition: str
    now_level: str
    now_edition: str
    changed: bool
    constants_changed: list[str]


def re_evaluate(a: Assessment) -> list[Reevaluation]:
    """Recompute every current rating with today's constants; the stored ones stay."""
    out: list[Reevaluation] = []
    editions = a.machine.site.editions
    for h in a.hazards:
        if h.archived:
            continue
        for stage in ("initial", "residual"):
            r = current_rating(h, stage)
            if r is None:
                continue
            now = compute_rating(r.method, r.parameters, editions)
            old_consts = {
                c["key"]: (c["value"], c["status"], c["edition"])
                for c in r.derivation.get("derivation", {}).get("constants", [])
            }
            new_consts = {
                c["key"]: (c["value"], c["status"], c["edition"])
                for c in now.derivation["derivation"]["constants"]
            }
            diffs = sorted(
                k
                for k in set(old_consts) | set(new_consts)
                if old_consts.get(k) != new_consts.get(k)
            )
            out.append(
                Reevaluation(
                    h,
                    stage,
                    r.derived_level,
                    r.edition,
                    now.level,
                    now.edition,
                    now.level != r.derived_level,
                    diffs,
                )
            )
    return out


# --- management of change ---------------------------------------------------------------


def record_modification(
    session: Session, machine: Machine, data: Mapping[str, Any], user: User | None
) -> Modification:
    """Record a modification: it reopens the assessment (a new draft revision when the
    current one is approved) and marks the affected safeguards for revalidation."""
    errors: dict[str, str] = {}
    kind = str(data.get("kind") or "")
    if kind not in MODIFICATION_KINDS:
        errors["kind"] = f"Choose a kind: {', '.join(MODIFICATION_KINDS.values())}."
    description = str(data.get("description") or "").strip()
    if not description:
        errors["description"] = "Describe what was changed on the machine."
    raw_on = data.get("made_on") or dt.date.today().isoformat()
    try:
        made_on = raw_on if isinstance(raw_on, dt.date) else dt.date.fromisoformat(str(raw_on))
        if made_on > dt.date.today():
            errors["made_on"] = "Record a modification once it is made (the date is in the future)."
    except ValueError:
        errors["made_on"] = "Enter the date as YYYY-MM-DD."
        made_on = dt.date.today()
    ids: list[int] = []
    for x in data.get("safeguard_ids") or []:
        try:
            ids.append(int(x))
        except (TypeError, ValueError):
            errors["safeguard_ids"] = "Choose safeguards of this machine."
    guards = {s.id: s for s in sg_service.safeguards_of(machine)}
    if any(i not in guards for i in ids):
        errors["safeguard_ids"] = "Choose safeguards of this machine."
    if errors:
        raise ValidationError(errors)
    live = [x for x in machine.assessments if x.status != "superseded"][-1]
    reason = f"Modification on {made_on}: {description[:2000]}"
    if live.status == "approved":
        live = new_revision(session, machine, user, reason)
    else:
        if live.status == "in_review":
            live.status = "draft"
        live.change_reason = (live.change_reason + "\n" if live.change_reason else "") + reason
    for i in ids:
        s: Safeguard = guards[i]
        s.needs_revalidation = True
    mod = Modification(
        machine=machine,
        made_on=made_on,
        kind=kind,
        description=description,
        recorded_by=user.email if user else "",
        assessment_id=live.id,
        safeguard_ids=sorted(ids),
    )
    session.add(mod)
    _commit(session)
    return mod
