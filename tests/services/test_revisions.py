"""Revisions and approvals, differences, re-evaluation, management of change."""

from __future__ import annotations

import pytest
from sqlalchemy.orm import Session

from riskreg.services import due, register, revisions, safeguards, users
from riskreg.services.errors import Forbidden, ValidationError


@pytest.fixture
def people(session: Session):
    return {
        r: users.create_user(session, f"{r}@example.com", r.title(), r, "long-password-9")
        for r in ("assessor", "approver", "viewer")
    }


@pytest.fixture
def machine(session: Session, people):
    site = register.create_site(session, "Rev Works")
    m = register.create_machine(
        session,
        site,
        {"asset_tag": "P-7", "name": "Press", "kind": "mechanical_press"},
        user=people["assessor"],
    )
    a = register.current_assessment(m)
    h = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "crush"},
        {"method": "iso13849", "severity": "S2", "frequency": "F2", "avoidance": "P2"},
        user=people["assessor"],
    )
    register.add_measure(session, a, {"kind": "light_curtain", "hazard_ids": [h.id]})
    return m


def _approve(session, machine, people):
    a = register.current_assessment(machine)
    revisions.submit(session, a, people["assessor"])
    revisions.approve(session, a, people["approver"])
    return a


def test_approval_needs_review_and_an_approver(session, machine, people) -> None:
    a = register.current_assessment(machine)
    with pytest.raises(ValidationError, match="review"):
        revisions.approve(session, a, people["approver"])
    revisions.submit(session, a, people["assessor"])
    with pytest.raises(Forbidden):
        revisions.approve(session, a, people["viewer"])
    revisions.approve(session, a, people["approver"])
    assert a.status == "approved" and a.approver_id == people["approver"].id
    assert a.snapshot is not None and "safeguards" in a.snapshot


def test_nobody_approves_their_own_work_by_default(session, machine, people) -> None:
    a = register.current_assessment(machine)
    approver = people["approver"]
    register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "cut"},
        {"method": "iso13849", "severity": "S1", "frequency": "F1", "avoidance": "P1"},
        user=approver,
    )
    revisions.submit(session, a, people["assessor"])
    with pytest.raises(ValidationError, match="another approver"):
        revisions.approve(session, a, approver)
    machine.site.allow_self_approval = True
    session.commit()
    revisions.approve(session, a, approver)
    assert a.status == "approved"


def test_approved_revision_is_immutable_and_editing_starts_a_new_one(
    session, machine, people
) -> None:
    a1 = _approve(session, machine, people)
    with pytest.raises(ValidationError, match="approved"):
        register.add_hazard(session, a1, {"hazard_group": "mechanical", "event": "new"})
    a2 = revisions.editable_revision(session, machine, people["assessor"])
    assert (a2.revision, a2.status) == (2, "draft")
    assert len(a2.hazards) == 1 and a2.hazards[0].origin_id == a1.hazards[0].id
    h = a2.hazards[0]
    register.update_hazard(
        session,
        h,
        {"hazard_group": "mechanical", "event": "crush hard"},
        rating={"method": "iso13849", "severity": "S2", "frequency": "F1", "avoidance": "P2"},
    )
    register.add_hazard(
        session,
        a2,
        {"hazard_group": "noise", "event": "loud"},
        {"method": "iso13849", "severity": "S1", "frequency": "F2", "avoidance": "P1"},
    )
    changes = {(c.what, c.action) for c in revisions.diff(a1, a2)}
    assert {("hazard", "changed"), ("rating", "changed"), ("hazard", "added")} <= changes
    assert a1.hazards[0].event == "crush"  # the approved one is untouched
    revisions.submit(session, a2, people["assessor"])
    revisions.approve(session, a2, people["approver"])
    assert a1.status == "superseded" and a2.status == "approved"


def test_re_evaluation_shows_edition_change_without_altering(session, machine, people) -> None:
    a = _approve(session, machine, people)
    site = machine.site
    site.editions = dict(site.editions, **{"ISO 13849-1": "2023"})
    session.commit()
    rows = revisions.re_evaluate(a)
    assert rows and rows[0].stored_edition == "2015" and rows[0].now_edition == "2023"
    # the recalled 2023 risk graph gives the same PLr (REFERENCE §2 [std, from memory])
    assert rows[0].changed is False and rows[0].constants_changed
    assert register.current_rating(a.hazards[0], "initial").edition == "2015"


def test_modification_reopens_and_marks_safeguards(session, machine, people) -> None:
    _approve(session, machine, people)
    sg = safeguards.save_safeguard(
        session,
        machine,
        {
            "kind": "light_curtain",
            "label": "Curtain",
            "installed_distance_mm": 600,
            "espe_type": "4",
            "resolution_mm": 14,
            "blanking": "none",
        },
    )
    with pytest.raises(ValidationError):
        revisions.record_modification(
            session, machine, {"kind": "x", "description": ""}, people["assessor"]
        )
    revisions.record_modification(
        session,
        machine,
        {"kind": "die_set", "description": "New blanking die", "safeguard_ids": [sg.id]},
        people["assessor"],
    )
    current = register.current_assessment(machine)
    assert current.revision == 2 and current.status == "draft"
    assert "New blanking die" in current.change_reason
    assert sg.needs_revalidation
    kinds = {(i.kind, i.safeguard) for i in due.due_items(session, machine.site)}
    assert ("full_validation", "Curtain") in kinds
