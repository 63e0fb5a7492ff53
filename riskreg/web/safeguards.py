"""Safeguard pages: records and their checks, stopping-time measurements, press data,
safety-function PL verification, option comparison, components, corrective actions."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, current_app, flash, redirect, render_template, request, url_for
from flask_login import current_user

from riskreg.model import (
    CorrectiveAction,
    Instrument,
    SafeguardOption,
    SafetyFunction,
    StoppingTimeMeasurement,
)
from riskreg.services import register, safeguards
from riskreg.services.errors import Conflict, NotFound, ValidationError

from . import db
from .auth import require_role
from .hazards import get_hazard
from .helpers import apply_errors
from .machines import get_machine
from .safeguard_forms import (
    COMMON,
    FIELDS_BY_KIND,
    AccessForm,
    ActionForm,
    ChooseForm,
    CloseActionForm,
    ComponentForm,
    MeasurementForm,
    MonitorSettingForm,
    OptionForm,
    PartForm,
    PressForm,
    SafeguardForm,
)

bp = Blueprint("safeguards", __name__)


def _status(form: Any) -> int:
    return 400 if request.method == "POST" else 200


def _get(model: Any, ident: int, what: str) -> Any:
    row = db().get(model, ident)
    if row is None:
        raise NotFound(f"No {what} number {ident}.")
    return row


# --- safeguard records ---------------------------------------------------------------


def _component_choices(form: SafeguardForm) -> None:
    form.component_id.choices = [("", "— none —")] + [
        (str(c.id), f"{c.maker} {c.model} ({c.kind})") for c in safeguards.components(db())
    ]


def _form_values(form: SafeguardForm, kind: str) -> dict[str, Any]:
    data: dict[str, Any] = {"kind": kind}
    for name in COMMON + FIELDS_BY_KIND[kind]:
        data[name] = getattr(form, name).data
    return data


@bp.route("/machines/<int:machine_id>/safeguards/new", methods=["GET", "POST"])
@require_role("assessor")
def new_safeguard(machine_id: int) -> Any:
    m = get_machine(machine_id)
    kind = request.args.get("kind", "")
    if kind not in safeguards.SAFEGUARD_KINDS:
        return render_template(
            "safeguard_kind.html",
            machine=m,
            kinds=safeguards.SAFEGUARD_KINDS,
            title=f"New safeguard on {m.asset_tag}",
        )
    form = SafeguardForm()
    _component_choices(form)
    if form.validate_on_submit():
        try:
            sg = safeguards.save_safeguard(db(), m, _form_values(form, kind))
            flash(f"{sg.label} recorded.")
            return redirect(url_for("safeguards.safeguard", safeguard_id=sg.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "safeguard_form.html",
        form=form,
        machine=m,
        kind=kind,
        fields=COMMON + FIELDS_BY_KIND[kind],
        safeguard=None,
        title=f"New {safeguards.SAFEGUARD_KINDS[kind].lower()} on {m.asset_tag}",
    ), _status(form)


@bp.route("/safeguards/<int:safeguard_id>/edit", methods=["GET", "POST"])
@require_role("assessor")
def edit_safeguard(safeguard_id: int) -> Any:
    sg = safeguards.load_safeguard(db(), safeguard_id)
    form = SafeguardForm()
    _component_choices(form)
    if request.method == "GET":
        form.label.data = sg.label
        form.status.data = sg.status
        form.response_time_ms.data = f"{sg.response_time_s * 1000:g}"
        form.installed_distance_mm.data = (
            "" if sg.installed_distance_mm is None else f"{sg.installed_distance_mm:g}"
        )
        form.component_id.data = str(sg.component_id or "")
        p = sg.parameters
        for name in FIELDS_BY_KIND[sg.kind]:
            field = getattr(form, name)
            if name == "synchronous_window_ms":
                w = p.get("synchronous_window_s")
                field.data = "" if w is None else f"{w * 1000:g}"
            elif name in p:
                v = p[name]
                field.data = v if isinstance(v, (bool, list)) else ("" if v is None else str(v))
    if form.validate_on_submit():
        try:
            safeguards.save_safeguard(db(), sg.machine, _form_values(form, sg.kind), sg)
            flash("Safeguard saved.")
            return redirect(url_for("safeguards.safeguard", safeguard_id=sg.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
        except Conflict as exc:
            db().rollback()
            form.form_errors.append(str(exc))
    return render_template(
        "safeguard_form.html",
        form=form,
        machine=sg.machine,
        kind=sg.kind,
        fields=COMMON + FIELDS_BY_KIND[sg.kind],
        safeguard=sg,
        title=f"Edit {sg.label}",
    ), _status(form)


@bp.route("/safeguards/<int:safeguard_id>")
def safeguard(safeguard_id: int) -> Any:
    sg = safeguards.load_safeguard(db(), safeguard_id)
    m = sg.machine
    latest = safeguards.latest_measurement(m)
    ev = safeguards.evaluate(
        sg, latest.t_used_s if latest else None, m.site.distance_method, safeguards.press_profile(m)
    )
    from sqlalchemy import select

    from riskreg.model import DistanceCheck

    checks = list(
        db().scalars(
            select(DistanceCheck)
            .where(DistanceCheck.safeguard_id == sg.id)
            .order_by(DistanceCheck.id.desc())
        )
    )
    from .trust import safeguard_context

    return render_template(
        "safeguard.html",
        sg=sg,
        machine=m,
        ev=ev,
        latest=latest,
        checks=checks,
        kinds=safeguards.SAFEGUARD_KINDS,
        title=f"{sg.label} · {m.asset_tag}",
        **safeguard_context(sg),
    )


# --- stopping-time measurements ---------------------------------------------------------


@bp.route("/machines/<int:machine_id>/measurements/new", methods=["GET", "POST"])
@require_role("assessor")
def new_measurement(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = MeasurementForm()
    from .trust import instrument_choices

    form.instrument_id.choices = instrument_choices(m.site)
    if request.method == "GET":
        form.measured_by.data = current_user.name
    if form.validate_on_submit():
        try:
            meas = safeguards.record_measurement(db(), m, form.data)
            failed = [c for c in meas.checks if c.passed is False]
            flash(
                f"Measurement saved: T = {meas.t_used_s * 1000:.0f} ms. "
                + (
                    f"{len(failed)} distance check(s) FAILED and corrective actions were opened."
                    if failed
                    else "Every distance check passes."
                ),
                "error" if failed else "message",
            )
            return redirect(url_for("safeguards.measurement", measurement_id=meas.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"Stopping-time measurement on {m.asset_tag}",
        submit="Save and check distances",
        intro="Enter every trial. The worst trial plus the allowance is the "
        "T used for every safety distance on this machine.",
    ), _status(form)


@bp.route("/measurements/<int:measurement_id>")
def measurement(measurement_id: int) -> Any:
    meas = _get(StoppingTimeMeasurement, measurement_id, "measurement")
    return render_template(
        "measurement.html",
        meas=meas,
        machine=meas.machine,
        instrument_warning=safeguards.instrument_warning(db(), meas),
        instrument=_get(Instrument, meas.instrument_id, "instrument")
        if meas.instrument_id
        else None,
        title=f"Stopping time {meas.measured_on} · {meas.machine.asset_tag}",
    )


# --- press data ------------------------------------------------------------------------


@bp.route("/machines/<int:machine_id>/press", methods=["GET", "POST"])
@require_role("assessor")
def press(machine_id: int) -> Any:
    m = get_machine(machine_id)
    profile = safeguards.press_profile(m)
    form = PressForm(obj=profile) if request.method == "GET" and profile else PressForm()
    if request.method == "GET" and profile is not None:
        form.revolution_time_ms.data = (
            "" if profile.revolution_time_s is None else f"{profile.revolution_time_s * 1000:g}"
        )
        form.engaging_points.data = str(profile.engaging_points or "")
    monitor = MonitorSettingForm(prefix="bm")
    if form.validate_on_submit() and "clutch" in request.form:
        try:
            safeguards.save_press_profile(db(), m, form.data)
            flash("Press data saved.")
            return redirect(url_for("safeguards.press", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    requirements = None
    if profile is not None:
        requirements = _press_rules(m, profile)
    return render_template(
        "press.html",
        form=form,
        monitor=monitor,
        machine=m,
        profile=profile,
        requirements=requirements,
        title=f"Press data of {m.asset_tag}",
    ), _status(form)


def _press_rules(m: Any, profile: Any) -> Any:
    from riskreg.engineering import press as press_rules

    kinds = sorted({s.kind for s in safeguards.safeguards_of(m) if s.status == "installed"})
    return press_rules.us_press_requirements(
        machine_kind=m.kind,
        clutch=profile.clutch,
        engaging_points=profile.engaging_points,
        brake_monitor=profile.brake_monitor,
        control_reliable=profile.control_reliable,
        devices=kinds,
        anti_repeat=profile.anti_repeat,
        single_stroke=profile.single_stroke,
    )


@bp.route("/machines/<int:machine_id>/press/monitor", methods=["POST"])
@require_role("assessor")
def monitor_setting(machine_id: int) -> Any:
    m = get_machine(machine_id)
    monitor = MonitorSettingForm(prefix="bm")
    if monitor.validate_on_submit():
        try:
            safeguards.add_monitor_setting(
                db(),
                m,
                {k[len("bm-") :] if k.startswith("bm-") else k: v for k, v in monitor.data.items()},
            )
            flash("Brake-monitor setting recorded.")
            return redirect(url_for("safeguards.press", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(monitor, exc)
    profile = safeguards.press_profile(m)
    form = PressForm(obj=profile)
    return render_template(
        "press.html",
        form=form,
        monitor=monitor,
        machine=m,
        profile=profile,
        requirements=_press_rules(m, profile) if profile else None,
        title=f"Press data of {m.asset_tag}",
    ), 400


# --- safety-function PL verification --------------------------------------------------


@bp.route("/functions/<int:function_id>", methods=["GET", "POST"])
def function(function_id: int) -> Any:
    sf = _get(SafetyFunction, function_id, "safety function")
    form = PartForm()
    status = 200
    if request.method == "POST":
        if not current_user.can("assessor"):
            return render_template(
                "error.html", title="Not allowed", message="Your role does not allow this."
            ), 403
        if form.validate_on_submit():
            try:
                safeguards.save_part(db(), sf, form.data)
                flash("Part added; the PL verification below is updated.")
                return redirect(url_for("safeguards.function", function_id=sf.id))
            except ValidationError as exc:
                db().rollback()
                apply_errors(form, exc)
        status = 400
    v = safeguards.verify_function(sf)
    return render_template(
        "function.html", sf=sf, v=v, form=form, machine=sf.assessment.machine, title=sf.name
    ), status


# --- component library ----------------------------------------------------------------


@bp.route("/components", methods=["GET", "POST"])
def components() -> Any:
    form = ComponentForm()
    status = 200
    if request.method == "POST":
        if not current_user.can("assessor"):
            return render_template(
                "error.html", title="Not allowed", message="Your role does not allow this."
            ), 403
        if form.validate_on_submit():
            try:
                safeguards.save_component(db(), form.data)
                flash("Part added to the library.")
                return redirect(url_for("safeguards.components"))
            except ValidationError as exc:
                db().rollback()
                apply_errors(form, exc)
        status = 400
    return render_template(
        "components.html", form=form, parts=safeguards.components(db()), title="Component library"
    ), status


# --- options per hazard -----------------------------------------------------------------


def _comparison(h: Any) -> Any:
    from riskreg.engineering import selection

    access = safeguards.hazard_access(db(), h)
    options = safeguards.options_of(db(), h)
    if not options:
        return None
    r0 = register.current_rating(h, "initial")
    plr = r0.level if r0 is not None and r0.method == "iso13849" else None
    latest = safeguards.latest_measurement(h.assessment.machine)
    cands = []
    for o in options:
        cands.append(
            selection.Candidate(
                kind=o.kind,
                reachable_pl=o.reachable_pl,
                required_distance_mm=_candidate_distance(o.kind, latest),
                space_available_mm=o.space_available_mm,
                cost=o.cost,
                effect_on_work=o.effect_on_work,
            )
        )
    return selection.compare_options(
        cands,
        plr=plr,
        access=access.access if access else "frequent",
        ejection=bool(access and access.ejection),
        other_people_exposed=bool(access and access.other_people_exposed),
        hand_feeding=bool(access and access.hand_feeding),
    )


def _candidate_distance(kind: str, latest: Any) -> float | None:
    """A first figure for comparison: the machine's T, no device response, a 14 mm curtain."""
    from riskreg.engineering import distance

    if latest is None:
        return None
    t = latest.t_used_s
    if kind == "light_curtain":
        return float(distance.light_curtain(t, 0.0, 14.0).distance_mm)
    if kind == "two_hand_control":
        return float(distance.two_hand(t, 0.0).distance_mm)
    if kind == "multi_beam":
        return float(distance.multi_beam(t, 0.0, 4).distance_mm)
    if kind == "pressure_mat":
        return float(distance.pressure_mat(t, 0.0).distance_mm)
    return None


