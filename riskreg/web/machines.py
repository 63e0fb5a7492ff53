"""Machine pages: details, current assessment, tasks, measures, functions."""

from __future__ import annotations

from typing import Any

from flask import (
    Blueprint,
    abort,
    current_app,
    flash,
    redirect,
    render_template,
    request,
    send_file,
    url_for,
)
from flask_login import current_user

from riskreg.model import EvidenceFile, Machine, Site
from riskreg.services import evidence, library, register, safeguards
from riskreg.services.errors import Conflict, NotFound, ValidationError

from . import db
from .auth import require_role
from .forms import (
    AssessmentForm,
    CloneForm,
    ConfirmForm,
    DoNotOperateForm,
    MachineForm,
    MeasureForm,
    SafetyFunctionForm,
    TaskForm,
)
from .helpers import apply_errors, form_data

bp = Blueprint("machines", __name__)

MACHINE_FIELDS = (
    "asset_tag",
    "name",
    "kind",
    "area_id",
    "maker",
    "model",
    "serial",
    "year",
    "location",
    "notes",
)


def get_machine(machine_id: int) -> Machine:
    return register.load_machine(db(), machine_id)


def get_site(site_id: int) -> Site:
    s = db().get(Site, site_id)
    if s is None:
        raise NotFound(f"No site number {site_id}.")
    return s


def _photo(form: Any, field: str = "photo") -> EvidenceFile | None:
    storage = getattr(form, field).data
    if not storage or not getattr(storage, "filename", ""):
        return None
    data = storage.read()
    return evidence.store(
        db(),
        current_app.instance_path,
        data,
        storage.filename,
        allowed=evidence.IMAGE_TYPES,
        user_id=current_user.id,
        field=field,
    )


def _area_choices(form: MachineForm, site: Site) -> None:
    form.area_id.choices = [("", "— none —")] + [(str(a.id), a.name) for a in site.areas]


@bp.route("/machines/<int:machine_id>")
def machine(machine_id: int) -> Any:
    m = register.load_machine_page(db(), machine_id)  # the revisions' records, eagerly
    a = register.current_assessment(m)
    hazards = [h for h in a.hazards if not h.archived]
    by_task: dict[int | None, list[Any]] = {}
    for h in hazards:
        by_task.setdefault(h.task_id, []).append(h)
    functions = [(f, register.required_level(f)) for f in a.safety_functions if not f.archived]
    measurements = safeguards.measurements_of(m)
    latest = measurements[0] if measurements else None
    profile = safeguards.press_profile(m)
    records = safeguards.safeguards_of(m)
    guards = [
        safeguards.evaluate(s, latest.t_used_s if latest else None, m.site.distance_method, profile)
        for s in records
    ]
    actions = safeguards.actions_of(db(), m)
    from .trust import machine_context

    return render_template(
        "machine.html",
        machine=m,
        assessment=a,
        by_task=by_task,
        tasks=[t for t in a.tasks if not t.archived],
        hazards=hazards,
        measures=[x for x in a.measures if not x.archived],
        functions=functions,
        archived=[h for h in a.hazards if h.archived],
        current_rating=register.current_rating,
        guards=guards,
        latest=latest,
        measurements=measurements[:5],
        actions=actions,
        profile=profile,
        title=f"{m.asset_tag} {m.name}",
        **machine_context(m, records),
    )


@bp.route("/sites/<int:site_id>/machines/new", methods=["GET", "POST"])
@require_role("assessor")
def new_machine(site_id: int) -> Any:
    site = get_site(site_id)
    form = MachineForm()
    _area_choices(form, site)
    if form.validate_on_submit():
        try:
            photo = _photo(form)
            m = register.create_machine(
                db(), site, form_data(form, *MACHINE_FIELDS), user=current_user.record, commit=False
            )
            if photo is not None:
                m.photo = photo
            db().commit()
            flash(f"{m.asset_tag} added.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "machine_form.html", form=form, site=site, machine=None, title="New machine"
    ), status


