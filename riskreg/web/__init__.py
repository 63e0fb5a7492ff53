"""The web application: one blueprint per area, a database session per request."""

from __future__ import annotations

import os
import secrets
from pathlib import Path
from typing import Any

from flask import Flask, g, render_template, request
from flask_login import LoginManager, current_user
from flask_wtf.csrf import CSRFError, CSRFProtect
from sqlalchemy.orm import Session

from riskreg.db import database_url, make_engine, session_factory
from riskreg.model import User
from riskreg.services import audit
from riskreg.services.errors import Forbidden, NotFound

ROOT = Path(__file__).resolve().parent.parent.parent
PUBLIC_ENDPOINTS = {"auth.login", "static", "trust.calendar_feed"}
csrf = CSRFProtect()
login_manager = LoginManager()


def db() -> Session:
    """The request's database session."""
    if "db" not in g:
        from flask import current_app

        g.db = current_app.extensions["riskreg.sessions"]()
        audit.set_actor(g.db, current_user if current_user.is_authenticated else None)
    session: Session = g.db
    return session


def _secret_key(instance: Path) -> str:
    key_file = instance / "secret_key"
    if key_file.exists():
        return key_file.read_text().strip()
    instance.mkdir(parents=True, exist_ok=True)
    key = secrets.token_hex(32)
    fd = os.open(key_file, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    with os.fdopen(fd, "w") as fh:
        fh.write(key)
    return key


def create_app(config: dict[str, Any] | None = None) -> Flask:
    app = Flask(
        "riskreg",
        static_folder=str(ROOT / "static"),
        template_folder=str(Path(__file__).parent / "templates"),
        instance_path=str(Path(os.environ.get("RISKREG_INSTANCE", ROOT / "instance")).absolute()),
    )
    app.config.update(
        DATABASE_URL=None,
        SESSION_COOKIE_HTTPONLY=True,
        SESSION_COOKIE_SAMESITE="Lax",
        REMEMBER_COOKIE_HTTPONLY=True,
        REMEMBER_COOKIE_SAMESITE="Lax",
        MAX_CONTENT_LENGTH=25 * 1024 * 1024,
        WTF_CSRF_TIME_LIMIT=None,
    )
    if config:
        app.config.update(config)
    hops = int(app.config.get("PROXY_HOPS") or os.environ.get("RISKREG_PROXY_HOPS") or 0)
    if hops:
        # Behind a reverse proxy with TLS: trust its X-Forwarded-* headers (that many
        # proxies), so client addresses, the scheme and links are the real ones.
        from werkzeug.middleware.proxy_fix import ProxyFix

        app.wsgi_app = ProxyFix(  # type: ignore[method-assign]
            app.wsgi_app, x_for=hops, x_proto=hops, x_host=hops, x_port=hops
        )
        app.config.update(SESSION_COOKIE_SECURE=True, REMEMBER_COOKIE_SECURE=True)
    instance = Path(app.instance_path)
    if not app.config.get("SECRET_KEY"):
        app.config["SECRET_KEY"] = _secret_key(instance)
    url = database_url(app.config.get("DATABASE_URL"))
    app.config["DATABASE_URL"] = url
    engine = app.config.get("ENGINE") or make_engine(url)
    factory = session_factory(engine)
    audit.install(factory)
    app.extensions["riskreg.engine"] = engine
    app.extensions["riskreg.sessions"] = factory

    csrf.init_app(app)
    login_manager.init_app(app)
    login_manager.login_view = "auth.login"
    login_manager.login_message = "Log in to open the register."
    login_manager.session_protection = "strong"

    @login_manager.user_loader
    def _load(user_id: str) -> Any:
        try:
            user = db().get(User, int(user_id))
        except ValueError:
            return None
        if user is None or not user.active:
            return None
        from .auth import LoginUser

        return LoginUser(user)

    @app.before_request
    def _login_wall() -> Any:
        if request.endpoint in PUBLIC_ENDPOINTS or current_user.is_authenticated:
            return None
        return login_manager.unauthorized()

    @app.teardown_appcontext
    def _close(_exc: BaseException | None) -> None:
        session = g.pop("db", None)
        if session is not None:
            session.close()

    @app.after_request
    def _headers(resp: Any) -> Any:
        resp.headers.setdefault(
            "Content-Security-Policy",
            "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data: blob:; "
            "object-src 'none'; base-uri 'self'; form-action 'self'; frame-ancestors 'none'",
        )
        resp.headers.setdefault("X-Content-Type-Options", "nosniff")
        resp.headers.setdefault("X-Frame-Options", "DENY")
        resp.headers.setdefault("Referrer-Policy", "same-origin")
        if request.endpoint != "static":
            resp.headers.setdefault("Cache-Control", "no-store")
        return resp

    @app.errorhandler(CSRFError)
    def _csrf(exc: CSRFError) -> Any:
        return render_template(
            "error.html",
            title="Form expired",
            message="The form was missing its security token or it had "
            "expired. Go back, reload the page and send it again.",
        ), 400

    @app.errorhandler(NotFound)
    @app.errorhandler(404)
    def _not_found(exc: Any) -> Any:
        msg = (
            str(exc)
            if isinstance(exc, NotFound)
            else (
                "There is no page at this address. Check the link, or start from the site overview."
            )
        )
        return render_template("error.html", title="Not found", message=msg), 404

    @app.errorhandler(Forbidden)
    @app.errorhandler(403)
    def _forbidden(exc: Any) -> Any:
        msg = (
            str(exc)
            if isinstance(exc, Forbidden)
            else ("Your role does not allow this. Ask an administrator if you need it.")
        )
        return render_template("error.html", title="Not allowed", message=msg), 403

    @app.errorhandler(413)
    def _too_large(_exc: Any) -> Any:
        limit = app.config["MAX_CONTENT_LENGTH"] // 1048576
        return render_template(
            "error.html",
            title="File too large",
            message=f"The upload is larger than {limit} MB. Send a smaller "
            "file (a photo from a phone is usually 2–5 MB).",
        ), 413

    from . import admin, auth, hazards, machines, records, safeguards, sites, trust

    app.register_blueprint(auth.bp)
    app.register_blueprint(admin.bp)
    app.register_blueprint(sites.bp)
    app.register_blueprint(machines.bp)
    app.register_blueprint(hazards.bp)
    app.register_blueprint(safeguards.bp)
    app.register_blueprint(records.bp)
    app.register_blueprint(trust.bp)
    from . import reports as report_downloads  # PDF reports

    app.register_blueprint(report_downloads.bp)

    from .helpers import register_template_helpers

    register_template_helpers(app)
    return app


def serve(app: Flask, *, host: str, port: int, threads: int = 8, **options: Any) -> None:
    """Serve the app with waitress (``riskreg serve`` and ``riskreg demo``).

    What exists by now (the modules, the app, its engine) lives as long as the server,
    so it is moved out of the garbage collector's way first (``gc.freeze``): a full
    collection then walks only what the requests make. Without it, full collections
    over the whole program stalled every request thread at once; measured with three
    concurrent clients at 500 machines, the overview's p95 went from about 230 ms to
    about 100 ms with it (bench/RESULTS.md).
    """
    import gc

    from waitress import serve as waitress_serve

    gc.collect()
    gc.freeze()
    waitress_serve(app, host=host, port=port, threads=threads, ident="riskreg", **options)
