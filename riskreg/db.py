"""Engines and sessions. One way to talk to the database.

``--db`` takes a file path or a SQLAlchemy URL; without it
``RISKREG_DATABASE_URL``, then ``instance/riskreg.sqlite``.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.orm import Session, sessionmaker

DEFAULT_SQLITE = Path("instance") / "riskreg.sqlite"


def database_url(db: str | None = None) -> str:
    """A SQLAlchemy URL from a path, a URL, the environment or the default."""
    value = db or os.environ.get("RISKREG_DATABASE_URL") or str(DEFAULT_SQLITE)
    if "://" in value:
        if value.startswith("postgres://"):
            value = "postgresql://" + value[len("postgres://") :]
        if value.startswith("postgresql://"):
            value = "postgresql+psycopg://" + value[len("postgresql://") :]
        return value
    return f"sqlite:///{Path(value).expanduser().absolute()}"


def make_engine(url: str, **kwargs: Any) -> Engine:
    if url.startswith("sqlite"):
        path = url.split("sqlite:///", 1)[-1]
        if path and path != ":memory:":
            Path(path).parent.mkdir(parents=True, exist_ok=True)
        engine = create_engine(url, connect_args={"timeout": 30}, **kwargs)

        @event.listens_for(engine, "connect")
        def _sqlite_pragmas(dbapi_conn: Any, _record: Any) -> None:
            cur = dbapi_conn.cursor()
            cur.execute("PRAGMA foreign_keys=ON")
            if path and path != ":memory:":
                cur.execute("PRAGMA journal_mode=WAL")
            cur.execute("PRAGMA busy_timeout=30000")
            cur.close()

        return engine
    if url.startswith("postgresql"):
        # The register's queries are short; PostgreSQL's JIT compiler would spend longer
        # compiling a large one (the due items' union) than running it, on every run.
        connect_args = dict(kwargs.pop("connect_args", {}))
        connect_args.setdefault("options", "-c jit=off")
        kwargs["connect_args"] = connect_args
    return create_engine(url, pool_pre_ping=True, **kwargs)


def session_factory(engine: Engine) -> sessionmaker[Session]:
    return sessionmaker(bind=engine, expire_on_commit=False)
