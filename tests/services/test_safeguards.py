"""Safeguard engineering in the register: records, measurements, distance checks,
PL verification, options, corrective actions."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from riskreg.model import (
    CorrectiveAction,
    DistanceCheck,
    Safeguard,
    SafetyFunctionPart,
    StoppingTimeMeasurement,
)
from riskreg.services import register, safeguards
from riskreg.services.errors import ValidationError


@pytest.fixture
def press(session: Session):
    site = register.create_site(session, "Test Works", stop_time_allowance_percent=0)
    return register.create_machine(
        session, site, {"asset_tag": "P-1", "name": "Press", "kind": "mechanical_press"}
    )


def _count(session: Session, model) -> int:
    return session.scalar(select(func.count()).select_from(model))


def _curtain(session: Session, press, installed: float, resolution: float = 14) -> Safeguard:
    return safeguards.save_safeguard(
        session,
        press,
        {
            "kind": "light_curtain",
            "label": "Front curtain",
            "response_time_ms": "20",
            "installed_distance_mm": installed,
            "espe_type": "4",
            "resolution_mm": resolution,
            "blanking": "none",
            "restart_interlock": "y",
        },
    )


def test_measurement_uses_worst_trial_and_checks_the_curtain(session: Session, press) -> None:
    sg = _curtain(session, press, installed=450)
    m = safeguards.record_measurement(
        session,
        press,
        {"measured_on": "2026-11-20", "trials_ms": "170, 180, 176", "allowance_percent": "0"},
    )
    assert m.t_used_s == pytest.approx(0.180)
    check = session.scalars(select(DistanceCheck)).one()
    # ISO 13855:2010 6.2.3 [std, from memory]: d = 14 → C = 8(14-14) = 0;
    # T = 0.180 + 0.020 = 0.200 s; S = 2000 × 0.2 = 400 mm (≤ 500, kept, ≥ 100)
    assert check.required_mm == pytest.approx(400.0)
    assert check.passed is True
    assert _count(session, CorrectiveAction) == 0
    assert sg.trusted


def test_worn_brake_makes_the_check_fail_and_opens_one_action(session: Session, press) -> None:
    _curtain(session, press, installed=450)
    for day in ("2026-11-20", "2026-11-21"):
        safeguards.record_measurement(
            session,
            press,
            {"measured_on": day, "trials_ms": "240, 250, 260", "allowance_percent": "0"},
        )
    checks = list(session.scalars(select(DistanceCheck).order_by(DistanceCheck.id)))
    # T = 0.260 + 0.020 = 0.280 s; S = 2000 × 0.28 = 560 > 500 → K = 1600: 1600 × 0.28 = 448,
    # but at least 500 mm → 500 mm. ISO 13855:2010 6.2.3 [std, from memory]
    assert checks[-1].required_mm == pytest.approx(500.0)
    assert checks[-1].passed is False
    actions = list(session.scalars(select(CorrectiveAction)))
    assert len(actions) == 1 and actions[0].source == "distance" and actions[0].status == "open"
    assert "50 mm short" in actions[0].description


def test_allowance_from_site_applies(session: Session, press) -> None:
    press.site.stop_time_allowance_percent = 10
    session.commit()
    m = safeguards.record_measurement(
        session, press, {"measured_on": "2026-11-20", "trials_ms": "200,190,195"}
    )
    # worst 200 ms + 10 % = 220 ms [practice: allowance for brake wear]
    assert m.t_used_s == pytest.approx(0.220)


@pytest.mark.parametrize("trials", ["-5", "0", "abc", "", "20000"])
def test_bad_trials_store_nothing(session: Session, press, trials: str) -> None:
    _curtain(session, press, installed=450)
    with pytest.raises(ValidationError) as exc:
        safeguards.record_measurement(
            session, press, {"measured_on": "2026-11-20", "trials_ms": trials}
        )
    assert "trials_ms" in exc.value.errors
    session.rollback()
    assert _count(session, StoppingTimeMeasurement) == 0 and _count(session, DistanceCheck) == 0


def test_future_date_refused(session: Session, press) -> None:
    with pytest.raises(ValidationError) as exc:
        safeguards.record_measurement(
            session, press, {"measured_on": "2999-01-01", "trials_ms": "100"}
        )
    assert "future" in exc.value.errors["measured_on"]


def test_resolution_zero_refused(session: Session, press) -> None:
    with pytest.raises(ValidationError) as exc:
        _curtain(session, press, installed=400, resolution=0)
    assert "resolution_mm" in exc.value.errors
    session.rollback()
    assert _count(session, Safeguard) == 0


def test_series_wired_pair_on_two_operator_press_is_flagged(session: Session, press) -> None:
    sg = safeguards.save_safeguard(
        session,
        press,
        {
            "kind": "two_hand_control",
            "label": "Push-button pairs",
            "installed_distance_mm": 400,
            "simultaneous": "y",
            "cessation": "y",
            "category": "1",
            "spacing_mm": 600,
            "operators": 2,
            "stations": 2,
            "actuators_per_station": 2,
            "series_wired": "y",
        },
    )
    ev = safeguards.evaluate(sg, None)
    th = ev.results[0][1]
    # ISO 13851:2019 Table 1 [std, from memory]: both hands + cessation, no re-initiation and
    # no synchronous actuation → type I at best; tie-down by one operator [practice]
    assert th.type == "I"
    assert any("tie" in p.lower() for p in ev.problems)


def test_two_hand_distance_iso(session: Session, press) -> None:
    sg = safeguards.save_safeguard(
        session,
        press,
        {
            "kind": "two_hand_control",
            "label": "Station",
            "installed_distance_mm": 600,
            "simultaneous": "y",
            "cessation": "y",
            "reinitiation": "y",
            "synchronous_window_ms": "500",
            "category": "4",
            "spacing_mm": 600,
            "operators": 1,
            "stations": 1,
            "actuators_per_station": 2,
            "anti_repeat": "y",
        },
    )
    ev = safeguards.evaluate(sg, 0.2)
    # ISO 13855:2010 clause 8 [std, from memory]: S = 1600 × 0.2 + 250 = 570 mm
    assert ev.required_mm == pytest.approx(570.0)
    assert ev.passed is True
    assert ev.results[0][1].type == "IIIC"


def test_us_site_two_hand_uses_63_in_per_s(session: Session, press) -> None:
    press.site.distance_method = "US"
    session.commit()
    sg = safeguards.save_safeguard(
        session,
        press,
        {
            "kind": "two_hand_control",
            "label": "Station",
            "installed_distance_mm": 300,
            "simultaneous": "y",
            "cessation": "y",
            "reinitiation": "y",
            "synchronous_window_ms": "500",
            "category": "4",
            "spacing_mm": 600,
            "operators": 1,
            "stations": 1,
            "actuators_per_station": 2,
        },
    )
    ev = safeguards.evaluate(sg, 0.2, "US")
    # 29 CFR 1910.217(c)(3)(vii) [reg, from memory]: Ds = 63 in/s × 0.2 s = 12.6 in = 320.04 mm
    assert ev.required_mm == pytest.approx(320.04)
    assert ev.passed is False


def _function(session: Session, press, plr_args=("S2", "F2", "P2")):
    a = register.current_assessment(press)
    h = register.add_hazard(
        session,
        a,
        {"hazard_group": "mechanical", "event": "x"},
        {
            "method": "iso13849",
            "severity": plr_args[0],
            "frequency": plr_args[1],
            "avoidance": plr_args[2],
        },
    )
    return register.add_safety_function(session, a, {"name": "Stop", "hazard_ids": [h.id]})


def test_pl_verification_fails_below_plr_and_opens_action(session: Session, press) -> None:
    sf = _function(session, press)  # PLr e (ISO 13849-1:2015 Annex A [std, from memory])
    safeguards.save_part(
        session, sf, {"role": "input", "name": "Curtain", "given_pl": "e", "given_pfhd": "3e-9"}
    )
    safeguards.save_part(
        session,
        sf,
        {
            "role": "logic",
            "name": "Relay",
            "category": "3",
            "mttfd_years": "50",
            "dcavg_percent": "95",
            "ccf_points": "70",
        },
    )
    v = safeguards.verify_function(sf)
    # Cat 3, MTTFd high, DC medium → PL d (ISO 13849-1:2006 Table 7 [std, from memory]);
    # with PL e in series the count rule gives d (Table 11 [std, from memory]) → below PLr e
    assert v.required == "e" and v.achieved == "d" and v.passed is False
    assert session.scalar(select(CorrectiveAction.source)) == "pl"


def test_pfhd_of_2_is_refused(session: Session, press) -> None:
    sf = _function(session, press)
    with pytest.raises(ValidationError) as exc:
        safeguards.save_part(session, sf, {"role": "input", "name": "X", "given_pfhd": "2"})
    assert "given_pfhd" in exc.value.errors
    session.rollback()
    assert _count(session, SafetyFunctionPart) == 0


def test_option_choice_needs_a_reason(session: Session, press) -> None:
    a = register.current_assessment(press)
    h = register.add_hazard(session, a, {"hazard_group": "mechanical", "event": "x"})
    o = safeguards.add_option(session, h, {"kind": "two_hand_control", "reachable_pl": "e"})
    with pytest.raises(ValidationError):
        safeguards.choose_option(session, o, " ", "Ann")
    safeguards.choose_option(session, o, "Hand feeding every stroke; one operator", "Ann")
    assert o.chosen and o.reason.startswith("Hand feeding")


def test_close_action_needs_a_note(session: Session, press) -> None:
    a = safeguards.add_action(session, press, {"title": "Fit a finger guard"})
    with pytest.raises(ValidationError):
        safeguards.close_action(session, a, "")
    safeguards.close_action(session, a, "Guard fitted, photo in the binder")
    assert a.status == "closed"


def test_audit_entries_of_checks_name_their_machine(session: Session, press) -> None:
    from riskreg.model import AuditEntry

    _curtain(session, press, installed=450)
    safeguards.record_measurement(
        session, press, {"measured_on": "2026-11-20", "trials_ms": "170, 180"}
    )
    rows = session.execute(
        select(AuditEntry.entity, AuditEntry.site_id, AuditEntry.machine_id).where(
            AuditEntry.entity.in_(("distance_check", "stopping_time_measurement"))
        )
    ).all()
    assert {r[0] for r in rows} == {"distance_check", "stopping_time_measurement"}
    assert all((r[1], r[2]) == (press.site_id, press.id) for r in rows)
