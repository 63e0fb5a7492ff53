"""Verification evidence: records with their files, intervals, the "not trusted"
state, start-of-shift checklists, instruments, lockout procedures, calendar tokens."""

from __future__ import annotations

import datetime as dt
import hashlib
import os
import secrets
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, joinedload

from riskreg.model import (
    CalendarToken,
    Instrument,
    LockoutProcedure,
    Machine,
    Safeguard,
    ShiftCheck,
    ShiftChecklist,
    Site,
    Verification,
    VerificationInterval,
)

from . import evidence
from .errors import NotFound, ValidationError
from .register import _commit
from .safeguards import _raise_action


@dataclass(frozen=True)
class KindInfo:
    label: str
    default_days: int | None
    source: str
    per: str  # "safeguard" or "machine"


# Default intervals; each is editable per site and per safeguard.
KINDS: dict[str, KindInfo] = {
    "functional_test": KindInfo(
        "Functional test by maintenance",
        90,
        "riskreg's starting default, not a standard's: set your own practice [practice]",
        "safeguard",
    ),
    "inspection": KindInfo("Periodic inspection", 365, "commonly yearly [practice]", "safeguard"),
    "stopping_time": KindInfo(
        "Stopping-time measurement",
        365,
        "at commissioning, after brake or valve work, and commonly yearly [practice]",
        "machine",
    ),
    "full_validation": KindInfo(
        "Full validation after modification (ISO 13849-2)",
        None,
        "after every modification, not on a calendar (ISO 13849-2) [std, from memory]",
        "safeguard",
    ),
    "weekly_press": KindInfo(
        "Weekly press inspection (clutch/brake, anti-repeat, single-stroke)",
        7,
        "29 CFR 1910.217(e)(1)(ii), weekly, certified with date, signature and press serial; "
        "presses meeting (b)(13) and (b)(14) are exempt [reg, from memory]",
        "machine",
    ),
}
RESULTS = {"pass": "Pass", "fail": "Fail", "remarks": "Passed with remarks"}
MAX_FILES = 10


def _date(
    value: Any, field: str, errors: dict[str, str], *, allow_future: bool = False
) -> dt.date | None:
    if isinstance(value, dt.date):
        d = value
    else:
        try:
            d = dt.date.fromisoformat(str(value or "").strip())
        except ValueError:
            errors[field] = "Enter the date as YYYY-MM-DD."
            return None
    if not allow_future and d > dt.date.today():
        errors[field] = "The date is in the future: enter the day the work was done."
        return None
    if d.year < 1950:
        errors[field] = "Enter a date after 1950."
        return None
    return d


def interval_days(
    session: Session, site: Site, kind: str, safeguard: Safeguard | None = None
) -> int | None:
    """The interval in force: the safeguard's own, else the site's, else the default."""
    rows = {
        (r.safeguard_id, r.kind): r.days
        for r in session.scalars(
            select(VerificationInterval).where(
                VerificationInterval.site_id == site.id, VerificationInterval.kind == kind
            )
        )
    }
    if safeguard is not None and (safeguard.id, kind) in rows:
        return rows[(safeguard.id, kind)]
    if (None, kind) in rows:
        return rows[(None, kind)]
    return KINDS[kind].default_days


def set_interval(
    session: Session, site: Site, kind: str, days: Any, safeguard: Safeguard | None = None
) -> VerificationInterval:
    if kind not in KINDS:
        raise ValidationError({"kind": f"Choose a kind: {', '.join(KINDS)}."})
    try:
        n = int(days)
    except (TypeError, ValueError):
        raise ValidationError({"days": "Enter the interval as a whole number of days."}) from None
    if not 1 <= n <= 3650:
        raise ValidationError({"days": "Enter an interval from 1 to 3650 days."})
    row = session.scalar(
        select(VerificationInterval).where(
            VerificationInterval.site_id == site.id,
            VerificationInterval.kind == kind,
            VerificationInterval.safeguard_id == (safeguard.id if safeguard else None),
        )
    )
    if row is None:
        row = VerificationInterval(
            site_id=site.id, kind=kind, safeguard_id=safeguard.id if safeguard else None, days=n
        )
        session.add(row)
    row.days = n
    _commit(session)
    return row


@dataclass(frozen=True)
class Upload:
    filename: str
    data: bytes


