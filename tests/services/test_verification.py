"""Verification records, trust, due dates, shift checks, instruments, calendar tokens."""

from __future__ import annotations

import datetime as dt

import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from riskreg.model import CorrectiveAction, EvidenceFile, Verification
from riskreg.services import due, register, safeguards, verification
from riskreg.services.errors import NotFound, ValidationError
from riskreg.services.verification import Upload

PNG = b"\x89PNG\r\n\x1a\n" + b"\x00" * 64
TODAY = dt.date.today()


@pytest.fixture
def press(session: Session):
    site = register.create_site(session, "Due Works")
    return register.create_machine(
        session, site, {"asset_tag": "P-9", "name": "Press", "kind": "mechanical_press"}
    )


@pytest.fixture
def curtain(session: Session, press):
    return safeguards.save_safeguard(
        session,
        press,
        {
            "kind": "light_curtain",
            "label": "Curtain",
            "installed_distance_mm": 600,
            "espe_type": "4",
            "resolution_mm": 14,
            "blanking": "none",
        },
    )


def _count(session: Session, model) -> int:
    return session.scalar(select(func.count()).select_from(model))


def _verify(session, press, curtain, tmp_path, result="pass", on=None, files=(), **extra):
    data = {
        "kind": "functional_test",
        "result": result,
        "performed_by": "Ann",
        "performed_on": (on or TODAY).isoformat(),
        "safeguard_id": curtain.id,
        "notes": "beam 3 did not stop the slide" if result == "fail" else "",
    }
    data.update(extra)
    return verification.record_verification(session, press, data, files, instance_path=tmp_path)


def test_failed_test_marks_not_trusted_and_opens_action(session, press, curtain, tmp_path):
    v = _verify(session, press, curtain, tmp_path, "fail", files=[Upload("p.png", PNG)])
    assert not curtain.trusted
    action = session.scalars(select(CorrectiveAction)).one()
    assert action.source == "verification" and action.verification_id == v.id
    assert len(v.evidence) == 1 and len(v.evidence[0].sha256) == 64
    _verify(session, press, curtain, tmp_path, "pass")
    assert curtain.trusted


def test_executable_renamed_jpg_refused_and_nothing_stored(session, press, curtain, tmp_path):
    elf = b"\x7fELF\x02\x01\x01" + b"\x00" * 200
    with pytest.raises(ValidationError) as exc:
        _verify(session, press, curtain, tmp_path, "fail", files=[Upload("photo.jpg", elf)])
    assert "not an accepted file" in exc.value.errors["files"]
    session.rollback()
    assert _count(session, Verification) == 0 and _count(session, EvidenceFile) == 0
    assert curtain.trusted and not (tmp_path / "evidence").exists()


def test_oversize_upload_refused(session, press, curtain, tmp_path):
    big = PNG + b"\x00" * (21 * 1024 * 1024)
    with pytest.raises(ValidationError) as exc:
        _verify(session, press, curtain, tmp_path, files=[Upload("big.png", big)])
    assert "limit is 20 MB" in exc.value.errors["files"]


def test_future_date_refused(session, press, curtain, tmp_path):
    with pytest.raises(ValidationError) as exc:
        _verify(session, press, curtain, tmp_path, on=TODAY + dt.timedelta(days=1))
    assert "future" in exc.value.errors["performed_on"]


def test_weekly_press_needs_serial_and_signature(session, press, tmp_path):
    with pytest.raises(ValidationError) as exc:
        verification.record_verification(
            session,
            press,
            {
                "kind": "weekly_press",
                "result": "pass",
                "performed_by": "Ann",
                "performed_on": TODAY.isoformat(),
            },
            instance_path=tmp_path,
        )
    assert set(exc.value.errors) == {"press_serial", "signature"}


def test_due_dates_follow_intervals(session, press, curtain, tmp_path):
    _verify(session, press, curtain, tmp_path, on=TODAY - dt.timedelta(days=100))
    items = {(i.kind, i.safeguard): i for i in due.due_items(session, press.site)}
    ft = items[("functional_test", "Curtain")]
    # 90-day default: done 100 days ago → due 10 days ago
    assert ft.interval_days == 90 and ft.days_overdue == 10 and ft.status == "overdue"
    # 29 CFR 1910.217(e)(1)(ii): weekly press inspection [reg, from memory]; never done
    assert ("weekly_press", None) in items
    assert items[("stopping_time", None)].detail.startswith("never measured")
    verification.set_interval(session, press.site, "functional_test", 120, curtain)
    ft = {(i.kind, i.safeguard): i for i in due.due_items(session, press.site)}[
        ("functional_test", "Curtain")
    ]
    assert ft.interval_days == 120 and ft.days_overdue == -20


def test_exempt_press_has_no_weekly_item(session, press):
    safeguards.save_press_profile(
        session, press, {"clutch": "part", "brake_monitor": "y", "control_reliable": "y"}
    )
    # presses meeting 1910.217(b)(13) and (b)(14) are exempt [reg, from memory]
    assert "weekly_press" not in {i.kind for i in due.due_items(session, press.site)}


def test_missed_shift_checks_are_one_line(session, press):
    verification.save_checklist(
        session,
        press,
        {
            "items": "Light curtain stops the slide\nTwo-hand control needs both hands",
            "working_days": "1234567",
            "active_since": (TODAY - dt.timedelta(days=10)).isoformat(),
        },
    )
    verification.record_shift_check(
        session,
        press,
        {
            "shift_date": (TODAY - dt.timedelta(days=1)).isoformat(),
            "performed_by": "Op",
            "ok_items": ["Light curtain stops the slide", "Two-hand control needs both hands"],
        },
    )
    lines = [i for i in due.due_items(session, press.site) if i.kind == "shift_check"]
    assert len(lines) == 1 and lines[0].detail.startswith("9 shift check(s) missed")


def test_failed_shift_item_needs_notes_and_opens_action(session, press):
    verification.save_checklist(session, press, {"items": "Curtain stops the slide"})
    with pytest.raises(ValidationError):
        verification.record_shift_check(session, press, {"performed_by": "Op", "ok_items": []})
    verification.record_shift_check(
        session, press, {"performed_by": "Op", "ok_items": [], "notes": "slide did not stop"}
    )
    assert session.scalar(select(CorrectiveAction.source)) == "shift check"


def test_out_of_calibration_instrument_flagged(session, press, curtain):
    ins = verification.save_instrument(
        session,
        press.site,
        {"name": "Meter 1", "calibrated_on": (TODAY - dt.timedelta(days=400)).isoformat()},
    )
    m = safeguards.record_measurement(
        session,
        press,
        {"measured_on": TODAY.isoformat(), "trials_ms": "100", "instrument_id": ins.id},
    )
    assert "not in calibration" in safeguards.instrument_warning(session, m)
    cal = [i for i in due.due_items(session, press.site) if i.kind == "calibration"][0]
    assert cal.days_overdue == 35


def test_calendar_token_is_revocable(session, press):
    token = verification.new_calendar_token(session, press.site, "office")
    assert verification.site_for_token(session, token).id == press.site_id
    row = verification.calendar_tokens(session, press.site)[0]
    assert row.token_hash != token
    verification.revoke_calendar_token(session, row.id)
    with pytest.raises(NotFound):
        verification.site_for_token(session, token)
