"""The schema is made only by the migrations, and they match the mappings."""

from __future__ import annotations

from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from sqlalchemy import inspect

from riskreg import migrate
from riskreg.db import make_engine
from riskreg.model import Base


def test_upgrade_gives_exactly_the_models_schema(db_url: str) -> None:
    engine = make_engine(db_url)
    migrate.upgrade(engine)
    with engine.connect() as conn:
        ctx = MigrationContext.configure(conn, opts={"compare_type": True})
        diff = compare_metadata(ctx, Base.metadata)
    engine.dispose()
    assert diff == []


def test_downgrade_to_base_removes_every_table(db_url: str) -> None:
    engine = make_engine(db_url)
    migrate.upgrade(engine)
    assert set(Base.metadata.tables) <= set(inspect(engine).get_table_names())
    migrate.downgrade(engine, "base")
    left = set(inspect(engine).get_table_names()) - {"alembic_version"}
    engine.dispose()
    assert left == set()
