"""The stored due items (``due_item``) against the items worked out from the register.

The due board and the overview read the stored copy; these tests change every kind of
record the items are worked out from, commit, and check that the stored copy equals a
fresh computation, item for item. They also check the day change, a read inside an
uncommitted change, and that the hooks know every table the computation reads.
"""

from __future__ import annotations

import datetime as dt

import pytest
from sqlalchemy import func, select, update
from sqlalchemy.orm import Session
from sqlalchemy.sql.util import find_tables

from riskreg.model import (
    Area,
    DueItemRow,
    DueRefresh,
    Instrument,
    LockoutProcedure,
    Machine,
    Safeguard,
    SafetyFunctionPart,
    Site,
    Verification,
)
from riskreg.services import due, register, revisions, safeguards, verification
from seed_demo import build

TODAY = dt.date.today()


@pytest.fixture
def plant(session: Session) -> Site:
    build.build(session)
    return register.get_site(session, build.SITE)


def stored(session: Session, site: Site) -> list[due.DueItem]:
    """The stored items, after making sure they are the ones read (not a fallback)."""
    assert due._current(session, site.id, TODAY), "the stored items are not readable"
    return due._Stored(
        session, site.id, TODAY, area=None, machine_id=None, kind=None, within_days=None
    ).items()


def check_same(session: Session, site: Site) -> list[due.DueItem]:
    session.expire_all()
    kept = stored(session, site)
    fresh = due.worked_out(session, site)
    assert kept == fresh
    return kept


def machine(session: Session, site: Site, tag: str) -> Machine:
    return register.machine_by_tag(session, site, tag)


def test_the_demo_plant_stored_equals_worked_out(session: Session, plant: Site) -> None:
    items = check_same(session, plant)
    assert len(items) > 20
    assert {i.kind for i in items} >= {
        "functional_test",
        "inspection",
        "stopping_time",
        "weekly_press",
        "shift_check",
        "lockout",
        "calibration",
    }
    assert session.scalar(select(func.count()).select_from(DueItemRow)) == len(items)
    # every public reading agrees with the stored copy
    assert due.due_items(session, plant) == items
    assert due.due_summary(session, plant) == {
        s: sum(1 for i in items if i.status == s) for s in due.STATUSES
    }
    page = due.due_page(session, plant, per_page=10, page=2)
    assert page.items == items[10:20] and page.total == len(items)


def test_every_kind_of_write_keeps_the_stored_items_exact(
    session: Session, plant: Site, tmp_path
) -> None:
    check_same(session, plant)
    press = machine(session, plant, "PR-101")
    curtain = next(s for s in safeguards.safeguards_of(press) if s.kind == "light_curtain")

    def verify(result: str, kind: str = "functional_test", on: dt.date = TODAY) -> None:
        verification.record_verification(
            session,
            press,
            {
                "kind": kind,
                "result": result,
                "performed_by": "Tester",
                "performed_on": on.isoformat(),
                "safeguard_id": curtain.id,
                "notes": "beam 2 slow" if result == "fail" else "",
            },
            instance_path=tmp_path,
        )

    verify("fail")  # not trusted: the item says so
    items = check_same(session, plant)
    assert any("NOT TRUSTED" in i.detail for i in items if i.safeguard_id == curtain.id)
    verify("pass")
    items = check_same(session, plant)
    ft = next(i for i in items if i.safeguard_id == curtain.id and i.kind == "functional_test")
    assert ft.last_done == TODAY

    # intervals: the safeguard's own, then the site's (the whole site again)
    verification.set_interval(session, plant, "functional_test", 14, curtain)
    check_same(session, plant)
    verification.set_interval(session, plant, "inspection", 200)
    assert session.get(DueRefresh, plant.id).computed_for is None  # worked out on next read
    check_same(session, plant)

    # start-of-shift checks: a new checklist, then a check recorded
    shear = machine(session, plant, "PB-301")
    verification.save_checklist(
        session,
        shear,
        {
            "items": "guard closed\nfoot switch cover",
            "shifts_per_day": 2,
            "working_days": "1234567",
            "active_since": (TODAY - dt.timedelta(days=10)).isoformat(),
        },
    )
    items = check_same(session, plant)
    missed = next(i for i in items if i.machine == "PB-301" and i.kind == "shift_check")
    verification.record_shift_check(
        session,
        shear,
        {
            "shift_date": (TODAY - dt.timedelta(days=1)).isoformat(),
            "shift": 1,
            "performed_by": "Operator",
            "ok_items": ["guard closed", "foot switch cover"],
        },
    )
    items = check_same(session, plant)
    again = next(i for i in items if i.machine == "PB-301" and i.kind == "shift_check")
    assert again.detail != missed.detail  # one shift fewer missed

    # instruments and lockout procedures
    meter = verification.save_instrument(session, plant, {"name": "Meter X", "serial": "X1"})
    check_same(session, plant)
    verification.calibrate(session, meter, TODAY.isoformat())
    check_same(session, plant)
    lock = verification.save_lockout(session, press, {"title": "Die change lockout"})
    check_same(session, plant)
    verification.mark_lockout_inspected(session, lock, "Lead")
    check_same(session, plant)

    # a modification puts the curtain up for validation
    revisions.record_modification(
        session,
        press,
        {"kind": "control", "description": "new valve", "safeguard_ids": [curtain.id]},
        None,
    )
    items = check_same(session, plant)
    assert any(i.kind == "full_validation" and i.safeguard_id == curtain.id for i in items)

    # a stopping-time measurement
    safeguards.record_measurement(
        session, press, {"measured_on": TODAY.isoformat(), "trials_ms": "200, 205, 210"}
    )
    check_same(session, plant)

    # records changed directly, without a service: the hooks sit on the session
    curtain.status = "removed"
    session.commit()
    check_same(session, plant)
    press.asset_tag = "PR-101A"
    session.commit()
    assert any(i.machine == "PR-101A" for i in check_same(session, plant))
    area = session.scalars(select(Area).where(Area.site_id == plant.id)).first()
    area.name = area.name + " (renamed)"
    session.commit()
    assert any(i.area == area.name for i in check_same(session, plant))
    part = session.scalars(
        select(SafetyFunctionPart).where(SafetyFunctionPart.b10d.is_not(None))
    ).first()
    part.installed_on = TODAY - dt.timedelta(days=4000)  # past its T10d
    session.commit()
    assert any(i.kind == "replacement" for i in check_same(session, plant))
    session.delete(session.scalars(select(LockoutProcedure)).first())
    session.commit()
    check_same(session, plant)
    register.retire_machine(session, machine(session, plant, "PR-102"))
    items = check_same(session, plant)
    assert not any(i.machine == "PR-102" for i in items)
    instrument = session.scalars(select(Instrument)).first()
    instrument.active = False
    session.commit()
    check_same(session, plant)


