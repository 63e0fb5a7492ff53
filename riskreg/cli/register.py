"""init, serve, demo, machines: the register from the terminal."""

from __future__ import annotations

import json
import os
from collections.abc import Iterator
from contextlib import contextmanager

import click
from sqlalchemy import inspect
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm import Session

from riskreg import migrate
from riskreg.db import database_url, make_engine, session_factory
from riskreg.services import audit, register, users
from riskreg.services.errors import NotFound, ValidationError

from . import CliError, cli

db_option = click.option(
    "--db",
    default=None,
    metavar="PATH|URL",
    help="Database file or SQLAlchemy URL (default: $RISKREG_DATABASE_URL, then "
    "instance/riskreg.sqlite).",
)


@contextmanager
def open_session(db: str | None, *, must_exist: bool = True) -> Iterator[Session]:
    """A session for one command; refuses a database that has no register in it."""
    url = database_url(db)
    if must_exist and url.startswith("sqlite:///"):
        path = url[len("sqlite:///") :]
        if not os.path.exists(path):
            raise CliError(f"no database at {path}; create it with 'riskreg init --db {path}'")
    engine = make_engine(url)
    try:
        if must_exist and "machine" not in inspect(engine).get_table_names():
            raise CliError("the database has no register in it; run 'riskreg init' first")
        if must_exist and migrate.current_revision(engine) != migrate.head_revision():
            raise CliError(
                "the database's schema is older than this version of riskreg; "
                "back it up, then run 'riskreg init --no-admin' with the same --db "
                "to upgrade it"
            )
    except OperationalError as exc:
        raise CliError(f"cannot open the database: {exc.orig}") from None
    factory = session_factory(engine)
    audit.install(factory)
    try:
        with factory() as session:
            yield session
    finally:
        engine.dispose()


@cli.command("init")
@db_option
@click.option("--admin-email", default=None, help="E-mail of the first administrator.")
@click.option("--no-admin", is_flag=True, help="Create or upgrade the schema only.")
def init_cmd(db: str | None, admin_email: str | None, no_admin: bool) -> None:
    """Create or upgrade the database schema, and the first administrator."""
    url = database_url(db)
    engine = make_engine(url)
    try:
        migrate.upgrade(engine)
    except OperationalError as exc:
        raise CliError(f"cannot open the database: {exc.orig}") from None
    finally:
        engine.dispose()
    click.echo(f"Schema is up to date in {engine.url.render_as_string(hide_password=True)}.")
    if no_admin:
        return
    if not admin_email:
        raise CliError("give --admin-email for the first administrator, or --no-admin")
    password = os.environ.get("RISKREG_ADMIN_PASSWORD")
    if not password:
        password = click.prompt(
            "Password for the administrator", hide_input=True, confirmation_prompt=True
        )
    with open_session(db) as session:
        try:
            users.create_user(session, admin_email, "Administrator", "admin", password)
        except ValidationError as exc:
            raise CliError("; ".join(f"{k}: {v}" for k, v in exc.errors.items())) from None
    click.echo(f"Administrator {admin_email.strip().lower()} created.")


def _serve(db_url: str, host: str, port: int) -> None:
    from riskreg.web import create_app, serve

    app = create_app({"DATABASE_URL": db_url})
    click.echo(f"Serving riskreg at http://{host}:{port}/  (Ctrl+C stops it)")
    serve(app, host=host, port=port)


@cli.command("serve")
@db_option
@click.option("--host", default="127.0.0.1", show_default=True)
@click.option("--port", default=8080, show_default=True, type=click.IntRange(1, 65535))
def serve_cmd(db: str | None, host: str, port: int) -> None:
    """Serve the register with a production WSGI server."""
    with open_session(db):
        pass
    _serve(database_url(db), host, port)


@cli.command("demo")
@click.option(
    "--db",
    default=None,
    metavar="PATH|URL",
    help="Where to build the demo database (default: instance/demo.sqlite).",
)
@click.option("--host", default="127.0.0.1", show_default=True)
@click.option("--port", default=8080, show_default=True, type=click.IntRange(1, 65535))
@click.option("--no-serve", is_flag=True, help="Build the demo database and stop.")
def demo_cmd(db: str | None, host: str, port: int, no_serve: bool) -> None:
    """A fresh database with the invented demo plant, then serve it."""
    from seed_demo import build

    url = database_url(db or "instance/demo.sqlite")
    if url.startswith("sqlite:///"):
        path = url[len("sqlite:///") :]
        for suffix in ("", "-wal", "-shm"):
            if os.path.exists(path + suffix):
                os.remove(path + suffix)
    engine = make_engine(url)
    migrate.upgrade(engine)
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as session:
        logins = build.build(session)
    engine.dispose()
    click.echo("Demo plant built (an invented plant; every name and number is made up).")
    click.echo("Demo logins (password for all: " + build.DEMO_PASSWORD + "):")
    for email, role in logins:
        click.echo(f"  {email:32s} {role}")
    if not no_serve:
        _serve(url, host, port)


@cli.command("machines")
@db_option
@click.option("--site", default=None, help="Only this site's machines.")
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list.")
def machines_cmd(db: str | None, site: str | None, as_json: bool) -> None:
    """List machines."""
    with open_session(db) as session:
        try:
            s = register.get_site(session, site) if site else None
        except NotFound as exc:
            raise CliError(str(exc)) from None
        rows = register.list_machines(session, s)
        items = [
            {
                "asset_tag": m.asset_tag,
                "name": m.name,
                "kind": m.kind,
                "site": m.site.name,
                "area": m.area.name if m.area else None,
                "active": m.active,
                "do_not_operate": m.do_not_operate,
            }
            for m in rows
        ]
    if as_json:
        click.echo(json.dumps(items, ensure_ascii=False))
        return
    for i in items:
        flag = "  DO NOT OPERATE" if i["do_not_operate"] else ""
        click.echo(
            f"{i['asset_tag']:10s} {i['name']:36s} {i['kind']:18s} {i['site']} / "
            f"{i['area'] or '-'}{flag}"
        )


@cli.command("due")
@db_option
@click.option("--site", default=None, help="The site (needed when there are several).")
@click.option(
    "--within",
    "within",
    default=None,
    type=click.IntRange(0, 3650),
    metavar="DAYS",
    help="Only what is overdue or due within DAYS days.",
)
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list.")
def due_cmd(db: str | None, site: str | None, within: int | None, as_json: bool) -> None:
    """What is due or overdue: verifications, checks, replacements, calibrations."""
    from riskreg.services import due

    with open_session(db) as session:
        try:
            s = register.get_site(session, site)
        except NotFound as exc:
            raise CliError(str(exc)) from None
        items = due.due_items(session, s, within_days=within)
    if as_json:
        click.echo(json.dumps([i.to_json() for i in items], ensure_ascii=False))
        return
    if not items:
        click.echo("Nothing due.")
        return
    for i in items:
        when = (
            f"{i.days_overdue} days OVERDUE"
            if i.days_overdue > 0
            else "due today"
            if i.days_overdue == 0
            else f"due in {-i.days_overdue} days"
        )
        what = " / ".join(x for x in (i.machine, i.safeguard or "") if x) or "site"
        click.echo(
            f"{i.due_date}  {when:18s} {what:40s} {i.kind_label}"
            + (f" — {i.detail}" if i.detail else "")
        )