@bp.route("/machines/<int:machine_id>/edit", methods=["GET", "POST"])
@require_role("assessor")
def edit_machine(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = MachineForm(obj=m) if request.method == "GET" else MachineForm()
    _area_choices(form, m.site)
    if request.method == "GET":
        form.area_id.data = str(m.area_id or "")
        form.version.data = str(m.version)
    if form.validate_on_submit():
        try:
            photo = _photo(form)
            if photo is not None:
                m.photo = photo
            register.update_machine(db(), m, form_data(form, *MACHINE_FIELDS), form.version.data)
            flash("Machine saved.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
        except Conflict as exc:
            db().rollback()
            form.form_errors.append(str(exc))
            return render_template(
                "machine_form.html", form=form, site=m.site, machine=m, title=f"Edit {m.asset_tag}"
            ), 409
    status = 400 if request.method == "POST" else 200
    return render_template(
        "machine_form.html", form=form, site=m.site, machine=m, title=f"Edit {m.asset_tag}"
    ), status


@bp.route("/machines/<int:machine_id>/clone", methods=["GET", "POST"])
@require_role("assessor")
def clone(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = CloneForm()
    if form.validate_on_submit():
        try:
            new = register.clone_machine(
                db(), m, form_data(form, "asset_tag", "name", "serial"), user=current_user.record
            )
            flash(f"{new.asset_tag} created from {m.asset_tag} with a copy of its assessment.")
            return redirect(url_for("machines.machine", machine_id=new.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"Copy {m.asset_tag} for an identical machine",
        submit="Create the copy",
    ), status


@bp.route("/machines/<int:machine_id>/do-not-operate", methods=["GET", "POST"])
@require_role("assessor")
def do_not_operate(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = DoNotOperateForm(flag=m.do_not_operate, reason=m.do_not_operate_reason)
    if form.validate_on_submit():
        try:
            register.set_do_not_operate(db(), m, form.flag.data, form.reason.data)
            flash("Tag saved." if m.do_not_operate else "Tag removed.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"“Do not operate” tag for {m.asset_tag}",
        submit="Save",
    ), status


@bp.route("/machines/<int:machine_id>/assessment", methods=["GET", "POST"])
@require_role("assessor")
def edit_assessment(machine_id: int) -> Any:
    m = get_machine(machine_id)
    a = register.current_assessment(m)
    form = AssessmentForm(obj=a) if request.method == "GET" else AssessmentForm()
    if form.validate_on_submit():
        try:
            register.update_assessment(db(), a, form.data)
            flash("Limits of the machine saved.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"Limits of {m.asset_tag} (ISO 12100)",
        submit="Save",
    ), status


@bp.route("/machines/<int:machine_id>/tasks/new", methods=["GET", "POST"])
@require_role("assessor")
def new_task(machine_id: int) -> Any:
    m = get_machine(machine_id)
    a = register.current_assessment(m)
    form = TaskForm()
    if form.validate_on_submit():
        try:
            register.add_task(
                db(), a, form_data(form, "phase", "description", "performed_by", "frequency")
            )
            flash("Task added.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"New task on {m.asset_tag}",
        submit="Add task",
    ), status


@bp.route("/machines/<int:machine_id>/library", methods=["GET", "POST"])
@require_role("assessor")
def from_library(machine_id: int) -> Any:
    m = get_machine(machine_id)
    a = register.current_assessment(m)
    form = ConfirmForm()
    if form.validate_on_submit():
        try:
            n = library.start_from_library(db(), a)
        except ValidationError as exc:
            db().rollback()
            flash("; ".join(exc.errors.values()), "error")
            return redirect(url_for("machines.machine", machine_id=m.id))
        flash(f"{n} usual hazards added, unrated: confirm and rate each on the machine.")
        return redirect(url_for("machines.machine", machine_id=m.id))
    return render_template(
        "confirm.html",
        form=form,
        machine=m,
        title="Start from the usual hazards",
        message=f"Add the usual tasks and hazards of a "
        f"{m.kind.replace('_', ' ')} to this assessment? Each one still "
        "has to be confirmed and rated on the machine.",
        entries=library.entries(m.kind),
        submit="Add them",
    )


@bp.route("/machines/<int:machine_id>/measures/new", methods=["GET", "POST"])
@require_role("assessor")
def new_measure(machine_id: int) -> Any:
    m = get_machine(machine_id)
    a = register.current_assessment(m)
    form = MeasureForm()
    form.hazard_ids.choices = [
        (str(h.id), f"#{h.id} {h.hazard_type or h.hazard_group}: {h.event[:60]}")
        for h in a.hazards
        if not h.archived
    ]
    form.safety_function_id.choices = [("", "— none —")] + [
        (str(f.id), f.name) for f in a.safety_functions if not f.archived
    ]
    if request.method == "GET" and request.args.get("hazard"):
        form.hazard_ids.data = [request.args["hazard"]]
    if form.validate_on_submit():
        try:
            register.add_measure(
                db(),
                a,
                form_data(
                    form, "kind", "description", "status", "hazard_ids", "safety_function_id"
                ),
            )
            flash("Measure added.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"New protective measure on {m.asset_tag}",
        submit="Add measure",
    ), status


@bp.route("/measures/<int:measure_id>/status", methods=["POST"])
@require_role("assessor")
def measure_status(measure_id: int) -> Any:
    from riskreg.model import ProtectiveMeasure

    form = ConfirmForm()
    measure = db().get(ProtectiveMeasure, measure_id)
    if measure is None:
        raise NotFound(f"No measure number {measure_id}.")
    if not form.validate_on_submit():
        abort(400)
    try:
        register.set_measure_status(db(), measure, request.form.get("status", ""))
        flash("Status saved.")
    except ValidationError as exc:
        db().rollback()
        flash("; ".join(exc.errors.values()), "error")
    return redirect(url_for("machines.machine", machine_id=measure.assessment.machine_id))


@bp.route("/machines/<int:machine_id>/functions/new", methods=["GET", "POST"])
@require_role("assessor")
def new_function(machine_id: int) -> Any:
    m = get_machine(machine_id)
    a = register.current_assessment(m)
    form = SafetyFunctionForm()
    form.hazard_ids.choices = [
        (str(h.id), f"#{h.id} {h.hazard_type or h.hazard_group}: {h.event[:60]}")
        for h in a.hazards
        if not h.archived
    ]
    if form.validate_on_submit():
        data = form_data(form, "name", "trigger", "reaction", "modes", "hazard_ids")
        ms = form.response_time_ms.data
        data["response_time_s"] = None if ms is None else ms / 1000
        try:
            register.add_safety_function(db(), a, data)
            flash("Safety function added.")
            return redirect(url_for("machines.machine", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    status = 400 if request.method == "POST" else 200
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"New safety function on {m.asset_tag}",
        submit="Add safety function",
    ), status


@bp.route("/files/<int:file_id>")
def file(file_id: int) -> Any:
    row = db().get(EvidenceFile, file_id)
    if row is None:
        raise NotFound(f"No file number {file_id}.")
    path = evidence.evidence_path(current_app.instance_path, row.sha256)
    if not path.exists():
        raise NotFound("The file's content is missing from the instance folder.")
    inline = row.content_type in evidence.IMAGE_TYPES and request.args.get("view") == "1"
    return send_file(
        path,
        mimetype=row.content_type,
        as_attachment=not inline,
        download_name=row.filename,
        max_age=3600,
    )