def _stored_on(session: Session, site: Site, day: dt.date | None) -> None:
    session.execute(
        update(DueRefresh).where(DueRefresh.site_id == site.id).values(computed_for=day)
    )


def test_a_new_day_works_out_the_kinds_that_depend_on_the_day(
    session: Session, plant: Site
) -> None:
    items = check_same(session, plant)
    assert any(i.kind == "shift_check" for i in items)
    # as if the items were stored yesterday: the day's kinds are stale (spoilt here)
    _stored_on(session, plant, TODAY - dt.timedelta(days=1))
    session.execute(
        update(DueItemRow).where(DueItemRow.kind.in_(due.DAY_KINDS)).values(due=dt.date(2000, 1, 1))
    )
    session.commit()
    assert due.due_items(session, plant) == items
    assert session.get(DueRefresh, plant.id).computed_for == TODAY
    # a second pass for the same day is not claimed twice
    with session.get_bind().connect() as conn, conn.begin():
        assert due.rewrite_site(conn, plant.id) is False


def test_a_site_marked_for_it_is_worked_out_in_full(session: Session, plant: Site) -> None:
    items = check_same(session, plant)
    _stored_on(session, plant, None)
    session.execute(update(DueItemRow).values(due=dt.date(2000, 1, 1)))
    session.commit()
    assert due.due_items(session, plant) == items


def test_only_the_day_kinds_depend_on_the_day(session: Session, plant: Site) -> None:
    """Why a new day redoes DAY_KINDS alone: every other item is the same on any day
    (its due date and what it says), only how late it is changes."""

    def fixed(day: dt.date) -> list[tuple[object, ...]]:
        return [
            (i.kind, i.machine, i.safeguard_id, i.due_date, i.last_done, i.detail)
            for i in due.worked_out(session, plant, today=day)
            if i.kind not in due.DAY_KINDS
        ]

    today = fixed(TODAY)
    assert {k for k, *_ in today} >= {"functional_test", "inspection", "weekly_press"}
    for later in (1, 45, 400):
        assert fixed(TODAY + dt.timedelta(days=later)) == today


def test_an_uncommitted_change_is_read_from_the_register(session: Session, plant: Site) -> None:
    before = check_same(session, plant)
    press = machine(session, plant, "PR-101")
    sg = session.scalars(select(Safeguard).where(Safeguard.machine_id == press.id)).first()
    session.add(
        Verification(
            machine_id=press.id,
            safeguard_id=sg.id,
            kind="functional_test",
            performed_on=TODAY,
            performed_by="Tester",
            result="pass",
        )
    )
    session.flush()
    during = due.due_items(session, plant)  # this transaction's view, the new pass in it
    assert during != before
    assert during == due.worked_out(session, plant)
    session.rollback()
    assert check_same(session, plant) == before


def test_another_day_is_always_worked_out(session: Session, plant: Site) -> None:
    check_same(session, plant)
    later = TODAY + dt.timedelta(days=45)
    assert due.due_items(session, plant, today=later) == due.worked_out(session, plant, today=later)
    assert session.get(DueRefresh, plant.id).computed_for == TODAY  # left alone


def test_the_hooks_know_every_table_the_items_are_worked_out_from(
    session: Session, plant: Site
) -> None:
    q = due._DueQuery(
        session, plant.id, TODAY, area=None, machine_ids=None, kind=None, within_days=None
    )
    assert not q.empty
    tables = Site.metadata.tables
    read = set()
    for t in find_tables(q.ordered, check_columns=True, include_aliases=True, include_joins=True):
        base = getattr(t, "element", t)  # an alias reads its table
        if getattr(base, "name", None) in tables:
            read.add(base.name)
    known = {c.__tablename__ for c in due.SOURCES}
    assert {"machine", "verification", "shift_check", "stopping_time_measurement"} <= read, read
    assert read <= known, f"tables read but not watched by the hooks: {read - known}"