def record_verification(
    session: Session,
    machine: Machine,
    data: Mapping[str, Any],
    files: Sequence[Upload] = (),
    *,
    instance_path: str | os.PathLike[str],
    user_id: int | None = None,
) -> Verification:
    """Validate everything (files included) first; then write all or nothing.

    A failed result marks the safeguard not trusted and opens a corrective action;
    a later pass makes it trusted again.
    """
    errors: dict[str, str] = {}
    kind = str(data.get("kind") or "")
    if kind not in KINDS:
        errors["kind"] = f"Choose a kind of verification: {', '.join(KINDS)}."
    result = str(data.get("result") or "")
    if result not in RESULTS:
        errors["result"] = "Choose pass, fail or passed with remarks."
    on = _date(data.get("performed_on"), "performed_on", errors)
    who = str(data.get("performed_by") or "").strip()[:200]
    if not who:
        errors["performed_by"] = "Enter who did the verification."
    safeguard: Safeguard | None = None
    sid = data.get("safeguard_id")
    if sid not in (None, ""):
        try:
            safeguard = session.get(Safeguard, int(sid))
        except (TypeError, ValueError):
            safeguard = None
        if safeguard is None or safeguard.machine_id != machine.id:
            errors["safeguard_id"] = "Choose one of this machine's safeguards."
            safeguard = None
    if (
        kind in KINDS
        and KINDS[kind].per == "safeguard"
        and safeguard is None
        and "safeguard_id" not in errors
    ):
        errors["safeguard_id"] = "Choose the safeguard this verification is for."
    if kind == "weekly_press":
        if machine.kind != "mechanical_press":
            errors["kind"] = "The weekly press inspection is for mechanical power presses."
        if not str(data.get("press_serial") or "").strip():
            errors["press_serial"] = (
                "Enter the press serial number (it is part of the certification record)."
            )
        if not str(data.get("signature") or "").strip():
            errors["signature"] = "Enter the name of the person who certifies the inspection."
    if result in ("fail", "remarks") and not str(data.get("notes") or "").strip():
        errors["notes"] = "Say what was found."
    instrument: Instrument | None = None
    iid = data.get("instrument_id")
    if iid not in (None, ""):
        try:
            instrument = session.get(Instrument, int(iid))
        except (TypeError, ValueError):
            instrument = None
        if instrument is None or instrument.site_id != machine.site_id:
            errors["instrument_id"] = "Choose one of this site's instruments."
            instrument = None
    real_files = [f for f in files if f.filename or f.data]
    if len(real_files) > MAX_FILES:
        errors["files"] = f"Attach at most {MAX_FILES} files to one record."
    kinds: list[str] = []
    for f in real_files:
        try:
            kinds.append(evidence.check_upload(f.data, f.filename, evidence.ALL_TYPES, "files"))
        except ValidationError as exc:
            errors["files"] = exc.errors["files"]
            break
    if errors:
        raise ValidationError(errors)
    assert on is not None
    v = Verification(
        machine=machine,
        safeguard=safeguard,
        kind=kind,
        performed_on=on,
        performed_by=who,
        result=result,
        measured_values=str(data.get("measured_values") or "")[:5000],
        notes=str(data.get("notes") or "")[:5000],
        press_serial=str(data.get("press_serial") or "")[:120],
        signature=str(data.get("signature") or "")[:200],
        instrument=instrument,
    )
    session.add(v)
    for f in real_files:
        v.evidence.append(
            evidence.store(
                session, instance_path, f.data, f.filename, user_id=user_id, field="files"
            )
        )
    target = f"{safeguard.label}" if safeguard else machine.asset_tag
    if result == "fail":
        if safeguard is not None:
            safeguard.trusted = False
        session.flush()
        action = _raise_action(
            session,
            machine,
            safeguard,
            "verification",
            f"{target}: {KINDS[kind].label.lower()} failed on {on}",
            str(data.get("notes") or "")[:2000],
        )
        action.verification_id = v.id
    elif safeguard is not None and not safeguard.trusted and _is_latest(session, safeguard, on):
        safeguard.trusted = True
    if result != "fail" and kind == "full_validation" and safeguard is not None:
        safeguard.needs_revalidation = False
    _commit(session)
    return v


def _is_latest(session: Session, safeguard: Safeguard, on: dt.date) -> bool:
    """True when no failed verification of the safeguard is later than ``on``."""
    later_fail = session.scalar(
        select(Verification.id)
        .where(
            Verification.safeguard_id == safeguard.id,
            Verification.result == "fail",
            Verification.performed_on > on,
        )
        .limit(1)
    )
    return later_fail is None


def verifications_of(
    session: Session, machine: Machine, limit: int | None = None
) -> list[Verification]:
    q = (
        select(Verification)
        .where(Verification.machine_id == machine.id)
        .options(joinedload(Verification.evidence))
        .order_by(Verification.performed_on.desc(), Verification.id.desc())
    )
    if limit:
        q = q.limit(limit)
    return list(session.scalars(q).unique())