@bp.route("/hazards/<int:hazard_id>/options", methods=["GET", "POST"])
def options(hazard_id: int) -> Any:
    h = get_hazard(hazard_id)
    m = h.assessment.machine
    access = safeguards.hazard_access(db(), h)
    access_form = AccessForm(prefix="ac", obj=access)
    option_form = OptionForm(prefix="op")
    status = 200
    if request.method == "POST":
        if not current_user.can("assessor"):
            return render_template(
                "error.html", title="Not allowed", message="Your role does not allow this."
            ), 403
        which = request.form.get("which")
        form = access_form if which == "access" else option_form
        if form.validate_on_submit():
            data = {k: v for k, v in form.data.items()}
            try:
                if which == "access":
                    safeguards.save_access(db(), h, data)
                    flash("Access and exposure saved.")
                else:
                    safeguards.add_option(db(), h, data)
                    flash("Candidate added to the comparison.")
                return redirect(url_for("safeguards.options", hazard_id=h.id))
            except ValidationError as exc:
                db().rollback()
                apply_errors(form, exc)
        status = 400
    comparison = _comparison(h)
    return render_template(
        "options.html",
        hazard=h,
        machine=m,
        access=access,
        access_form=access_form,
        option_form=option_form,
        options=safeguards.options_of(db(), h),
        comparison=comparison,
        choose=ChooseForm(prefix="ch"),
        latest=safeguards.latest_measurement(m),
        title=f"Safeguard options for hazard #{h.id}",
    ), status


