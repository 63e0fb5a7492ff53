"""Fixtures of the web tests: a migrated database with one small register in it
(people of every role, a site, an area, a machine with a task, a rated hazard, a
measure, a safety function and a photo), the app built from the factory with its
instance folder under tmp_path, and helpers to log in and to read what was stored."""

from __future__ import annotations

import functools
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import Engine
from webtools import JPEG_BYTES, NAMES, PASSWORD, ROLES, Seed, Store, log_in, make_app

from riskreg.db import session_factory
from riskreg.services import audit, evidence, register, users
from riskreg.web import auth


@pytest.fixture(autouse=True)
def _fresh_login_throttle() -> Iterator[None]:
    """The login throttle lives in the process; start every test without failures."""
    auth._failures.clear()
    yield
    auth._failures.clear()


@pytest.fixture
def instance_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    path = tmp_path / "instance"
    monkeypatch.setenv("RISKREG_INSTANCE", str(path))
    return path


@pytest.fixture
def seed(engine: Engine, instance_dir: Path, monkeypatch: pytest.MonkeyPatch) -> Seed:
    """The register every web test starts from (the ``engine`` fixture has migrated it)."""
    # Seeded people get a cheap hash so the many tests stay quick; logging in still
    # goes through the real password check.
    monkeypatch.setattr(
        users,
        "generate_password_hash",
        functools.partial(users.generate_password_hash, method="pbkdf2:sha256:1000"),
    )
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as s:
        people = {
            role: users.create_user(s, Seed.email(role), NAMES[role], role, PASSWORD)
            for role in ROLES
        }
        site = register.create_site(s, "Test Works")
        area = register.create_area(s, site, "Press line")
        m = register.create_machine(
            s,
            site,
            {
                "asset_tag": "P-01",
                "name": "200 t straight-side press",
                "kind": "mechanical_press",
                "area_id": area.id,
                "year": 2001,
            },
            user=people["assessor"],
        )
        a = register.current_assessment(m)
        t = register.add_task(
            s, a, {"phase": "operation", "description": "Hand-feed blanks into the die"}
        )
        h = register.add_hazard(
            s,
            a,
            {
                "hazard_group": "mechanical",
                "hazard_type": "crushing",
                "event": "Hand between the dies as the slide descends",
                "harm": "Amputation of fingers",
                "task_id": t.id,
            },
            {
                "method": "iso13849",
                "stage": "initial",
                "severity": "S2",
                "frequency": "F1",
                "avoidance": "P2",
            },
            user=people["assessor"],
        )
        register.rate_hazard(
            s,
            h,
            {
                "method": "iso13849",
                "stage": "residual",
                "severity": "S2",
                "frequency": "F1",
                "avoidance": "P1",
            },
            user=people["assessor"],
        )
        sf = register.add_safety_function(
            s,
            a,
            {
                "name": "Stop the slide when the light curtain is interrupted",
                "hazard_ids": [h.id],
                "modes": ["run"],
                "response_time_s": 0.03,
            },
        )
        measure = register.add_measure(
            s, a, {"kind": "light_curtain", "status": "proposed", "hazard_ids": [h.id]}
        )
        photo = evidence.store(
            s, instance_dir, JPEG_BYTES, "press.jpg", allowed=evidence.IMAGE_TYPES
        )
        m.photo = photo
        s.commit()
        return Seed(
            site_id=site.id,
            area_id=area.id,
            machine_id=m.id,
            assessment_id=a.id,
            task_id=t.id,
            hazard_id=h.id,
            measure_id=measure.id,
            function_id=sf.id,
            file_id=photo.id,
            viewer_id=people["viewer"].id,
        )


@pytest.fixture
def app(engine_url: str, seed: Seed, instance_dir: Path) -> Iterator[Flask]:
    application = make_app(engine_url)
    assert Path(application.instance_path) == instance_dir
    yield application
    application.extensions["riskreg.engine"].dispose()


@pytest.fixture
def csrf_app(engine_url: str, seed: Seed, instance_dir: Path) -> Iterator[Flask]:
    """The same register behind an app that checks CSRF tokens, as in production."""
    application = make_app(engine_url, WTF_CSRF_ENABLED=True)
    yield application
    application.extensions["riskreg.engine"].dispose()


@pytest.fixture
def store(app: Flask) -> Store:
    return Store(app)


@pytest.fixture
def client_as(app: Flask) -> Callable[[str], FlaskClient]:
    """A test client logged in with the given role (a new client each call)."""

    def make(role: str) -> FlaskClient:
        client = app.test_client()
        log_in(client, role)
        return client

    return make