# --- start-of-shift checks -------------------------------------------------------------


def save_checklist(session: Session, machine: Machine, data: Mapping[str, Any]) -> ShiftChecklist:
    errors: dict[str, str] = {}
    raw = data.get("items") or ""
    items = [
        ln.strip() for ln in (raw.splitlines() if isinstance(raw, str) else raw) if str(ln).strip()
    ]
    if not items:
        errors["items"] = "Enter one check per line (e.g. 'light curtain stops the slide')."
    if len(items) > 40:
        errors["items"] = "Keep the checklist to 40 items at most."
    try:
        shifts = int(data.get("shifts_per_day") or 1)
    except (TypeError, ValueError):
        shifts = 0
    if not 1 <= shifts <= 3:
        errors["shifts_per_day"] = "Enter 1, 2 or 3 shifts per day."
    days = "".join(sorted(set(str(data.get("working_days") or "12345")) & set("1234567")))
    if not days:
        errors["working_days"] = "Give the working days as ISO weekday numbers, e.g. 12345."
    since = _date(
        data.get("active_since") or dt.date.today(), "active_since", errors, allow_future=True
    )
    if errors:
        raise ValidationError(errors)
    row = session.scalar(select(ShiftChecklist).where(ShiftChecklist.machine_id == machine.id))
    if row is None:
        row = ShiftChecklist(machine=machine, active_since=since)
        session.add(row)
    row.items = items
    row.shifts_per_day = shifts
    row.working_days = days
    row.active_since = since or row.active_since
    _commit(session)
    return row


def checklist_of(session: Session, machine: Machine) -> ShiftChecklist | None:
    return session.scalar(select(ShiftChecklist).where(ShiftChecklist.machine_id == machine.id))


def record_shift_check(session: Session, machine: Machine, data: Mapping[str, Any]) -> ShiftCheck:
    """Tick a shift's checklist; items not ticked are failures and raise an action."""
    checklist = checklist_of(session, machine)
    if checklist is None:
        raise ValidationError({"items": "This machine has no start-of-shift checklist yet."})
    errors: dict[str, str] = {}
    on = _date(data.get("shift_date") or dt.date.today(), "shift_date", errors)
    try:
        shift = int(data.get("shift") or 1)
    except (TypeError, ValueError):
        shift = 0
    if not 1 <= shift <= checklist.shifts_per_day:
        errors["shift"] = f"Choose a shift from 1 to {checklist.shifts_per_day}."
    who = str(data.get("performed_by") or "").strip()[:200]
    if not who:
        errors["performed_by"] = "Enter who did the check."
    ticked = set(data.get("ok_items") or [])
    unknown = ticked - set(checklist.items)
    if unknown:
        errors["ok_items"] = "Tick items of this machine's checklist only."
    if (
        on is not None
        and "shift" not in errors
        and session.scalar(
            select(ShiftCheck.id).where(
                ShiftCheck.machine_id == machine.id,
                ShiftCheck.shift_date == on,
                ShiftCheck.shift == shift,
            )
        )
    ):
        errors["shift_date"] = f"Shift {shift} of {on} is already recorded."
    if errors:
        raise ValidationError(errors)
    failed = [i for i in checklist.items if i not in ticked]
    if failed and not str(data.get("notes") or "").strip():
        raise ValidationError({"notes": "Some items did not pass: say what was found."})
    row = ShiftCheck(
        machine_id=machine.id,
        shift_date=on,
        shift=shift,
        performed_by=who,
        failed_items=failed,
        notes=str(data.get("notes") or "")[:2000],
    )
    session.add(row)
    if failed:
        _raise_action(
            session,
            machine,
            None,
            "shift check",
            f"{machine.asset_tag}: start-of-shift check failed on {on}",
            "Failed: " + "; ".join(failed) + ". " + row.notes,
            due_days=1,
        )
    _commit(session)
    return row


# --- instruments, lockout procedures ---------------------------------------------------


