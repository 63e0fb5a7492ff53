"""Administration: people and their roles, sites and their settings, areas."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, flash, redirect, render_template, request, url_for
from flask_login import current_user
from flask_wtf import FlaskForm
from sqlalchemy import select
from wtforms import BooleanField, EmailField, PasswordField, SelectField, StringField
from wtforms.validators import Length

from riskreg.model import Site, User
from riskreg.services import admin as admin_service
from riskreg.services import register, users
from riskreg.services.errors import NotFound, ValidationError
from riskreg.vocab import RATING_METHODS, ROLES

from . import db
from .auth import require_role
from .helpers import apply_errors

bp = Blueprint("admin", __name__)


class PersonForm(FlaskForm):  # type: ignore[misc]
    email = EmailField("E-mail", validators=[Length(max=254)])
    name = StringField("Name", validators=[Length(max=120)])
    role = SelectField("Role", choices=list(ROLES.items()), validate_choice=False)
    password = PasswordField(
        "First password (they can be given a new one later)", validators=[Length(max=200)]
    )


class RoleForm(FlaskForm):  # type: ignore[misc]
    role = SelectField("Role", choices=list(ROLES.items()), validate_choice=False)
    active = BooleanField("Active (may log in)")


class SiteForm(FlaskForm):  # type: ignore[misc]
    name = StringField("Site name", validators=[Length(max=120)])
    units = SelectField(
        "Units shown", choices=[("mm", "millimetres"), ("in", "inches")], validate_choice=False
    )
    distance_method = SelectField(
        "Safety distances by",
        choices=[("ISO", "ISO 13855"), ("US", "29 CFR 1910.217 / ANSI B11.19")],
        validate_choice=False,
    )
    rating_method = SelectField(
        "Usual rating method", choices=list(RATING_METHODS.items()), validate_choice=False
    )
    stop_time_allowance_percent = StringField(
        "Allowance on measured stopping times (%)", validators=[Length(max=10)]
    )
    base_url = StringField(
        "Register address for labels and reports (e.g. https://riskreg.example.org)",
        validators=[Length(max=300)],
    )


class AreaForm(FlaskForm):  # type: ignore[misc]
    name = StringField("New area (line or cell)", validators=[Length(max=120)])


@bp.route("/admin/people", methods=["GET", "POST"])
@require_role("admin")
def people() -> Any:
    form = PersonForm()
    status = 200
    if form.validate_on_submit():
        try:
            u = users.create_user(
                db(),
                form.email.data or "",
                form.name.data or "",
                form.role.data or "",
                form.password.data or "",
            )
            flash(f"{u.email} can now log in as {u.role}.")
            return redirect(url_for("admin.people"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    if request.method == "POST":
        status = 400
    rows = list(db().scalars(select(User).order_by(User.email)))
    sites = list(db().scalars(select(Site).order_by(Site.name)))
    return render_template(
        "admin_people.html",
        form=form,
        people=rows,
        roles=ROLES,
        sites=sites,
        title="People and sites",
    ), status


@bp.route("/admin/people/<int:user_id>", methods=["POST"])
@require_role("admin")
def set_role(user_id: int) -> Any:
    u = db().get(User, user_id)
    if u is None:
        raise NotFound(f"No person number {user_id}.")
    form = RoleForm()
    if form.validate_on_submit():
        try:
            admin_service.set_role(
                db(), u, form.role.data or "", bool(form.active.data), acting=current_user.record
            )
            flash(f"{u.email}: {u.role}{'' if u.active else ', cannot log in'}.")
        except ValidationError as exc:
            db().rollback()
            flash(" ".join(exc.errors.values()), "error")
    return redirect(url_for("admin.people"))


def _site_data(form: SiteForm) -> dict[str, Any]:
    raw = (form.stop_time_allowance_percent.data or "0").strip()
    try:
        allowance = float(raw)
    except ValueError:
        allowance = -1.0
    return {
        "units": form.units.data,
        "distance_method": form.distance_method.data,
        "rating_method": form.rating_method.data,
        "stop_time_allowance_percent": allowance,
        "base_url": (form.base_url.data or "").strip() or None,
    }


@bp.route("/admin/sites/new", methods=["GET", "POST"])
@require_role("admin")
def new_site() -> Any:
    form = SiteForm()
    if form.validate_on_submit():
        try:
            s = register.create_site(db(), form.name.data or "", **_site_data(form))
            flash(f"{s.name} created: add its areas, then its machines.")
            return redirect(url_for("admin.site_settings", site_id=s.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html", form=form, machine=None, title="New site", submit="Create the site"
    ), (400 if request.method == "POST" else 200)


@bp.route("/admin/sites/<int:site_id>", methods=["GET", "POST"])
@require_role("admin")
def site_settings(site_id: int) -> Any:
    s = db().get(Site, site_id)
    if s is None:
        raise NotFound(f"No site number {site_id}.")
    form = SiteForm(obj=s) if request.method == "GET" else SiteForm()
    area = AreaForm(prefix="area")
    status = 200
    if request.method == "POST" and request.form.get("which") == "area":
        if area.validate_on_submit():
            try:
                register.create_area(db(), s, area.name.data or "")
                flash("Area added.")
                return redirect(url_for("admin.site_settings", site_id=s.id))
            except ValidationError as exc:
                db().rollback()
                apply_errors(area, exc)
        status = 400
    elif form.validate_on_submit():
        try:
            admin_service.update_site(db(), s, dict(_site_data(form), name=form.name.data))
            flash("Site settings saved.")
            return redirect(url_for("admin.site_settings", site_id=s.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
        status = 400
    elif request.method == "POST":
        status = 400
    return render_template(
        "admin_site.html", form=form, area=area, site=s, title=f"Settings of {s.name}"
    ), status
