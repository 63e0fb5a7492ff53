"""Shared fixtures: a migrated database per test, on SQLite by default or on the
PostgreSQL server named by RISKREG_TEST_POSTGRES_URL."""

from __future__ import annotations

import os
import shutil
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import Engine, text
from sqlalchemy.orm import Session

from riskreg import migrate
from riskreg.db import make_engine, session_factory
from riskreg.services import audit


def _postgres_url() -> str | None:
    return os.environ.get("RISKREG_TEST_POSTGRES_URL") or None


@pytest.fixture
def db_url(tmp_path: Path) -> Iterator[str]:
    """A fresh, empty database URL (a new schema-less database on PostgreSQL)."""
    pg = _postgres_url()
    if pg is None:
        yield f"sqlite:///{tmp_path / 'test.sqlite'}"
        return
    name = "t_" + uuid.uuid4().hex[:12]
    admin = make_engine(pg, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    base = pg.rsplit("/", 1)[0]
    try:
        yield f"{base}/{name}"
    finally:
        with admin.connect() as conn:
            conn.execute(
                text("SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = :n"),
                {"n": name},
            )
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}"'))
        admin.dispose()


# One template per test session, so that sessions run side by side never share it.
TEMPLATE = "riskreg_tpl_" + uuid.uuid4().hex[:10]


@pytest.fixture(scope="session")
def _pg_template(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str | None]:
    """Migrate once into a template; each test copies it (much faster than migrating).

    On SQLite the template is a file; on PostgreSQL a template database.
    """
    pg = _postgres_url()
    if pg is None:
        path = tmp_path_factory.mktemp("template") / "head.sqlite"
        eng = make_engine(f"sqlite:///{path}")
        migrate.upgrade(eng)
        with eng.connect() as conn:
            conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
        eng.dispose()
        yield str(path)
        return
    admin = make_engine(pg, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'DROP DATABASE IF EXISTS "{TEMPLATE}"'))
        conn.execute(text(f'CREATE DATABASE "{TEMPLATE}"'))
    base = pg.rsplit("/", 1)[0]
    eng = make_engine(f"{base}/{TEMPLATE}")
    migrate.upgrade(eng)
    eng.dispose()
    try:
        yield TEMPLATE
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{TEMPLATE}"'))
        admin.dispose()


@pytest.fixture
def engine(tmp_path: Path, _pg_template: str | None) -> Iterator[Engine]:
    """A database migrated to head (a fresh copy of the template on PostgreSQL)."""
    pg = _postgres_url()
    if pg is None:
        assert _pg_template is not None
        target = tmp_path / "test.sqlite"
        shutil.copyfile(_pg_template, target)
        eng = make_engine(f"sqlite:///{target}")
        yield eng
        eng.dispose()
        return
    name = "t_" + uuid.uuid4().hex[:12]
    admin = make_engine(pg, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}" TEMPLATE "{_pg_template}"'))
    base = pg.rsplit("/", 1)[0]
    eng = make_engine(f"{base}/{name}")
    try:
        yield eng
    finally:
        eng.dispose()
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


@pytest.fixture
def session(engine: Engine) -> Iterator[Session]:
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as s:
        yield s


@pytest.fixture
def engine_url(engine: Engine) -> str:
    """The URL of the migrated database, for code that opens its own engine."""
    return engine.url.render_as_string(hide_password=False)
