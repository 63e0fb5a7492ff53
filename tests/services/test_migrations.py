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


def test_upgrade_keeps_the_data_of_an_older_schema(db_url: str) -> None:
    """A register made at revision 0003 upgrades to head with its rows and references."""
    from sqlalchemy import text

    engine = make_engine(db_url)
    migrate.upgrade(engine, "0003")
    with engine.begin() as conn:
        conn.execute(
            text(
                "INSERT INTO site (id, name, units, distance_method, rating_method, editions, "
                "stop_time_allowance_percent, created_at) VALUES (1, 'Old Works', 'mm', 'ISO', "
                "'iso13849', '{}', 0, '2025-01-01 00:00:00')"
            )
        )
        conn.execute(
            text(
                "INSERT INTO machine (id, site_id, asset_tag, name, kind, maker, model, serial, "
                "location, notes, active, do_not_operate, do_not_operate_reason, version, "
                "created_at) VALUES (1, 1, 'P-1', 'Press', 'mechanical_press', '', '', '', '', "
                "'', true, false, '', 1, '2025-01-01 00:00:00')"
            )
        )
    migrate.upgrade(engine)
    with engine.connect() as conn:
        row = conn.execute(
            text(
                "SELECT s.allow_self_approval, m.asset_tag FROM machine m "
                "JOIN site s ON s.id = m.site_id"
            )
        ).one()
    engine.dispose()
    assert (bool(row[0]), row[1]) == (False, "P-1")
