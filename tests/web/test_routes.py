"""Every route of the app, from a table of expectations: who may open it, who may
write through it, and what a write stores. A route added without a row here
fails ``test_every_route_has_a_row``."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, urlsplit

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import Engine, func, select
from trustseed import CHECKLIST, TrustSeed, add_trust_records
from webtools import NAMES, PASSWORD, ROLES, Seed, Store, csrf_token

from riskreg.model import (
    Assessment,
    BrakeMonitorSetting,
    CalendarToken,
    Component,
    CorrectiveAction,
    Hazard,
    Instrument,
    LockoutProcedure,
    Machine,
    Modification,
    PressProfile,
    ProtectiveMeasure,
    RiskRating,
    Safeguard,
    SafeguardOption,
    SafetyFunction,
    SafetyFunctionPart,
    ShiftCheck,
    ShiftChecklist,
    Site,
    StoppingTimeMeasurement,
    Task,
    User,
    Verification,
    VerificationInterval,
)
from riskreg.services import library
from riskreg.vocab import ROLE_RANK

Data = Callable[[Store, Seed], dict[str, Any]]
Probe = Callable[[Store, Seed], Any]


@dataclass(frozen=True)
class Row:
    """What one endpoint must do.

    access: "public" (no login), "read" (any logged-in role), "write" (``role``
    or above), "session" (any logged-in role; log out).
    For a write route: ``data`` is a valid form, ``probe`` reads the stored state
    it changes and ``want`` gives the state after the write from the state before;
    ``open_get`` when its GET is a page every role may read (only the POST needs
    ``role``).
    """

    access: str
    url: Callable[[Any], str]
    methods: tuple[str, ...] = ("GET",)
    role: str | None = None
    data: Data | None = None
    probe: Probe | None = None
    want: Callable[[Any], Any] | None = None
    open_get: bool = False


@pytest.fixture
def seed(seed: Seed, engine: Engine, instance_dir: Path) -> TrustSeed:
    """The register plus the records the safeguard and verification routes need."""
    return add_trust_records(engine, seed, instance_dir)


def _machine_form(store: Store, seed: Seed, **over: Any) -> dict[str, Any]:
    data = {
        "version": str(store.machine(seed.machine_id, "version")),
        "asset_tag": "P-01",
        "name": "200 t straight-side press",
        "kind": "mechanical_press",
        "area_id": str(seed.area_id),
        "maker": "",
        "model": "",
        "serial": "",
        "year": "2001",
        "location": "",
        "notes": "",
    }
    data.update(over)
    return data


def _hazard_form(store: Store, seed: Seed, **over: Any) -> dict[str, Any]:
    data = {
        "version": str(store.hazard(seed.hazard_id, "version")),
        "task_id": str(seed.task_id),
        "hazard_group": "mechanical",
        "hazard_type": "crushing",
        "danger_zone": "Die space",
        "event": "Hand between the dies as the slide descends",
        "harm": "Amputation of fingers",
        "persons_exposed": "operator",
        "method": "iso13849",
        "stage": "initial",
        "s": "S2",
        "f": "F1",
        "p": "P2",
    }
    data.update(over)
    return data


def _count(model: type[Any], **where: str) -> Probe:
    def probe(store: Store, seed: Seed) -> int:
        conds = [getattr(model, k) == getattr(seed, v) for k, v in where.items()]
        return store.count(model, *conds)

    return probe


def _plus(n: int) -> Callable[[Any], Any]:
    return lambda before: before + n


def _becomes(value: Any) -> Callable[[Any], Any]:
    return lambda _before: value


def _assessment_scope(store: Store, seed: Seed) -> str:
    return str(store.value(Assessment, seed.assessment_id, "scope"))


def _residual_accepted(store: Store, seed: Seed) -> bool:
    return store.hazard(seed.hazard_id, "residual_accepted_by_id") is not None


def _where(model: type[Any], *conds: Any) -> Probe:
    return lambda store, seed: store.count(model, *conds)


def _checklist_items(store: Store, seed: Seed) -> list[str]:
    with store.session() as s:
        row = s.scalar(select(ShiftChecklist).where(ShiftChecklist.machine_id == seed.machine_id))
        return list(row.items) if row else []


TODAY = dt.date.today().isoformat()
GP = ("GET", "POST")


ROUTES: dict[str, Row] = {
    "static": Row("public", lambda s: "/static/css/riskreg.css"),
    "auth.login": Row("public", lambda s: "/login", ("GET", "POST")),
    "auth.logout": Row("session", lambda s: "/logout", ("POST",)),
    "sites.overview": Row("read", lambda s: "/"),
    "sites.site": Row("read", lambda s: f"/sites/{s.site_id}"),
    "machines.machine": Row("read", lambda s: f"/machines/{s.machine_id}"),
    "machines.file": Row("read", lambda s: f"/files/{s.file_id}"),
    "hazards.rating_preview": Row(
        "read",
        lambda s: "/api/rating-preview?method=iso13849&severity=S2&frequency=F1&avoidance=P2",
    ),
    "machines.new_machine": Row(
        "write",
        lambda s: f"/sites/{s.site_id}/machines/new",
        ("GET", "POST"),
        "assessor",
        lambda st, s: _machine_form(st, s, version="", asset_tag="P-77", name="Press brake 2"),
        _count(Machine),
        _plus(1),
    ),
    "machines.edit_machine": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/edit",
        ("GET", "POST"),
        "assessor",
        lambda st, s: _machine_form(st, s, name="200 t press, line A"),
        lambda st, s: st.machine(s.machine_id, "name"),
        _becomes("200 t press, line A"),
    ),
    "machines.clone": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/clone",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {"asset_tag": "P-02", "name": "", "serial": "S-2"},
        _count(Machine),
        _plus(1),
    ),
    "machines.do_not_operate": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/do-not-operate",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {"flag": "y", "reason": "Brake stopping time over the limit"},
        lambda st, s: st.machine(s.machine_id, "do_not_operate"),
        _becomes(True),
    ),
    "machines.edit_assessment": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/assessment",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {"scope": "Press and its feed table", "assessors": "A. Fieldwork"},
        _assessment_scope,
        _becomes("Press and its feed table"),
    ),
    "machines.new_task": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/tasks/new",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {"phase": "cleaning", "description": "Wipe the bolster"},
        _count(Task),
        _plus(1),
    ),
    "machines.from_library": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/library",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {},
        _count(Hazard),
        _plus(len(library.entries("mechanical_press"))),
    ),
    "machines.new_measure": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/measures/new",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {
            "kind": "fixed_guard",
            "description": "Fence at the rear of the press",
            "status": "proposed",
            "hazard_ids": [str(s.hazard_id)],
            "safety_function_id": "",
        },
        _count(ProtectiveMeasure),
        _plus(1),
    ),
    "machines.measure_status": Row(
        "write",
        lambda s: f"/measures/{s.measure_id}/status",
        ("POST",),
        "assessor",
        lambda st, s: {"status": "installed"},
        lambda st, s: st.value(ProtectiveMeasure, s.measure_id, "status"),
        _becomes("installed"),
    ),
    "machines.new_function": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/functions/new",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {
            "name": "Stop the slide when the rear gate opens",
            "trigger": "Rear gate opened",
            "reaction": "Slide stops",
            "modes": ["run", "inch"],
            "response_time_ms": "40",
            "hazard_ids": [str(s.hazard_id)],
        },
        _count(SafetyFunction),
        _plus(1),
    ),
    "hazards.new_hazard": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/hazards/new",
        ("GET", "POST"),
        "assessor",
        lambda st, s: _hazard_form(
            st, s, version="", hazard_type="ejection of parts", event="Scrap thrown"
        ),
        _count(Hazard),
        _plus(1),
    ),
    "hazards.edit_hazard": Row(
        "write",
        lambda s: f"/hazards/{s.hazard_id}/edit",
        ("GET", "POST"),
        "assessor",
        lambda st, s: _hazard_form(st, s, event="Hand in the die space on a repeat stroke"),
        lambda st, s: st.hazard(s.hazard_id, "event"),
        _becomes("Hand in the die space on a repeat stroke"),
    ),
    "hazards.rate": Row(
        "write",
        lambda s: f"/hazards/{s.hazard_id}/rate",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {"method": "iso13849", "stage": "residual", "s": "S1", "f": "F1", "p": "P1"},
        _count(RiskRating, hazard_id="hazard_id"),
        _plus(1),
    ),
    "hazards.accept": Row(
        "write",
        lambda s: f"/hazards/{s.hazard_id}/accept",
        ("GET", "POST"),
        "approver",
        lambda st, s: {"interim": "Two-hand control until the curtain is fitted"},
        _residual_accepted,
        _becomes(True),
    ),
    # --- safeguard pages ---
    "safeguards.new_safeguard": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/safeguards/new?kind=fixed_guard",
        GP,
        "assessor",
        lambda st, s: {
            "label": "Rear fence",
            "status": "installed",
            "opening_mm": "20",
            "opening_distance_mm": "200",
        },
        _count(Safeguard),
        _plus(1),
    ),
    "safeguards.edit_safeguard": Row(
        "write",
        lambda s: f"/safeguards/{s.safeguard_id}/edit",
        GP,
        "assessor",
        lambda st, s: {
            "label": "Front curtain, line A",
            "status": "installed",
            "response_time_ms": "20",
            "installed_distance_mm": "600",
            "espe_type": "4",
            "resolution_mm": "14",
            "blanking": "none",
        },
        lambda st, s: st.value(Safeguard, s.safeguard_id, "label"),
        _becomes("Front curtain, line A"),
    ),
    "safeguards.safeguard": Row("read", lambda s: f"/safeguards/{s.safeguard_id}"),
    "safeguards.new_measurement": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/measurements/new",
        GP,
        "assessor",
        lambda st, s: {
            "measured_on": TODAY,
            "trials_ms": "170, 175, 172",
            "allowance_percent": "0",
            "instrument_id": str(s.instrument_id),
        },
        _count(StoppingTimeMeasurement),
        _plus(1),
    ),
    "safeguards.measurement": Row("read", lambda s: f"/measurements/{s.measurement_id}"),
    "safeguards.press": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/press",
        GP,
        "assessor",
        lambda st, s: {"clutch": "full", "engaging_points": "2", "revolution_time_ms": "500"},
        _where(PressProfile, PressProfile.clutch == "full"),
        _plus(1),
    ),
    "safeguards.monitor_setting": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/press/monitor",
        ("POST",),
        "assessor",
        lambda st, s: {"bm-set_on": TODAY, "bm-setpoint_ms": "250", "bm-set_by": "A. Fieldwork"},
        _count(BrakeMonitorSetting),
        _plus(1),
    ),
    "safeguards.function": Row(
        "write",
        lambda s: f"/functions/{s.function_id}",
        GP,
        "assessor",
        lambda st, s: {"role": "input", "name": "Light curtain", "given_pl": "e"},
        _count(SafetyFunctionPart),
        _plus(1),
        open_get=True,
    ),
    "safeguards.components": Row(
        "write",
        lambda s: "/components",
        GP,
        "assessor",
        lambda st, s: {
            "maker": "Example Maker",
            "model": "R-1",
            "kind": "safety relay",
            "document": "data sheet rev. 1",
        },
        _count(Component),
        _plus(1),
        open_get=True,
    ),
    "safeguards.options": Row(
        "write",
        lambda s: f"/hazards/{s.hazard_id}/options",
        GP,
        "assessor",
        lambda st, s: {"which": "option", "op-kind": "fixed_guard", "op-cost": "1200"},
        _count(SafeguardOption),
        _plus(1),
        open_get=True,
    ),
    "safeguards.choose": Row(
        "write",
        lambda s: f"/options/{s.option_id}/choose",
        ("POST",),
        "assessor",
        lambda st, s: {"ch-reason": "Blanks are fed by hand at every stroke"},
        lambda st, s: st.value(SafeguardOption, s.option_id, "chosen"),
        _becomes(True),
    ),
    "safeguards.new_action": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/actions/new",
        GP,
        "assessor",
        lambda st, s: {"title": "Replace the worn shroud", "owner": "Maintenance"},
        _count(CorrectiveAction),
        _plus(1),
    ),
    "safeguards.close_action": Row(
        "write",
        lambda s: f"/actions/{s.action_id}/close",
        GP,
        "assessor",
        lambda st, s: {"closing_note": "Rear guard refitted and checked"},
        lambda st, s: st.value(CorrectiveAction, s.action_id, "status"),
        _becomes("closed"),
    ),
    # --- keeping safeguards trusted ---
    "trust.new_verification": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/verifications/new",
        GP,
        "assessor",
        lambda st, s: {
            "safeguard_id": str(s.safeguard_id),
            "kind": "inspection",
            "result": "pass",
            "performed_on": TODAY,
            "performed_by": "Maintenance",
        },
        _count(Verification),
        _plus(1),
    ),
    "trust.verification": Row("read", lambda s: f"/verifications/{s.verification_id}"),
    "trust.due_board": Row("read", lambda s: f"/sites/{s.site_id}/due"),
    "trust.instruments": Row("read", lambda s: f"/sites/{s.site_id}/instruments"),
    "trust.new_instrument": Row(
        "write",
        lambda s: f"/sites/{s.site_id}/instruments/new",
        GP,
        "assessor",
        lambda st, s: {"name": "Stop-time meter B", "calibration_interval_days": "365"},
        _count(Instrument),
        _plus(1),
    ),
    "trust.calibrate": Row(
        "write",
        lambda s: f"/instruments/{s.instrument_id}/calibrate",
        GP,
        "assessor",
        lambda st, s: {"calibrated_on": TODAY},
        lambda st, s: st.value(Instrument, s.instrument_id, "calibrated_on"),
        _becomes(dt.date.today()),
    ),
    "trust.intervals": Row(
        "write",
        lambda s: f"/sites/{s.site_id}/intervals",
        GP,
        "approver",
        lambda st, s: {"kind": "functional_test", "days": "60"},
        _where(
            VerificationInterval,
            VerificationInterval.safeguard_id.is_(None),
            VerificationInterval.kind == "functional_test",
            VerificationInterval.days == 60,
        ),
        _plus(1),
        open_get=True,
    ),
    "trust.safeguard_interval": Row(
        "write",
        lambda s: f"/safeguards/{s.safeguard_id}/intervals",
        ("POST",),
        "assessor",
        lambda st, s: {"iv-kind": "inspection", "iv-days": "180"},
        _where(VerificationInterval, VerificationInterval.days == 180),
        _plus(1),
    ),
    "trust.actions": Row("read", lambda s: f"/sites/{s.site_id}/actions"),
    "trust.new_lockout": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/lockout/new",
        GP,
        "assessor",
        lambda st, s: {"title": "Lock-out for cleaning", "interval_days": "365"},
        _count(LockoutProcedure),
        _plus(1),
    ),
    "trust.lockout_inspected": Row(
        "write",
        lambda s: f"/lockout/{s.lockout_id}/inspected",
        ("POST",),
        "assessor",
        lambda st, s: {},
        lambda st, s: st.value(LockoutProcedure, s.lockout_id, "last_inspected_on"),
        _becomes(dt.date.today()),
    ),
    "trust.checklist": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/shift-checklist",
        GP,
        "assessor",
        lambda st, s: {"items": "Guards fastened\nTwo-hand control works", "shifts_per_day": "1"},
        _checklist_items,
        _becomes(["Guards fastened", "Two-hand control works"]),
    ),
    "trust.shift_check": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/shift-check",
        GP,
        "assessor",
        lambda st, s: {
            "shift_date": TODAY,
            "shift": "1",
            "performed_by": "Operator",
            "ok_items": CHECKLIST,
        },
        _count(ShiftCheck),
        _plus(1),
    ),
    "trust.calendar_links": Row(
        "write",
        lambda s: f"/sites/{s.site_id}/calendar",
        GP,
        "admin",
        lambda st, s: {"label": "second planner"},
        _count(CalendarToken),
        _plus(1),
    ),
    "trust.revoke_calendar_link": Row(
        "write",
        lambda s: f"/calendar-links/{s.token_id}/revoke",
        ("POST",),
        "admin",
        lambda st, s: {},
        lambda st, s: st.value(CalendarToken, s.token_id, "revoked_at") is not None,
        _becomes(True),
    ),
    "trust.calendar_feed": Row("public", lambda s: f"/calendar/{s.token}.ics"),
    "hazards.archive": Row(
        "write",
        lambda s: f"/hazards/{s.hazard_id}/archive",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {},
        lambda st, s: st.hazard(s.hazard_id, "archived"),
        _becomes(True),
    ),
    # records: review, approval, revisions, modifications, audit trail
    "records.submit": Row(
        "write",
        lambda s: f"/assessments/{s.assessment_id}/submit",
        ("POST",),
        "assessor",
        lambda st, s: {},
        lambda st, s: st.value(Assessment, s.assessment_id, "status"),
        _becomes("in_review"),
    ),
    # A draft cannot be approved or returned: the allowed roles get the page back
    # with the reason, and nothing changes (refused roles get 403).
    "records.approve": Row(
        "write",
        lambda s: f"/assessments/{s.assessment_id}/approve",
        ("POST",),
        "approver",
        lambda st, s: {},
        lambda st, s: st.value(Assessment, s.assessment_id, "status"),
        _becomes("draft"),
    ),
    "records.return_to_draft": Row(
        "write",
        lambda s: f"/assessments/{s.assessment_id}/return",
        ("POST",),
        "approver",
        lambda st, s: {"reason": "more detail"},
        lambda st, s: st.value(Assessment, s.assessment_id, "status"),
        _becomes("draft"),
    ),
    "records.revise": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/revise",
        ("POST",),
        "assessor",
        lambda st, s: {"reason": "new die"},
        _count(Assessment, machine_id="machine_id"),
        _plus(0),
    ),
    "records.modification": Row(
        "write",
        lambda s: f"/machines/{s.machine_id}/modifications/new",
        ("GET", "POST"),
        "assessor",
        lambda st, s: {
            "kind": "die_set",
            "description": "New blanking die",
            "made_on": dt.date.today().isoformat(),
        },
        _count(Modification, machine_id="machine_id"),
        _plus(1),
    ),
    # printable reports (each read route renders a real PDF; tests/reports checks them)
    "reports.machine_report": Row("read", lambda s: f"/machines/{s.machine_id}/report.pdf"),
    "reports.latest_certificate": Row(
        "read", lambda s: f"/machines/{s.machine_id}/certificate.pdf"
    ),
    "reports.certificate": Row(
        "read", lambda s: f"/measurements/{s.measurement_id}/certificate.pdf"
    ),
    "reports.due_report": Row("read", lambda s: f"/sites/{s.site_id}/due-report.pdf"),
    "reports.labels": Row("read", lambda s: f"/areas/{s.area_id}/labels.pdf"),
    # The site report runs as a background job (tests/reports/test_web.py follows one);
    # here: anonymous is sent to log in, and the POST needs its CSRF token.
    "reports.start_site_report": Row("session", lambda s: f"/sites/{s.site_id}/report", ("POST",)),
    "reports.site_report_status": Row("session", lambda s: "/reports/0123456789abcdef"),
    "reports.site_report_file": Row("session", lambda s: "/reports/0123456789abcdef/1.pdf"),
    # administration
    "admin.people": Row(
        "write",
        lambda s: "/admin/people",
        ("GET", "POST"),
        "admin",
        lambda st, s: {
            "email": "new.person@example.com",
            "name": "New Person",
            "role": "viewer",
            "password": "long-password-42",
        },
        lambda st, s: st.count(User),
        _plus(1),
    ),
    "admin.set_role": Row(
        "write",
        lambda s: f"/admin/people/{s.viewer_id}",
        ("POST",),
        "admin",
        lambda st, s: {"role": "assessor", "active": "y"},
        lambda st, s: st.value(User, s.viewer_id, "role"),
        _becomes("assessor"),
    ),
    "admin.new_site": Row(
        "write",
        lambda s: "/admin/sites/new",
        ("GET", "POST"),
        "admin",
        lambda st, s: {
            "name": "Second Works",
            "units": "mm",
            "distance_method": "ISO",
            "rating_method": "iso13849",
            "stop_time_allowance_percent": "10",
        },
        lambda st, s: st.count(Site),
        _plus(1),
    ),
    "admin.site_settings": Row(
        "write",
        lambda s: f"/admin/sites/{s.site_id}",
        ("GET", "POST"),
        "admin",
        lambda st, s: {
            "name": "Test Works",
            "units": "in",
            "distance_method": "US",
            "rating_method": "iso13849",
            "stop_time_allowance_percent": "5",
        },
        lambda st, s: st.value(Site, s.site_id, "distance_method"),
        _becomes("US"),
    ),
    "records.history": Row("read", lambda s: f"/machines/{s.machine_id}/revisions"),
    "records.revision": Row("read", lambda s: f"/assessments/{s.assessment_id}"),
    "records.re_evaluate": Row("read", lambda s: f"/assessments/{s.assessment_id}/re-evaluate"),
    "records.machine_audit": Row("read", lambda s: f"/machines/{s.machine_id}/audit"),
    "records.site_audit": Row("read", lambda s: f"/sites/{s.site_id}/audit"),
}

WRITES = [e for e, r in ROUTES.items() if r.access == "write"]
NOT_PUBLIC = [(e, m) for e, r in ROUTES.items() if r.access != "public" for m in r.methods]


def _allowed(role: str, least: str) -> bool:
    return ROLE_RANK[role] >= ROLE_RANK[least]


def _is_login_redirect(resp: Any) -> bool:
    return resp.status_code == 302 and urlsplit(resp.headers["Location"]).path == "/login"


# --- the table covers the app ----------------------------------------------------


def test_every_route_has_a_row(app: Flask) -> None:
    endpoints = {rule.endpoint for rule in app.url_map.iter_rules()}
    missing = endpoints - set(ROUTES)
    assert not missing, (
        f"routes without a row in ROUTES (add one, with its expectations): {missing}"
    )
    assert not set(ROUTES) - endpoints, "rows for routes that no longer exist"


def test_each_row_reaches_its_endpoint_with_its_methods(app: Flask, seed: Seed) -> None:
    adapter = app.url_map.bind("localhost")
    for endpoint, row in ROUTES.items():
        path = urlsplit(row.url(seed)).path
        rules = [r for r in app.url_map.iter_rules() if r.endpoint == endpoint]
        served = {m for r in rules for m in r.methods or ()} - {"HEAD", "OPTIONS"}
        assert served == set(row.methods), endpoint
        for method in row.methods:
            assert adapter.match(path, method=method)[0] == endpoint
        if row.access == "write":
            assert row.role in ROLE_RANK and row.data and row.probe and row.want, endpoint


# --- anonymous -------------------------------------------------------------------


@pytest.mark.parametrize(("endpoint", "method"), NOT_PUBLIC)
def test_anonymous_is_sent_to_the_login_page(
    app: Flask, seed: Seed, store: Store, endpoint: str, method: str
) -> None:
    row = ROUTES[endpoint]
    before = row.probe(store, seed) if row.probe else None
    client = app.test_client()
    data = row.data(store, seed) if (row.data and method == "POST") else {}
    resp = client.open(row.url(seed), method=method, data=data)
    assert _is_login_redirect(resp), (resp.status_code, resp.headers.get("Location"))
    nxt = parse_qs(urlsplit(resp.headers["Location"]).query).get("next", [""])[0]
    assert nxt.startswith(urlsplit(row.url(seed)).path)
    if row.probe:
        assert row.probe(store, seed) == before, "an anonymous request changed the register"


def test_public_routes_open_without_login(app: Flask) -> None:
    client = app.test_client()
    assert client.get("/login").status_code == 200
    css = client.get("/static/css/riskreg.css")
    assert css.status_code == 200 and css.mimetype == "text/css"


def test_anonymous_unknown_address_goes_to_login(app: Flask) -> None:
    assert _is_login_redirect(app.test_client().get("/no/such/page"))


# --- reading: every role -----------------------------------------------------------

READS = [e for e, r in ROUTES.items() if r.access == "read"]


@pytest.mark.parametrize("role", ROLES)
@pytest.mark.parametrize("endpoint", READS)
def test_every_role_can_read(
    client_as: Callable[[str], FlaskClient], seed: Seed, endpoint: str, role: str
) -> None:
    client = client_as(role)
    resp = client.get(ROUTES[endpoint].url(seed), follow_redirects=True)
    assert resp.status_code == 200
    if endpoint == "machines.file":
        assert resp.mimetype == "image/jpeg"


def test_machine_page_shows_the_register(
    client_as: Callable[[str], FlaskClient], seed: Seed
) -> None:
    html = client_as("viewer").get(f"/machines/{seed.machine_id}").get_data(as_text=True)
    assert "P-01" in html and "Hand between the dies as the slide descends" in html
    assert "Stop the slide when the light curtain is interrupted" in html
    # The viewer sees no write links.
    assert f"/hazards/{seed.hazard_id}/edit" not in html
    assert f"/machines/{seed.machine_id}/hazards/new" not in html


# --- writing: by role --------------------------------------------------------------

WRITE_CASES = [(e, r) for e in WRITES for r in ROLES]


@pytest.mark.parametrize(("endpoint", "role"), WRITE_CASES)
def test_write_permissions(
    client_as: Callable[[str], FlaskClient], seed: Seed, store: Store, endpoint: str, role: str
) -> None:
    row = ROUTES[endpoint]
    assert row.role and row.data and row.probe and row.want
    client = client_as(role)
    url = row.url(seed)
    before = row.probe(store, seed)
    allowed = _allowed(role, row.role)
    if "GET" in row.methods:
        page = client.get(url)
        assert page.status_code == (200 if allowed or row.open_get else 403)
        assert row.probe(store, seed) == before, "a GET changed the register"
    resp = client.post(url, data=row.data(store, seed))
    after = row.probe(store, seed)
    if allowed:
        assert resp.status_code == 302, resp.get_data(as_text=True)
        assert after == row.want(before)
    else:
        assert resp.status_code == 403
        assert "does not allow" in resp.get_data(as_text=True)
        assert after == before, "a refused write changed the register"


@pytest.mark.parametrize("role", ROLES)
def test_only_approver_or_admin_may_accept_residual_risk(
    client_as: Callable[[str], FlaskClient], seed: Seed, store: Store, role: str
) -> None:
    client = client_as(role)
    may = role in ("approver", "admin")
    link = f"/hazards/{seed.hazard_id}/accept"
    # The link is shown only to those who may use it.
    html = client.get(f"/machines/{seed.machine_id}").get_data(as_text=True)
    assert (link in html) == may
    resp = client.post(link, data={"interim": ""})
    accepted_by = store.hazard(seed.hazard_id, "residual_accepted_by_id")
    if may:
        assert resp.status_code == 302
        assert store.value(User, accepted_by, "email") == Seed.email(role)
        html = client.get(f"/machines/{seed.machine_id}").get_data(as_text=True)
        assert link not in html and f"Residual risk accepted by {NAMES[role]}" in html
    else:
        assert resp.status_code == 403 and accepted_by is None


@pytest.mark.parametrize("role", ROLES)
def test_log_out(client_as: Callable[[str], FlaskClient], role: str) -> None:
    client = client_as(role)
    assert client.get("/", follow_redirects=True).status_code == 200
    resp = client.post("/logout")
    assert _is_login_redirect(resp)
    assert _is_login_redirect(client.get("/"))


# --- CSRF ------------------------------------------------------------------------

POSTS = [e for e, r in ROUTES.items() if "POST" in r.methods]


def _csrf_login(client: FlaskClient, role: str) -> None:
    token = csrf_token(client.get("/login").get_data(as_text=True))
    resp = client.post(
        "/login", data={"email": Seed.email(role), "password": PASSWORD, "csrf_token": token}
    )
    assert resp.status_code == 302


@pytest.mark.parametrize("endpoint", POSTS)
def test_post_without_csrf_token_is_refused(csrf_app: Flask, seed: Seed, endpoint: str) -> None:
    store = Store(csrf_app)
    row = ROUTES[endpoint]
    client = csrf_app.test_client()
    if endpoint != "auth.login":
        _csrf_login(client, "admin")
    data: dict[str, Any] = (
        row.data(store, seed) if row.data else {"email": Seed.email("admin"), "password": PASSWORD}
    )
    before = row.probe(store, seed) if row.probe else None
    for token in (None, "not-the-token"):
        sent = dict(data) if token is None else dict(data, csrf_token=token)
        resp = client.post(row.url(seed), data=sent)
        assert resp.status_code == 400, (endpoint, resp.status_code)
        assert "security token" in resp.get_data(as_text=True)
        if row.probe:
            assert row.probe(store, seed) == before, "a POST without its token changed the register"
    # Still logged in (or still logged out, for the login form itself).
    assert _is_login_redirect(client.get("/")) == (endpoint == "auth.login")


def test_post_with_the_page_token_is_accepted(csrf_app: Flask, seed: Seed) -> None:
    """The control for the test above: the same form with the page's token goes through."""
    store = Store(csrf_app)
    client = csrf_app.test_client()
    _csrf_login(client, "assessor")
    url = f"/machines/{seed.machine_id}/tasks/new"
    before = store.count(Task)
    token = csrf_token(client.get(url).get_data(as_text=True))
    resp = client.post(
        url, data={"phase": "cleaning", "description": "Wipe the bolster", "csrf_token": token}
    )
    assert resp.status_code == 302
    assert store.count(Task) == before + 1


def test_assessment_count_is_stable_on_refused_clone(
    client_as: Callable[[str], FlaskClient], seed: Seed, store: Store
) -> None:
    """A refused clone writes no copy of the assessment either."""
    with store.session() as s:
        before = s.scalar(select(func.count()).select_from(Assessment))
    resp = client_as("viewer").post(f"/machines/{seed.machine_id}/clone", data={"asset_tag": "X"})
    assert resp.status_code == 403
    with store.session() as s:
        assert s.scalar(select(func.count()).select_from(Assessment)) == before
