"""Hazard entry (one screen, for a phone held in one hand), rating, archive."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, flash, jsonify, redirect, render_template, request, url_for
from flask_login import current_user

from riskreg.model import Hazard
from riskreg.services import register
from riskreg.services.errors import Conflict, NotFound, ValidationError

from . import db
from .auth import require_role
from .forms import RATING_FIELD_MAP, ConfirmForm, HazardForm, RatingFields, ResidualForm
from .helpers import apply_errors, form_data
from .machines import _photo, get_machine

bp = Blueprint("hazards", __name__)

HAZARD_FIELDS = (
    "task_id",
    "hazard_group",
    "hazard_type",
    "danger_zone",
    "event",
    "harm",
    "persons_exposed",
)


def get_hazard(hazard_id: int) -> Hazard:
    h = db().get(Hazard, hazard_id)
    if h is None:
        raise NotFound(f"No hazard number {hazard_id}.")
    return h


def _rating_errors(form: RatingFields, exc: ValidationError) -> ValidationError:
    """Rename the service's rating fields to the form's, per the chosen method."""
    mapping = RATING_FIELD_MAP.get(form.method.data or "iso13849", {})
    return ValidationError({mapping.get(k, k): v for k, v in exc.errors.items()})


def _fill_rating(form: RatingFields, rating: Any) -> None:
    form.method.data = rating.method
    form.stage.data = rating.stage
    for key, name in RATING_FIELD_MAP[rating.method].items():
        getattr(form, name).data = str(rating.parameters.get(key, ""))
    form.override_level.data = rating.override_level or ""
    form.override_source.data = rating.override_source
    form.override_justification.data = rating.override_justification
    form.override_approved_by.data = rating.override_approved_by


def _task_choices(form: HazardForm, assessment: Any) -> None:
    form.task_id.choices = [("", "— no particular task —")] + [
        (str(t.id), f"{t.description} ({t.phase.replace('_', ' ')})")
        for t in assessment.tasks
        if not t.archived
    ]


@bp.route("/machines/<int:machine_id>/hazards/new", methods=["GET", "POST"])
@require_role("assessor")
def new_hazard(machine_id: int) -> Any:
    m = get_machine(machine_id)
    a = register.current_assessment(m)
    form = HazardForm()
    _task_choices(form, a)
    if request.method == "GET":
        form.method.data = m.site.rating_method
        form.task_id.data = request.args.get("task", "")
    if form.validate_on_submit():
        try:
            photo = _photo(form)
            h = register.add_hazard(
                db(),
                a,
                form_data(form, *HAZARD_FIELDS),
                form.rating_data() or None,
                user=current_user.record,
                commit=False,
            )
            if photo is not None:
                h.photo = photo
            db().commit()
            flash("Hazard saved.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor=f"h{h.id}"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, _rating_errors(form, exc))
    status = 400 if request.method == "POST" else 200
    return render_template(
        "hazard_form.html", form=form, machine=m, hazard=None, title=f"New hazard on {m.asset_tag}"
    ), status


@bp.route("/hazards/<int:hazard_id>/edit", methods=["GET", "POST"])
@require_role("assessor")
def edit_hazard(hazard_id: int) -> Any:
    h = get_hazard(hazard_id)
    m = h.assessment.machine
    form = HazardForm(obj=h) if request.method == "GET" else HazardForm()
    _task_choices(form, h.assessment)
    if request.method == "GET":
        form.task_id.data = str(h.task_id or "")
        form.version.data = str(h.version)
        current = register.current_rating(h, "initial")
        if current is not None:
            _fill_rating(form, current)
        else:
            form.method.data = m.site.rating_method
    if form.validate_on_submit():
        try:
            photo = _photo(form)
            if photo is not None:
                h.photo = photo
            register.update_hazard(
                db(),
                h,
                form_data(form, *HAZARD_FIELDS),
                form.version.data,
                form.rating_data() or None,
                user=current_user.record,
            )
            flash("Hazard saved; the earlier values stay in its history.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor=f"h{h.id}"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, _rating_errors(form, exc))
        except Conflict as exc:
            db().rollback()
            form.form_errors.append(str(exc))
            return render_template(
                "hazard_form.html", form=form, machine=m, hazard=h, title=f"Edit hazard #{h.id}"
            ), 409
    status = 400 if request.method == "POST" else 200
    return render_template(
        "hazard_form.html", form=form, machine=m, hazard=h, title=f"Edit hazard #{h.id}"
    ), status


@bp.route("/hazards/<int:hazard_id>/rate", methods=["GET", "POST"])
@require_role("assessor")
def rate(hazard_id: int) -> Any:
    """Add a rating at a stage, typically the residual risk after measures."""
    h = get_hazard(hazard_id)
    m = h.assessment.machine
    form = RatingFields()
    if request.method == "GET":
        form.stage.data = request.args.get("stage", "residual")
        form.method.data = m.site.rating_method
    if form.validate_on_submit():
        data = form.rating_data()
        try:
            if not data:
                raise ValidationError({"method": "Choose the rating parameters."})
            register.rate_hazard(db(), h, data, user=current_user.record)
            flash("Rating saved.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor=f"h{h.id}"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, _rating_errors(form, exc))
    status = 400 if request.method == "POST" else 200
    return render_template(
        "rating_form.html", form=form, machine=m, hazard=h, title=f"Rate hazard #{h.id}"
    ), status


@bp.route("/hazards/<int:hazard_id>/accept", methods=["GET", "POST"])
@require_role("approver")
def accept(hazard_id: int) -> Any:
    h = get_hazard(hazard_id)
    m = h.assessment.machine
    form = ResidualForm(interim=h.interim_measures)
    if form.validate_on_submit():
        try:
            register.accept_residual(db(), h, current_user.record, form.interim.data)
            flash("Residual risk accepted.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor=f"h{h.id}"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"Accept the residual risk of hazard #{h.id}",
        submit="Accept",
    ), status


@bp.route("/hazards/<int:hazard_id>/archive", methods=["GET", "POST"])
@require_role("assessor")
def archive(hazard_id: int) -> Any:
    h = get_hazard(hazard_id)
    m = h.assessment.machine
    form = ConfirmForm()
    restore = request.args.get("restore") == "1"
    if form.validate_on_submit():
        try:
            register.archive_hazard(db(), h, archived=not restore)
        except ValidationError as exc:
            db().rollback()
            flash("; ".join(exc.errors.values()), "error")
            return redirect(url_for("machines.machine", machine_id=m.id))
        flash(
            "Hazard restored."
            if restore
            else "Hazard archived. It stays in the record and can be restored."
        )
        return redirect(url_for("machines.machine", machine_id=m.id))
    verb = "Restore" if restore else "Archive"
    return render_template(
        "confirm.html",
        form=form,
        machine=m,
        title=f"{verb} hazard #{h.id}?",
        message=(
            f"{h.hazard_type or h.hazard_group}: {h.event}. "
            + (
                "It will be listed again."
                if restore
                else "Archived hazards leave the lists but are never erased."
            )
        ),
        submit=verb,
        entries=None,
    )


@bp.route("/api/rating-preview")
def rating_preview() -> Any:
    """The level the engineering core gives for the choices so far (read only)."""
    method = request.args.get("method", "iso13849")
    site_editions = None
    machine_id = request.args.get("machine", type=int)
    if machine_id:
        try:
            site_editions = get_machine(machine_id).site.editions
        except NotFound:
            site_editions = None
    params = {k: request.args.get(k) for k in ("severity", "frequency", "avoidance", "probability")}
    try:
        outcome = register.compute_rating(method, params, site_editions)
    except ValidationError as exc:
        return jsonify({"level": None, "missing": sorted(exc.errors)}), 200
    d = outcome.derivation["derivation"]
    return jsonify(
        {
            "level": outcome.level,
            "method": method,
            "edition": outcome.edition,
            "steps": d["steps"],
            "warnings": d["warnings"],
        }
    )
