"""SQL statements per page do not grow with the register: the site overview, a machine
page, the due board and the hazard edit page run as many statements for a site of 3
machines as for a site of 30 machines with more hazards and more verifications each,
and at most 15.

A regression guard that does not depend on timing: a query per row of a list (a
machine of the overview, a hazard or a verification of the machine page, a due item)
makes the larger site's count grow and fails here."""

from __future__ import annotations

import datetime as dt
import functools
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest
from flask.testing import FlaskClient
from sqlalchemy import Engine, event, select
from sqlalchemy.orm import Session
from webtools import PASSWORD, log_in, make_app

from riskreg.db import session_factory
from riskreg.model import User
from riskreg.services import audit, register, revisions, safeguards, users, verification

TODAY = dt.date.today()
MAX_STATEMENTS = 15  # project goal (issue "Benchmarks at plant and enterprise scale")
CHECKS = ["Light curtain stops the slide", "Guards fastened", "Emergency stop works"]


@dataclass(frozen=True)
class Built:
    site_id: int
    machine_id: int  # the first machine; every machine of the site has the same records
    hazard_id: int


def _rating(stage: str, frequency: str) -> dict[str, str]:
    return {
        "method": "iso13849",
        "stage": stage,
        "severity": "S2",
        "frequency": frequency,
        "avoidance": "P1",
    }


def _machine(s: Session, site: Any, area_id: int, k: int, who: User, files: Path, size: int) -> Any:
    """One machine with tasks, rated hazards, a measure, a safety function, safeguards,
    press data, a stopping time, verifications, start-of-shift checks and a lockout."""
    m = register.create_machine(
        s,
        site,
        {
            "asset_tag": f"P-{k:03d}",
            "name": f"Press {k}",
            "kind": "mechanical_press",
            "area_id": area_id,
        },
        user=who,
    )
    a = register.current_assessment(m)
    task = register.add_task(s, a, {"phase": "operation", "description": "Feed blanks"})
    hazards = [
        register.add_hazard(
            s,
            a,
            {
                "hazard_group": "mechanical",
                "hazard_type": "crushing",
                "event": f"Hand between the dies ({i})",
                "task_id": task.id if i else None,
            },
            _rating("initial", "F2"),
            user=who,
        )
        for i in range(2 + size)
    ]
    register.rate_hazard(s, hazards[0], _rating("residual", "F1"), user=who)
    measure = register.add_measure(
        s,
        a,
        {"kind": "light_curtain", "status": "installed", "hazard_ids": [h.id for h in hazards]},
    )
    register.add_safety_function(
        s, a, {"name": "Stop the slide", "hazard_ids": [hazards[0].id], "modes": ["run"]}
    )
    curtain = safeguards.save_safeguard(
        s,
        m,
        {
            "kind": "light_curtain",
            "label": "Front light curtain",
            "response_time_ms": "20",
            "installed_distance_mm": "600",
            "espe_type": "4",
            "resolution_mm": "14",
            "blanking": "none",
            "measure_id": measure.id,
        },
    )
    safeguards.save_safeguard(
        s,
        m,
        {
            "kind": "fixed_guard",
            "label": "Side guards",
            "opening_mm": "10",
            "opening_distance_mm": "80",
        },
    )
    safeguards.save_press_profile(s, m, {"clutch": "part", "brake_monitor": "y"})
    safeguards.add_monitor_setting(
        s, m, {"set_on": TODAY - dt.timedelta(days=50), "setpoint_ms": "250", "set_by": "Fitter"}
    )
    safeguards.record_measurement(
        s, m, {"measured_on": TODAY - dt.timedelta(days=20), "trials_ms": "180, 185, 190"}
    )
    history = [("functional_test", 100 + 90 * i, "pass") for i in range(size)]
    for kind, ago, result in [*history, ("inspection", 30, "fail")]:
        verification.record_verification(
            s,
            m,
            {
                "kind": kind,
                "safeguard_id": curtain.id,
                "result": result,
                "notes": "Beam 3 did not stop the slide" if result == "fail" else "",
                "performed_on": TODAY - dt.timedelta(days=ago),
                "performed_by": "Fitter",
            },
            instance_path=files,
        )
    verification.record_verification(
        s,
        m,
        {
            "kind": "weekly_press",
            "result": "pass",
            "performed_on": TODAY - dt.timedelta(days=9),
            "performed_by": "Fitter",
            "press_serial": "S-1",
            "signature": "Lead",
        },
        instance_path=files,
    )
    verification.save_checklist(
        s,
        m,
        {"items": CHECKS, "shifts_per_day": "2", "active_since": TODAY - dt.timedelta(days=6)},
    )
    verification.record_shift_check(
        s,
        m,
        {
            "shift_date": TODAY - dt.timedelta(days=2),
            "shift": "1",
            "performed_by": "Operator",
            "ok_items": CHECKS,
        },
    )
    verification.save_lockout(s, m, {"title": "Lock out the main isolator", "interval_days": 365})
    return m, hazards[1]


