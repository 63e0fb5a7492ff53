"""Run the Alembic migrations from code (used by `riskreg init` and the tests)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from alembic import command
from alembic.config import Config
from sqlalchemy import Engine

MIGRATIONS = Path(__file__).resolve().parent.parent / "migrations"


def alembic_config(url: str) -> Config:
    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS))
    cfg.set_main_option("path_separator", "os")
    cfg.set_main_option("sqlalchemy.url", url.replace("%", "%%"))
    return cfg


def _run(engine: Engine, fn: Callable[[Config, str], None], revision: str) -> None:
    """Run a migration in one transaction.

    SQLite rebuilds a table to alter it, which foreign keys would refuse while other
    tables point at it: they are switched off for the migration (a PRAGMA that only
    works outside a transaction), checked afterwards, and switched on again.
    """
    cfg = alembic_config(engine.url.render_as_string(hide_password=False))
    sqlite = engine.dialect.name == "sqlite"
    with engine.connect() as conn:
        if sqlite:
            conn.exec_driver_sql("PRAGMA foreign_keys=OFF")
            conn.commit()
        try:
            with conn.begin():
                cfg.attributes["connection"] = conn
                fn(cfg, revision)
                if sqlite:
                    bad = conn.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
                    if bad:
                        raise RuntimeError(f"migration left broken references: {bad[:5]}")
        finally:
            if sqlite:
                conn.rollback()
                conn.exec_driver_sql("PRAGMA foreign_keys=ON")
                conn.commit()


def upgrade(engine: Engine, revision: str = "head") -> None:
    _run(engine, command.upgrade, revision)


def downgrade(engine: Engine, revision: str = "base") -> None:
    _run(engine, command.downgrade, revision)


def head_revision() -> str | None:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(alembic_config("sqlite://")).get_current_head()


def current_revision(engine: Engine) -> str | None:
    from alembic.migration import MigrationContext

    with engine.connect() as conn:
        return MigrationContext.configure(conn).get_current_revision()