def save_instrument(session: Session, site: Site, data: Mapping[str, Any]) -> Instrument:
    errors: dict[str, str] = {}
    name = str(data.get("name") or "").strip()[:120]
    if not name:
        errors["name"] = "Name the instrument (e.g. 'stop-time meter 2')."
    elif session.scalar(
        select(Instrument.id).where(Instrument.site_id == site.id, Instrument.name == name)
    ):
        errors["name"] = f"{site.name} already has an instrument named {name!r}."
    cal = None
    if data.get("calibrated_on") not in (None, ""):
        cal = _date(data.get("calibrated_on"), "calibrated_on", errors)
    try:
        days = int(data.get("calibration_interval_days") or 365)
    except (TypeError, ValueError):
        days = 0
    if not 1 <= days <= 3650:
        errors["calibration_interval_days"] = "Enter the calibration interval, 1 to 3650 days."
    if errors:
        raise ValidationError(errors)
    row = Instrument(
        site=site,
        name=name,
        serial=str(data.get("serial") or "")[:120],
        calibrated_on=cal,
        calibration_interval_days=days,
    )
    session.add(row)
    _commit(session)
    return row


def calibrate(session: Session, instrument: Instrument, on: Any) -> None:
    errors: dict[str, str] = {}
    d = _date(on, "calibrated_on", errors)
    if errors:
        raise ValidationError(errors)
    instrument.calibrated_on = d
    _commit(session)


def calibration_due(instrument: Instrument) -> dt.date | None:
    if instrument.calibrated_on is None:
        return None
    return instrument.calibrated_on + dt.timedelta(days=instrument.calibration_interval_days)


def in_calibration(instrument: Instrument, on: dt.date) -> bool:
    due = calibration_due(instrument)
    return (
        due is not None
        and instrument.calibrated_on is not None
        and instrument.calibrated_on <= on <= due
    )


def instruments(session: Session, site: Site) -> list[Instrument]:
    return list(
        session.scalars(
            select(Instrument).where(Instrument.site_id == site.id).order_by(Instrument.name)
        )
    )


def save_lockout(session: Session, machine: Machine, data: Mapping[str, Any]) -> LockoutProcedure:
    errors: dict[str, str] = {}
    title = str(data.get("title") or "").strip()[:200]
    if not title:
        errors["title"] = "Name the procedure (e.g. 'lock-out for die change')."
    last = None
    if data.get("last_inspected_on") not in (None, ""):
        last = _date(data.get("last_inspected_on"), "last_inspected_on", errors)
    try:
        days = int(data.get("interval_days") or 365)
    except (TypeError, ValueError):
        days = 0
    if not 1 <= days <= 3650:
        errors["interval_days"] = "Enter the inspection interval, 1 to 3650 days."
    if errors:
        raise ValidationError(errors)
    row = LockoutProcedure(
        machine=machine,
        title=title,
        last_inspected_on=last,
        interval_days=days,
        inspected_by=str(data.get("inspected_by") or ""),
    )
    session.add(row)
    _commit(session)
    return row


def lockouts_of(session: Session, machine: Machine) -> list[LockoutProcedure]:
    return list(
        session.scalars(
            select(LockoutProcedure)
            .where(LockoutProcedure.machine_id == machine.id)
            .order_by(LockoutProcedure.title, LockoutProcedure.id)
        )
    )


def mark_lockout_inspected(
    session: Session, procedure: LockoutProcedure, by: str, on: Any = None
) -> None:
    """Record the periodic inspection of a lockout procedure (today unless ``on``)."""
    errors: dict[str, str] = {}
    d = _date(on or dt.date.today(), "last_inspected_on", errors)
    who = str(by or "").strip()[:200]
    if not who:
        errors["inspected_by"] = "Enter who inspected the procedure."
    if errors:
        raise ValidationError(errors)
    procedure.last_inspected_on = d
    procedure.inspected_by = who
    _commit(session)


# --- calendar tokens -----------------------------------------------------------------


def _hash(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def new_calendar_token(session: Session, site: Site, label: str = "") -> str:
    """A new secret for the site's calendar feed; only its hash is stored."""
    token = secrets.token_urlsafe(24)
    session.add(CalendarToken(site_id=site.id, token_hash=_hash(token), label=label[:120]))
    _commit(session)
    return token


def site_for_token(session: Session, token: str) -> Site:
    row = session.scalar(
        select(CalendarToken).where(CalendarToken.token_hash == _hash(token or ""))
    )
    if row is None or row.revoked_at is not None:
        raise NotFound("This calendar link is not valid (it may have been revoked).")
    site = session.get(Site, row.site_id)
    assert site is not None
    return site


def revoke_calendar_token(session: Session, token_id: int) -> None:
    row = session.get(CalendarToken, token_id)
    if row is None:
        raise NotFound(f"No calendar link number {token_id}.")
    row.revoked_at = dt.datetime.now(dt.UTC)
    _commit(session)


def calendar_tokens(session: Session, site: Site) -> list[CalendarToken]:
    return list(
        session.scalars(
            select(CalendarToken).where(CalendarToken.site_id == site.id).order_by(CalendarToken.id)
        )
    )