def _site(engine: Engine, name: str, machines: int, size: int, files: Path) -> Built:
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as s:
        who = s.scalars(select(User).where(User.role == "assessor")).one()
        approver = s.scalars(select(User).where(User.role == "approver")).one()
        site = register.create_site(s, name)
        area = register.create_area(s, site, "Press line")
        verification.save_instrument(s, site, {"name": "Stop-time meter", "serial": "M-1"})
        first = None
        for k in range(machines):
            m, hazard = _machine(s, site, area.id, k, who, files, size)
            if k % 3 == 2:  # some approved revisions, as in a register in use
                a = register.current_assessment(m)
                revisions.submit(s, a, who)
                revisions.approve(s, a, approver)
            if first is None:
                first = Built(site.id, m.id, hazard.id)
        assert first is not None
        return first


@pytest.fixture
def registers(
    engine: Engine, instance_dir: Path, monkeypatch: pytest.MonkeyPatch
) -> tuple[Built, Built]:
    """A site of 3 machines and a site of 30 with more on each, in the same database."""
    monkeypatch.setattr(
        users,
        "generate_password_hash",
        functools.partial(users.generate_password_hash, method="pbkdf2:sha256:1000"),
    )
    factory = session_factory(engine)
    with factory() as s:
        users.create_user(s, "assessor@example.com", "Anton Fieldwork", "assessor", PASSWORD)
        users.create_user(s, "approver@example.com", "Paula Signoff", "approver", PASSWORD)
    files = instance_dir / "files"
    return (
        _site(engine, "Small Works", 3, 1, files),
        _site(engine, "Large Works", 30, 4, files),
    )


@pytest.fixture
def client(
    engine_url: str, registers: Any, instance_dir: Path
) -> Iterator[tuple[FlaskClient, list[str]]]:
    """A logged-in assessor, and the statements its last request ran."""
    app = make_app(engine_url)
    statements: list[str] = []

    def count(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        statements.append(statement)

    engine = app.extensions["riskreg.engine"]
    event.listen(engine, "before_cursor_execute", count)
    c = app.test_client()
    log_in(c, "assessor")
    yield c, statements
    event.remove(engine, "before_cursor_execute", count)
    engine.dispose()


def _count(client: tuple[FlaskClient, list[str]], path: str) -> int:
    c, statements = client
    statements.clear()
    resp = c.get(path)
    assert resp.status_code == 200, (path, resp.status_code)
    return len(statements)


PAGES = {
    "site overview": lambda b: f"/sites/{b.site_id}",
    "machine page": lambda b: f"/machines/{b.machine_id}",
    "due board": lambda b: f"/sites/{b.site_id}/due",
    "hazard edit page": lambda b: f"/hazards/{b.hazard_id}/edit",
}


def test_statements_per_page_do_not_grow_with_the_register(
    client: tuple[FlaskClient, list[str]], registers: tuple[Built, Built]
) -> None:
    small, large = registers
    # The first read of a day works the site's due items out and stores them (a fixed
    # number of statements, whatever the size); the counts below are of every other read.
    overview = PAGES["site overview"]
    first = (_count(client, overview(small)), _count(client, overview(large)))
    assert first[0] == first[1], f"the first read of the day grows with the register: {first}"
    counts = {
        page: (_count(client, p(small)), _count(client, p(large))) for page, p in PAGES.items()
    }
    grows = {page: n for page, n in counts.items() if n[0] != n[1]}
    assert not grows, f"statements (small site, large site) that differ: {grows}"
    over = {page: n[1] for page, n in counts.items() if n[1] > MAX_STATEMENTS}
    assert not over, f"more than {MAX_STATEMENTS} statements: {over}"
    # the large site's due board runs to several pages, and a later page costs the same
    html = client[0].get(PAGES["due board"](large)).get_data(as_text=True)
    assert "Page 1 of" in html, "the large site's due board should need more than one page"
    assert _count(client, PAGES["due board"](large) + "?page=2") == counts["due board"][1]


def test_the_pages_of_the_due_board_hold_every_item_once_in_order(
    engine: Engine, registers: tuple[Built, Built]
) -> None:
    """The board's pages, one after the other, are the full list of due items (the one
    the CLI, the reports and the calendar use), and their counts are its counts."""
    from riskreg.model import Site
    from riskreg.services import due

    _small, large = registers
    with session_factory(engine)() as s:
        site = s.get(Site, large.site_id)
        assert site is not None
        everything = due.due_items(s, site)
        first = due.due_page(s, site, per_page=40)
        assert first.pages == -(-len(everything) // 40) and first.pages > 1
        paged = [
            i
            for n in range(1, first.pages + 1)
            for i in due.due_page(s, site, page=n, per_page=40).items
        ]
        assert paged == everything
        assert first.counts == due.due_summary(s, site)
        assert {k: first.counts[k] for k in due.counts(everything)} == due.counts(everything)
        assert first.total == len(everything)
        # a page past the end shows the last one
        last = due.due_page(s, site, page=first.pages + 5, per_page=40)
        assert last.page == first.pages and last.items == paged[(first.pages - 1) * 40 :]
