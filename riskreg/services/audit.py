"""The audit trail, enforced in one place: a flush hook on every session.

Every insert, update and delete of a register record writes an
:class:`AuditEntry` with who, when, what, and the values before and after. No
code path can write a record without it, because the hook sits on the session,
not in the views.
"""

from __future__ import annotations

import datetime as dt
import decimal
from typing import Any

from sqlalchemy import event, inspect
from sqlalchemy.orm import Session, object_session, sessionmaker

from riskreg.model import (
    Area,
    Assessment,
    AuditEntry,
    Base,
    Hazard,
    Machine,
    ProtectiveMeasure,
    RiskRating,
    SafetyFunction,
    Site,
    Task,
    User,
)

SKIP_COLUMNS = {"password_hash"}
NOT_AUDITED: tuple[type, ...] = (AuditEntry,)


def _jsonable(value: Any) -> Any:
    if isinstance(value, (dt.datetime, dt.date)):
        return value.isoformat()
    if isinstance(value, decimal.Decimal):
        return float(value)
    return value


def _columns(obj: Base, *, committed: bool) -> dict[str, Any]:
    state = inspect(obj)
    out: dict[str, Any] = {}
    for attr in state.mapper.column_attrs:
        key = attr.key
        if key in SKIP_COLUMNS:
            continue
        hist = state.attrs[key].history
        if committed:
            if hist.deleted:
                value = hist.deleted[0]
            elif hist.unchanged:
                value = hist.unchanged[0]
            else:
                value = getattr(obj, key, None) if not hist.added else None
        else:
            value = getattr(obj, key, None)
        out[key] = _jsonable(value)
    return out


def _place(obj: Base) -> tuple[int | None, int | None]:
    """(site_id, machine_id) of a record, for the per-site and per-machine views."""
    if isinstance(obj, Site):
        return obj.id, None
    if isinstance(obj, Area):
        return obj.site_id, None
    if isinstance(obj, Machine):
        return obj.site_id, obj.id
    assessment: Assessment | None = None
    if isinstance(obj, Assessment):
        assessment = obj
    elif isinstance(obj, (Task, Hazard, ProtectiveMeasure, SafetyFunction)):
        assessment = obj.assessment
    elif isinstance(obj, RiskRating):
        assessment = obj.hazard.assessment if obj.hazard is not None else None
    else:
        for via in ("machine", "safeguard", "hazard", "safety_function", "measurement", "profile"):
            parent = getattr(obj, via, None)
            if parent is not None and parent is not obj and isinstance(parent, Base):
                if isinstance(parent, Machine):
                    return parent.site_id, parent.id
                return _place(parent)
        machine_id = getattr(obj, "machine_id", None)
        site_id = getattr(obj, "site_id", None)
        if machine_id is not None and site_id is None:
            session = object_session(obj)
            m = session.get(Machine, machine_id) if session is not None else None
            site_id = m.site_id if m is not None else None
        return site_id, machine_id
    if assessment is None or assessment.machine is None:
        return None, None
    return assessment.machine.site_id, assessment.machine_id


def _changed(obj: Base) -> bool:
    state = inspect(obj)
    return any(state.attrs[a.key].history.has_changes() for a in state.mapper.column_attrs)


def _before_flush(session: Session, _ctx: Any, _instances: Any) -> None:
    actor_id = session.info.get("actor_id")
    actor_email = session.info.get("actor_email", "")
    pending: list[tuple[str, Base]] = session.info.setdefault("audit_pending", [])
    for obj in list(session.new):
        if isinstance(obj, Base) and not isinstance(obj, NOT_AUDITED):
            pending.append(("create", obj))
    for obj in list(session.dirty):
        if isinstance(obj, Base) and not isinstance(obj, NOT_AUDITED) and _changed(obj):
            before = _columns(obj, committed=True)
            site_id, machine_id = _place(obj)
            session.add(
                AuditEntry(
                    user_id=actor_id,
                    user_email=actor_email,
                    action="update",
                    entity=type(obj).__tablename__,
                    entity_id=getattr(obj, "id", None),
                    site_id=site_id,
                    machine_id=machine_id,
                    before=before,
                    after=_columns(obj, committed=False),
                )
            )
    for obj in list(session.deleted):
        if isinstance(obj, Base) and not isinstance(obj, NOT_AUDITED):
            site_id, machine_id = _place(obj)
            session.add(
                AuditEntry(
                    user_id=actor_id,
                    user_email=actor_email,
                    action="delete",
                    entity=type(obj).__tablename__,
                    entity_id=getattr(obj, "id", None),
                    site_id=site_id,
                    machine_id=machine_id,
                    before=_columns(obj, committed=True),
                    after=None,
                )
            )


def _after_flush(session: Session, _ctx: Any) -> None:
    """Created records get their entry once their id is known."""
    pending: list[tuple[str, Base]] = session.info.pop("audit_pending", [])
    if not pending:
        return
    actor_id = session.info.get("actor_id")
    actor_email = session.info.get("actor_email", "")
    rows = []
    for action, obj in pending:
        site_id, machine_id = _place(obj)
        rows.append(
            {
                "at": dt.datetime.now(dt.UTC),
                "user_id": actor_id,
                "user_email": actor_email,
                "action": action,
                "entity": type(obj).__tablename__,
                "entity_id": getattr(obj, "id", None),
                "site_id": site_id,
                "machine_id": machine_id,
                "before": None,
                "after": _columns(obj, committed=False),
            }
        )
    session.connection().execute(AuditEntry.__table__.insert(), rows)


def install(factory: sessionmaker[Session]) -> None:
    """Put the session hooks on every session the factory makes: the audit trail, and
    the stored due items kept current (:mod:`riskreg.services.due`)."""
    from . import due  # due reads this module's _place

    event.listen(factory, "before_flush", _before_flush)
    event.listen(factory, "after_flush", _after_flush)
    due.install(factory)


def set_actor(session: Session, user: User | None) -> None:
    session.info["actor_id"] = user.id if user else None
    session.info["actor_email"] = user.email if user else ""