@bp.route("/options/<int:option_id>/choose", methods=["POST"])
@require_role("assessor")
def choose(option_id: int) -> Any:
    o = _get(SafeguardOption, option_id, "option")
    form = ChooseForm(prefix="ch")
    if form.validate_on_submit():
        try:
            safeguards.choose_option(db(), o, form.reason.data, current_user.name)
            flash("Choice recorded with its reason.")
        except ValidationError as exc:
            db().rollback()
            flash(exc.errors["reason"], "error")
    return redirect(url_for("safeguards.options", hazard_id=o.hazard_id))


# --- corrective actions -----------------------------------------------------------------


@bp.route("/machines/<int:machine_id>/actions/new", methods=["GET", "POST"])
@require_role("assessor")
def new_action(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = ActionForm()
    if form.validate_on_submit():
        try:
            safeguards.add_action(db(), m, form.data)
            flash("Corrective action opened.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor="actions"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"New corrective action on {m.asset_tag}",
        submit="Open the action",
    ), _status(form)


@bp.route("/actions/<int:action_id>/close", methods=["GET", "POST"])
@require_role("assessor")
def close_action(action_id: int) -> Any:
    a = _get(CorrectiveAction, action_id, "corrective action")
    form = CloseActionForm()
    if form.validate_on_submit():
        storage = form.closing_file.data
        upload = (
            (storage.filename, storage.read())
            if storage is not None and getattr(storage, "filename", "")
            else None
        )
        try:
            safeguards.close_action(
                db(),
                a,
                form.closing_note.data,
                upload,
                instance_path=current_app.instance_path,
                user_id=current_user.id,
            )
            flash("Action closed.")
            return redirect(url_for("machines.machine", machine_id=a.machine_id, _anchor="actions"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=a.machine,
        title=f"Close: {a.title}",
        submit="Close the action",
    ), _status(form)
