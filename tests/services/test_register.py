"""Register use cases: validation, ratings with their derivation, overrides,
history, archive, overview counts."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from riskreg.model import AuditEntry, Hazard, Machine, RiskRating
from riskreg.services import library, register, users
from riskreg.services.errors import Conflict, ValidationError


@pytest.fixture
def site(session: Session):
    s = register.create_site(session, "North Works")
    register.create_area(session, s, "Press line")
    return s


@pytest.fixture
def user(session: Session):
    return users.create_user(
        session, "ann@example.com", "Ann Assessor", "assessor", "long-password-1"
    )


def _machine(session: Session, site, tag: str = "P-01") -> Machine:
    return register.create_machine(
        session,
        site,
        {
            "asset_tag": tag,
            "name": "200 t press",
            "kind": "mechanical_press",
            "area_id": site.areas[0].id if site.areas else None,
        },
    )


def _count(session: Session, model) -> int:
    return session.scalar(select(func.count()).select_from(model))


def test_machine_fields_are_checked_and_nothing_is_stored(session: Session, site) -> None:
    with pytest.raises(ValidationError) as exc:
        register.create_machine(
            session, site, {"asset_tag": "", "name": "", "kind": "lathe", "year": "1850"}
        )
    assert set(exc.value.errors) == {"asset_tag", "name", "kind", "year"}
    assert _count(session, Machine) == 0


def test_asset_tag_unique_within_site(session: Session, site) -> None:
    _machine(session, site)
    with pytest.raises(ValidationError) as exc:
        _machine(session, site)
    assert "already used" in exc.value.errors["asset_tag"]
    other = register.create_site(session, "South Works")
    _machine(session, other)  # the same tag at another site is fine
    assert _count(session, Machine) == 2


def test_hazard_with_rating_stores_derived_plr_and_derivation(session: Session, site, user) -> None:
    m = _machine(session, site)
    a = register.current_assessment(m)
    t = register.add_task(session, a, {"phase": "operation", "description": "Hand feeding"})
    h = register.add_hazard(
        session,
        a,
        {
            "hazard_group": "mechanical",
            "hazard_type": "crushing",
            "event": "hand in die",
            "task_id": t.id,
        },
        {
            "method": "iso13849",
            "stage": "initial",
            "severity": "S2",
            "frequency": "F2",
            "avoidance": "P2",
        },
        user=user,
    )
    r = register.current_rating(h, "initial")
    # ISO 13849-1:2015 Annex A: S2/F2/P2 → PLr e [std, from memory]
    assert r is not None and r.level == "e" and r.edition == "2015"
    assert r.derivation["derivation"]["constants"][0]["clause"] == "Annex A, Figure A.1"


def test_bad_rating_stores_neither_hazard_nor_rating(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    with pytest.raises(ValidationError) as exc:
        register.add_hazard(
            session,
            a,
            {"hazard_group": "mechanical", "event": "x"},
            {"method": "iso13849", "severity": "S2", "frequency": "F9"},
        )
    assert set(exc.value.errors) == {"frequency", "avoidance"}
    assert _count(session, Hazard) == 0 and _count(session, RiskRating) == 0


def test_override_needs_source_justification_and_approver(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    h = register.add_hazard(session, a, {"hazard_group": "mechanical", "event": "x"})
    rating = {
        "method": "iso13849",
        "severity": "S2",
        "frequency": "F1",
        "avoidance": "P1",
        "override_level": "e",
    }
    with pytest.raises(ValidationError) as exc:
        register.rate_hazard(session, h, rating)
    assert set(exc.value.errors) == {
        "override_source",
        "override_justification",
        "override_approved_by",
    }
    rating.update(
        override_source="type-C standard, clause on hand-fed presses",
        override_justification="the type-C standard sets PL e",
        override_approved_by="C. Approver",
    )
    r = register.rate_hazard(session, h, rating)
    # derived S2/F1/P1 → c (ISO 13849-1:2015 Annex A [std, from memory]); override e in force
    assert (r.derived_level, r.level) == ("c", "e")


def test_re_rating_supersedes_but_keeps_the_old(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    h = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "x"},
        {"method": "iso13849", "severity": "S1", "frequency": "F1", "avoidance": "P1"},
    )
    register.rate_hazard(
        session, h, {"method": "iso13849", "severity": "S2", "frequency": "F2", "avoidance": "P1"}
    )
    assert [r.superseded for r in h.ratings] == [True, False]
    assert register.current_rating(h, "initial").level == "d"


def test_sil_rating(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    h = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "x"},
        {
            "method": "iec62061",
            "severity": "3",
            "frequency": "5",
            "probability": "4",
            "avoidance": "3",
        },
    )
    # IEC 62061 Annex A: Se 3, CI 12 → SIL 2 [std, from memory]
    assert register.current_rating(h, "initial").level == "SIL 2"


def test_edit_keeps_history_in_audit_trail(session: Session, site, user) -> None:
    from riskreg.services.audit import set_actor

    set_actor(session, user)
    a = register.current_assessment(_machine(session, site))
    h = register.add_hazard(session, a, {"hazard_group": "mechanical", "event": "first"})
    register.update_hazard(
        session, h, {"hazard_group": "mechanical", "event": "second"}, expected_version=h.version
    )
    entries = list(session.scalars(select(AuditEntry).where(AuditEntry.entity == "hazard")))
    assert [e.action for e in entries] == ["create", "update"]
    assert entries[1].before["event"] == "first" and entries[1].after["event"] == "second"
    assert entries[1].user_email == "ann@example.com"
    assert entries[1].machine_id == a.machine_id


def test_stale_version_is_refused(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    h = register.add_hazard(session, a, {"hazard_group": "mechanical", "event": "first"})
    old = h.version
    register.update_hazard(session, h, {"hazard_group": "mechanical", "event": "second"}, old)
    with pytest.raises(Conflict, match="changed by someone else") as exc:
        register.update_hazard(session, h, {"hazard_group": "mechanical", "event": "third"}, old)
    # the second writer is shown the other's change
    assert "event: 'first' → 'second'" in str(exc.value)


def test_archive_not_erase(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    h = register.add_hazard(session, a, {"hazard_group": "mechanical", "event": "x"})
    register.archive_hazard(session, h)
    assert _count(session, Hazard) == 1 and h.archived


def test_measure_needs_hazards_and_known_kind(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    with pytest.raises(ValidationError) as exc:
        register.add_measure(session, a, {"kind": "magic"})
    assert set(exc.value.errors) == {"kind", "hazard_ids"}


def test_safety_function_required_level_is_highest_of_its_hazards(session: Session, site) -> None:
    a = register.current_assessment(_machine(session, site))
    h1 = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "x"},
        {"method": "iso13849", "severity": "S2", "frequency": "F1", "avoidance": "P1"},
    )
    h2 = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "y"},
        {"method": "iso13849", "severity": "S2", "frequency": "F2", "avoidance": "P1"},
    )
    sf = register.add_safety_function(
        session,
        a,
        {"name": "Stop on curtain break", "hazard_ids": [h1.id, h2.id], "modes": "run,setting"},
    )
    # c (S2/F1/P1) and d (S2/F2/P1) → d, ISO 13849-1:2015 Annex A [std, from memory]
    assert register.required_level(sf).plr == "d"


def test_overview_counts(session: Session, site) -> None:
    m = _machine(session, site)
    a = register.current_assessment(m)
    h = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "x"},
        {"method": "iso13849", "severity": "S2", "frequency": "F2", "avoidance": "P2"},
    )
    register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "y"},
        {"method": "iso13849", "severity": "S1", "frequency": "F1", "avoidance": "P1"},
    )
    register.add_measure(session, a, {"kind": "light_curtain", "hazard_ids": [h.id]})
    _machine(session, site, "P-02")
    rows = {r.machine.asset_tag: r for r in register.site_overview(session, site)}
    assert (
        rows["P-01"].open_hazards,
        rows["P-01"].highest_plr,
        rows["P-01"].proposed_measures,
    ) == (2, "e", 1)
    assert (rows["P-02"].open_hazards, rows["P-02"].highest_plr) == (0, None)
    assert [r.machine.asset_tag for r in register.site_overview(session, site, "p-02")] == ["P-02"]


def test_clone_copies_assessment(session: Session, site) -> None:
    m = _machine(session, site)
    a = register.current_assessment(m)
    library.start_from_library(session, a)
    clone = register.clone_machine(session, m, {"asset_tag": "P-02", "serial": "S2"})
    ca = register.current_assessment(clone)
    assert len(ca.hazards) == len(a.hazards) > 0 and len(ca.tasks) == len(a.tasks)
    assert clone.kind == m.kind and clone.serial == "S2"


def test_do_not_operate_needs_reason(session: Session, site) -> None:
    m = _machine(session, site)
    with pytest.raises(ValidationError):
        register.set_do_not_operate(session, m, True, " ")
    register.set_do_not_operate(session, m, True, "Light curtain failed its test")
    assert m.do_not_operate


def test_users_roles_and_passwords(session: Session) -> None:
    with pytest.raises(ValidationError) as exc:
        users.create_user(session, "bad", "", "boss", "short")
    assert set(exc.value.errors) == {"email", "name", "role", "password"}
    u = users.create_user(session, "Vic@Example.com", "Vic", "viewer", "long-password-2")
    assert u.password_hash != "long-password-2"
    assert users.authenticate(session, "vic@example.com", "long-password-2") is u
    assert users.authenticate(session, "vic@example.com", "wrong") is None
    assert users.has_role(u, "viewer") and not users.has_role(u, "assessor")
