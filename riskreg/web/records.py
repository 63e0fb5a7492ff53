"""Records that hold up: review and approval, revision history with differences,
re-evaluation, management of change, and the audit trail per machine and per site."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, flash, redirect, render_template, request, url_for
from flask_login import current_user
from flask_wtf import FlaskForm
from sqlalchemy import select
from wtforms import StringField, TextAreaField
from wtforms.validators import Length

from riskreg.model import Assessment, AuditEntry
from riskreg.services import register, revisions, safeguards
from riskreg.services.errors import Forbidden, NotFound, ValidationError

from . import db
from .auth import require_role
from .forms import MultiCheckbox
from .helpers import apply_errors
from .machines import get_machine, get_site

bp = Blueprint("records", __name__)
AUDIT_PAGE = 100


class ReasonForm(FlaskForm):  # type: ignore[misc]
    reason = TextAreaField("Reason", validators=[Length(max=2000)])


class ModificationForm(FlaskForm):  # type: ignore[misc]
    made_on = StringField("Date of the modification", render_kw={"type": "date"})
    kind = StringField("Kind")  # rendered as a select in the template
    description = TextAreaField("What was changed", validators=[Length(max=5000)])
    safeguard_ids = MultiCheckbox("Safeguards to validate again", coerce=str, validate_choice=False)


def _assessment(assessment_id: int) -> Assessment:
    a = db().get(Assessment, assessment_id)
    if a is None:
        raise NotFound(f"No assessment number {assessment_id}.")
    return a


def _back(a: Assessment) -> Any:
    return redirect(url_for("machines.machine", machine_id=a.machine_id))


@bp.route("/assessments/<int:assessment_id>/submit", methods=["POST"])
@require_role("assessor")
def submit(assessment_id: int) -> Any:
    a = _assessment(assessment_id)
    if ReasonForm().validate_on_submit():
        try:
            revisions.submit(db(), a, current_user.record)
            flash(f"Revision {a.revision} sent for review.")
        except ValidationError as exc:
            db().rollback()
            flash(" ".join(exc.errors.values()), "error")
    return _back(a)


@bp.route("/assessments/<int:assessment_id>/return", methods=["POST"])
@require_role("approver")
def return_to_draft(assessment_id: int) -> Any:
    a = _assessment(assessment_id)
    form = ReasonForm()
    if form.validate_on_submit():
        try:
            revisions.return_to_draft(db(), a, current_user.record, form.reason.data)
            flash(f"Revision {a.revision} is a draft again.")
        except ValidationError as exc:
            db().rollback()
            flash(" ".join(exc.errors.values()), "error")
    return _back(a)


@bp.route("/assessments/<int:assessment_id>/approve", methods=["POST"])
@require_role("approver")
def approve(assessment_id: int) -> Any:
    a = _assessment(assessment_id)
    if ReasonForm().validate_on_submit():
        try:
            revisions.approve(db(), a, current_user.record)
            flash(f"Revision {a.revision} approved; its results are frozen as they are now.")
        except (ValidationError, Forbidden) as exc:
            db().rollback()
            msg = " ".join(exc.errors.values()) if isinstance(exc, ValidationError) else str(exc)
            flash(msg, "error")
    return _back(a)


@bp.route("/machines/<int:machine_id>/revise", methods=["POST"])
@require_role("assessor")
def revise(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = ReasonForm()
    if form.validate_on_submit():
        try:
            a = revisions.new_revision(db(), m, current_user.record, form.reason.data or "")
            flash(
                f"Revision {a.revision} started as a draft copy; the approved revision "
                "stays as it was."
            )
        except ValidationError as exc:
            db().rollback()
            flash(" ".join(exc.errors.values()), "error")
    return redirect(url_for("machines.machine", machine_id=m.id))


@bp.route("/machines/<int:machine_id>/revisions")
def history(machine_id: int) -> Any:
    m = get_machine(machine_id)
    rows = []
    for a in reversed(m.assessments):
        rows.append((a, revisions.diff(revisions.previous_of(a), a)))
    return render_template(
        "revisions.html", machine=m, rows=rows, title=f"Revisions of {m.asset_tag}"
    )


@bp.route("/assessments/<int:assessment_id>")
def revision(assessment_id: int) -> Any:
    """A revision as it was: superseded and approved ones stay readable."""
    a = _assessment(assessment_id)
    return render_template(
        "revision.html",
        a=a,
        machine=a.machine,
        current_rating=register.current_rating,
        title=f"{a.machine.asset_tag} revision {a.revision}",
    )


@bp.route("/assessments/<int:assessment_id>/re-evaluate")
def re_evaluate(assessment_id: int) -> Any:
    a = _assessment(assessment_id)
    return render_template(
        "reevaluate.html",
        a=a,
        machine=a.machine,
        rows=revisions.re_evaluate(a),
        title=f"Re-evaluate revision {a.revision} of {a.machine.asset_tag}",
    )


@bp.route("/machines/<int:machine_id>/modifications/new", methods=["GET", "POST"])
@require_role("assessor")
def modification(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = ModificationForm()
    form.safeguard_ids.choices = [(str(s.id), s.label) for s in safeguards.safeguards_of(m)]
    if form.validate_on_submit():
        try:
            revisions.record_modification(db(), m, form.data, current_user.record)
            flash(
                "Modification recorded: the assessment is open again and the chosen "
                "safeguards are due for validation."
            )
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "modification.html",
        form=form,
        machine=m,
        kinds=revisions.MODIFICATION_KINDS,
        title=f"Record a modification of {m.asset_tag}",
    ), (400 if request.method == "POST" else 200)


def _entries(**where: Any) -> list[AuditEntry]:
    q = select(AuditEntry)
    for key, value in where.items():
        q = q.where(getattr(AuditEntry, key) == value)
    page = max(request.args.get("page", 1, type=int) or 1, 1)
    return list(
        db().scalars(
            q.order_by(AuditEntry.id.desc()).offset((page - 1) * AUDIT_PAGE).limit(AUDIT_PAGE)
        )
    )


@bp.route("/machines/<int:machine_id>/audit")
def machine_audit(machine_id: int) -> Any:
    m = get_machine(machine_id)
    return render_template(
        "audit.html",
        entries=_entries(machine_id=m.id),
        machine=m,
        site=m.site,
        page=request.args.get("page", 1, type=int) or 1,
        page_size=AUDIT_PAGE,
        title=f"Audit trail of {m.asset_tag}",
    )


@bp.route("/sites/<int:site_id>/audit")
def site_audit(site_id: int) -> Any:
    s = get_site(site_id)
    return render_template(
        "audit.html",
        entries=_entries(site_id=s.id),
        machine=None,
        site=s,
        page=request.args.get("page", 1, type=int) or 1,
        page_size=AUDIT_PAGE,
        title=f"Audit trail of {s.name}",
    )
