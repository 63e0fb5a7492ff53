"""Log in and out; the login and role checks every other page relies on."""

from __future__ import annotations

import functools
import time
from collections.abc import Callable
from typing import Any, TypeVar
from urllib.parse import urlsplit

from flask import Blueprint, abort, flash, redirect, render_template, request, session, url_for
from flask_login import UserMixin, current_user, login_required, login_user, logout_user
from flask_wtf import FlaskForm
from wtforms import EmailField, PasswordField
from wtforms.validators import DataRequired, Length

from riskreg.model import User
from riskreg.services import users

from . import db

bp = Blueprint("auth", __name__)
F = TypeVar("F", bound=Callable[..., Any])

# Login throttling: failures per (address, e-mail) within a window.
WINDOW_S = 15 * 60
MAX_FAILURES = 5
_failures: dict[tuple[str, str], list[float]] = {}


class LoginUser(UserMixin):  # type: ignore[misc]
    """What the login session knows of a person."""

    def __init__(self, user: User) -> None:
        self.id = user.id
        self.email = user.email
        self.name = user.name
        self.role = user.role
        self.record = user

    def can(self, role: str) -> bool:
        return users.has_role(self.record, role)


class LoginForm(FlaskForm):  # type: ignore[misc]
    email = EmailField(
        "E-mail", validators=[DataRequired("Enter your e-mail address."), Length(max=254)]
    )
    password = PasswordField(
        "Password", validators=[DataRequired("Enter your password."), Length(max=200)]
    )


def require_role(role: str) -> Callable[[F], F]:
    """A view that needs at least ``role``; others get 403 with a clear page."""

    def deco(view: F) -> F:
        @functools.wraps(view)
        @login_required  # type: ignore[untyped-decorator]
        def wrapped(*args: Any, **kwargs: Any) -> Any:
            if not current_user.can(role):
                abort(403)
            return view(*args, **kwargs)

        return wrapped  # type: ignore[return-value]

    return deco


def _throttled(key: tuple[str, str]) -> bool:
    now = time.monotonic()
    recent = [t for t in _failures.get(key, []) if now - t < WINDOW_S]
    _failures[key] = recent
    return len(recent) >= MAX_FAILURES


def _safe_next(target: str | None) -> str:
    if target and "\\" not in target:
        parts = urlsplit(target)
        if (
            not parts.scheme
            and not parts.netloc
            and target.startswith("/")
            and not target.startswith("//")
        ):
            return target
    return url_for("sites.overview")


@bp.route("/login", methods=["GET", "POST"])
def login() -> Any:
    if current_user.is_authenticated:
        return redirect(url_for("sites.overview"))
    form = LoginForm()
    status = 200
    if form.validate_on_submit():
        key = (request.remote_addr or "", form.email.data.strip().lower())
        if _throttled(key):
            form.password.errors.append(
                "Too many failed attempts. Wait 15 minutes, or ask an administrator to help."
            )
            status = 429
        else:
            user = users.authenticate(db(), form.email.data, form.password.data)
            if user is None:
                _failures.setdefault(key, []).append(time.monotonic())
                form.password.errors.append("E-mail or password is not right. Try again.")
                status = 401
            else:
                _failures.pop(key, None)
                next_url = _safe_next(request.args.get("next"))
                session.clear()  # a new session at login
                login_user(LoginUser(user))
                return redirect(next_url)
    elif request.method == "POST":
        status = 400
    return render_template("login.html", form=form, title="Log in"), status


@bp.route("/logout", methods=["POST"])
@login_required  # type: ignore[untyped-decorator]
def logout() -> Any:
    logout_user()
    session.clear()
    flash("You are logged out.")
    return redirect(url_for("auth.login"))
