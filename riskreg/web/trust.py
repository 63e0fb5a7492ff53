"""Keeping safeguards trusted: verification records with their evidence, the due
board, start-of-shift checks, lockout procedures, instruments, intervals, the
site's corrective actions and the calendar feed of due dates."""

from __future__ import annotations

import datetime as dt
from typing import Any

from flask import (
    Blueprint,
    Response,
    abort,
    current_app,
    flash,
    redirect,
    render_template,
    request,
    session,
    url_for,
)
from flask_login import current_user

from riskreg.model import (
    CalendarToken,
    EvidenceFile,
    Instrument,
    LockoutProcedure,
    Machine,
    Safeguard,
    Site,
    Verification,
)
from riskreg.services import due, register, safeguards, verification
from riskreg.services.errors import NotFound, ValidationError
from riskreg.services.verification import KINDS, Upload

from . import db, ical
from .auth import require_role
from .forms import ConfirmForm
from .helpers import apply_errors
from .machines import get_machine, get_site
from .trust_forms import (
    CalendarLinkForm,
    CalibrationForm,
    ChecklistForm,
    InstrumentForm,
    IntervalForm,
    LockoutForm,
    ShiftCheckForm,
    VerificationForm,
)

bp = Blueprint("trust", __name__)

# The sections of the due board, in order, with their anchors.
SECTIONS = (
    ("overdue", "Overdue", "overdue"),
    ("within 7 days", "Due within 7 days", "within-7"),
    ("within 30 days", "Due within 30 days", "within-30"),
    ("later", "Later", "later"),
)
# Safeguard-level kinds whose interval may be set per safeguard.
PER_SAFEGUARD = [k for k, info in KINDS.items() if info.per == "safeguard"]


def _status() -> int:
    return 400 if request.method == "POST" else 200


def _get(model: Any, ident: int, what: str) -> Any:
    row = db().get(model, ident)
    if row is None:
        raise NotFound(f"No {what} number {ident}.")
    return row


def _today() -> dt.date:
    return dt.date.today()


def interval_text(days: int | None) -> str:
    return "after every modification, not on a calendar" if days is None else f"every {days} days"


# --- context for the machine and safeguard pages ---------------------------------------


def lockout_rows(procs: list[LockoutProcedure]) -> list[dict[str, Any]]:
    today = _today()
    rows = []
    for lp in procs:
        next_on = (
            lp.last_inspected_on + dt.timedelta(days=lp.interval_days)
            if lp.last_inspected_on
            else None
        )
        rows.append(
            {
                "proc": lp,
                "next_on": next_on,
                "overdue": next_on is None or next_on < today,
            }
        )
    return rows


def machine_context(m: Machine, guards: list[Safeguard] | None = None) -> dict[str, Any]:
    """What the machine page shows of verification, checks and lockout (``guards``: the
    machine's safeguards when the page has them already)."""
    s = db()
    guards = safeguards.safeguards_of(m) if guards is None else guards
    return {
        "untrusted": [g for g in guards if g.status == "installed" and not g.trusted],
        "verifications": verification.verifications_of(s, m, limit=10),
        "kinds": KINDS,
        "results": verification.RESULTS,
        "lockouts": lockout_rows(verification.lockouts_of(s, m)),
        "checklist": verification.checklist_of(s, m),
    }


def safeguard_context(sg: Safeguard) -> dict[str, Any]:
    """What the safeguard page shows: intervals in force and its verifications."""
    s = db()
    site = sg.machine.site
    rows = []
    for k in PER_SAFEGUARD:
        rows.append(
            {
                "kind": k,
                "info": KINDS[k],
                "days": verification.interval_days(s, site, k, sg),
                "site_days": verification.interval_days(s, site, k),
            }
        )
    form = IntervalForm(prefix="iv")
    form.kind.choices = [(k, KINDS[k].label) for k in PER_SAFEGUARD]
    return {
        "interval_rows": rows,
        "interval_form": form,
        "sg_verifications": [
            v for v in verification.verifications_of(s, sg.machine) if v.safeguard_id == sg.id
        ][:10],
        "results": verification.RESULTS,
        "kinds_info": KINDS,
    }


# --- verification records ----------------------------------------------------------------


def instrument_choices(site: Site) -> list[tuple[str, str]]:
    today = _today()
    out = [("", "— none —")]
    for ins in verification.instruments(db(), site):
        if not ins.active:
            continue
        due_on = verification.calibration_due(ins)
        if verification.in_calibration(ins, today):
            note = f"calibrated, next due {due_on}"
        elif due_on is None:
            note = "NO CALIBRATION RECORDED"
        else:
            note = f"CALIBRATION RAN OUT {due_on}"
        out.append(
            (str(ins.id), f"{ins.name}{' (' + ins.serial + ')' if ins.serial else ''} — {note}")
        )
    return out


def _verification_choices(form: VerificationForm, m: Machine) -> list[dict[str, Any]]:
    guards = [g for g in safeguards.safeguards_of(m) if g.status != "removed"]
    form.safeguard_id.choices = [("", "— the whole machine —")] + [
        (
            str(g.id),
            f"{g.label} ({safeguards.SAFEGUARD_KINDS.get(g.kind, g.kind).lower()})"
            + ("" if g.trusted else " — NOT TRUSTED"),
        )
        for g in guards
    ]
    kinds = []
    for k, info in KINDS.items():
        if k == "weekly_press" and m.kind != "mechanical_press":
            continue
        days = verification.interval_days(db(), m.site, k)
        kinds.append(
            {
                "key": k,
                "label": info.label,
                "days": days,
                "source": info.source,
                "per": info.per,
            }
        )
    form.kind.choices = [(k["key"], k["label"]) for k in kinds]
    form.instrument_id.choices = instrument_choices(m.site)
    return kinds


def _uploads(form: VerificationForm) -> list[Upload]:
    out = []
    for storage in form.files.data or []:
        if storage is None or not getattr(storage, "filename", ""):
            continue
        out.append(Upload(storage.filename, storage.read()))
    return out


@bp.route("/machines/<int:machine_id>/verifications/new", methods=["GET", "POST"])
@require_role("assessor")
def new_verification(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = VerificationForm()
    kinds = _verification_choices(form, m)
    if request.method == "GET":
        wanted = request.args.get("kind", "")
        form.kind.data = wanted if wanted in {k["key"] for k in kinds} else "functional_test"
        sg = request.args.get("safeguard", "")
        form.safeguard_id.data = sg if sg in {c[0] for c in form.safeguard_id.choices} else ""
        form.performed_on.data = _today().isoformat()
        form.performed_by.data = current_user.name
        form.press_serial.data = m.serial
    if form.validate_on_submit():
        data = {
            name: getattr(form, name).data
            for name in (
                "safeguard_id",
                "kind",
                "result",
                "performed_on",
                "performed_by",
                "measured_values",
                "notes",
                "press_serial",
                "signature",
                "instrument_id",
            )
        }
        if data["kind"] != "weekly_press":
            data["press_serial"] = data["signature"] = ""
        try:
            v = verification.record_verification(
                db(),
                m,
                data,
                _uploads(form),
                instance_path=current_app.instance_path,
                user_id=current_user.id,
            )
            msg = f"{KINDS[v.kind].label} recorded with {len(v.evidence)} file(s)."
            if v.result == "fail":
                msg += (
                    " It FAILED: the safeguard is NOT TRUSTED and a corrective action is open."
                    if v.safeguard
                    else " It FAILED: a corrective action is open."
                )
            flash(msg, "error" if v.result == "fail" else "message")
            return redirect(url_for("trust.verification", verification_id=v.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "verification_form.html",
        form=form,
        machine=m,
        kinds=kinds,
        title=f"Record a verification on {m.asset_tag}",
    ), _status()


@bp.route("/verifications/<int:verification_id>", endpoint="verification")
def verification_page(verification_id: int) -> Any:
    v: Verification = _get(Verification, verification_id, "verification")
    warning = None
    if v.instrument is not None and not verification.in_calibration(v.instrument, v.performed_on):
        warning = (
            f"{v.instrument.name} was not in calibration on {v.performed_on}: "
            "values measured with it need repeating with a calibrated instrument."
        )
    actions = [a for a in safeguards.actions_of(db(), v.machine) if a.verification_id == v.id]
    return render_template(
        "verification.html",
        v=v,
        machine=v.machine,
        kinds=KINDS,
        results=verification.RESULTS,
        warning=warning,
        actions=actions,
        title=f"{KINDS[v.kind].label} · {v.machine.asset_tag} · {v.performed_on}",
    )


# --- the due board ---------------------------------------------------------------------


def _due_filters(site: Site) -> tuple[dict[str, Any], list[str], str]:
    """The board's filters from the query string; bad values become messages. Also the
    asset tag of the machine filtered on (for the form)."""
    problems: list[str] = []
    out: dict[str, Any] = {"area": None, "machine_id": None, "kind": None}
    area = request.args.get("area", "").strip()
    if area:
        names = [a.name for a in site.areas]
        if area in names:
            out["area"] = area
        else:
            problems.append(
                f"There is no area “{area[:60]}” at {site.name}; choose one of: "
                f"{', '.join(names) or 'none recorded'}. Showing every area."
            )
    raw = request.args.get("machine", "").strip()
    tag = ""
    if raw:
        found = register.machine_in_service(db(), site, raw)
        if found is None:
            problems.append(
                f"“{raw[:40]}” is not a machine of {site.name} in service; enter the asset "
                "tag of one. Showing every machine."
            )
        else:
            out["machine_id"], tag = found.id, found.asset_tag
    kind = request.args.get("kind", "").strip()
    if kind:
        if kind in due.LABELS:
            out["kind"] = kind
        else:
            problems.append(
                f"“{kind[:40]}” is not a kind of check; choose one of: "
                f"{', '.join(due.LABELS.values())}. Showing every kind."
            )
    return out, problems, tag


def due_link(item: due.DueItem, site_id: int) -> tuple[str, str] | None:
    """Where to go to do the work of a due item (for those allowed to record)."""
    if item.machine_id is None:
        if item.kind == "calibration":
            return ("Record a calibration", url_for("trust.instruments", site_id=site_id))
        return None
    if item.kind == "stopping_time":
        return (
            "Record a stopping time",
            url_for("safeguards.new_measurement", machine_id=item.machine_id),
        )
    if item.kind in KINDS:
        args: dict[str, Any] = {"machine_id": item.machine_id, "kind": item.kind}
        if item.safeguard_id:
            args["safeguard"] = item.safeguard_id
        return ("Record it", url_for("trust.new_verification", **args))
    if item.kind == "shift_check":
        return ("Start-of-shift check", url_for("trust.shift_check", machine_id=item.machine_id))
    if item.kind == "lockout":
        return (
            "Lockout procedures",
            url_for("machines.machine", machine_id=item.machine_id, _anchor="lockout"),
        )
    return None


@bp.route("/sites/<int:site_id>/due")
def due_board(site_id: int) -> Any:
    site = get_site(site_id)
    filters, problems, machine_tag = _due_filters(site)
    # one page of the items (soonest first); the counts are of them all
    view = due.due_page(db(), site, page=request.args.get("page", 1, type=int), **filters)
    groups: dict[str, list[tuple[due.DueItem, tuple[str, str] | None]]] = {
        key: [] for key, _t, _a in SECTIONS
    }
    for i in view.items:
        groups[i.status].append((i, due_link(i, site.id)))
    return render_template(
        "due_board.html",
        site=site,
        groups=groups,
        sections=SECTIONS,
        counts=view.counts,
        view=view,
        problems=problems,
        filters=filters,
        machine_tag=machine_tag,
        labels=due.LABELS,
        title=f"What is due · {site.name}",
    ), (400 if problems else 200)


# --- start-of-shift checks -----------------------------------------------------------------


@bp.route("/machines/<int:machine_id>/shift-checklist", methods=["GET", "POST"])
@require_role("assessor")
def checklist(machine_id: int) -> Any:
    m = get_machine(machine_id)
    current = verification.checklist_of(db(), m)
    form = ChecklistForm()
    if request.method == "GET":
        if current is not None:
            form.items.data = "\n".join(current.items)
            form.shifts_per_day.data = str(current.shifts_per_day)
            form.working_days.data = current.working_days
            form.active_since.data = current.active_since.isoformat()
        else:
            form.active_since.data = _today().isoformat()
    if form.validate_on_submit():
        try:
            verification.save_checklist(db(), m, form.data)
            flash("Start-of-shift checklist saved.")
            return redirect(url_for("trust.shift_check", machine_id=m.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"Start-of-shift checklist of {m.asset_tag}",
        intro="One check per line, as the operator does it at the start of a shift "
        "(e.g. 'two-hand control: releasing one button stops the slide').",
        submit="Save the checklist",
    ), _status()


@bp.route("/machines/<int:machine_id>/shift-check", methods=["GET", "POST"])
@require_role("assessor")
def shift_check(machine_id: int) -> Any:
    m = get_machine(machine_id)
    cl = verification.checklist_of(db(), m)
    form = ShiftCheckForm()
    if cl is None:
        return render_template(
            "shift_check.html", form=None, machine=m, checklist=None, title="Start-of-shift check"
        ), (400 if request.method == "POST" else 200)
    form.shift.choices = [(str(i), f"Shift {i}") for i in range(1, cl.shifts_per_day + 1)]
    form.ok_items.choices = [(item, item) for item in cl.items]
    if request.method == "GET":
        form.shift_date.data = _today().isoformat()
        form.performed_by.data = current_user.name
        form.shift.data = "1"
    if form.validate_on_submit():
        try:
            row = verification.record_shift_check(db(), m, form.data)
            if row.failed_items:
                flash(
                    f"Check saved: {len(row.failed_items)} item(s) did not pass; a corrective "
                    "action is open.",
                    "error",
                )
            else:
                flash("Check saved: every item passed.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor="trust"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "shift_check.html",
        form=form,
        machine=m,
        checklist=cl,
        title=f"Start-of-shift check · {m.asset_tag}",
    ), _status()


# --- lockout procedures ----------------------------------------------------------------------


@bp.route("/machines/<int:machine_id>/lockout/new", methods=["GET", "POST"])
@require_role("assessor")
def new_lockout(machine_id: int) -> Any:
    m = get_machine(machine_id)
    form = LockoutForm()
    if form.validate_on_submit():
        try:
            verification.save_lockout(db(), m, form.data)
            flash("Lockout procedure added.")
            return redirect(url_for("machines.machine", machine_id=m.id, _anchor="lockout"))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=m,
        title=f"New lockout procedure on {m.asset_tag}",
        intro="Energy-control procedures are inspected at least yearly "
        "(29 CFR 1910.147(c)(6), from memory): check local law for yours.",
        submit="Add the procedure",
    ), _status()


@bp.route("/lockout/<int:procedure_id>/inspected", methods=["POST"])
@require_role("assessor")
def lockout_inspected(procedure_id: int) -> Any:
    lp: LockoutProcedure = _get(LockoutProcedure, procedure_id, "lockout procedure")
    form = ConfirmForm()
    if not form.validate_on_submit():
        abort(400)
    try:
        verification.mark_lockout_inspected(db(), lp, current_user.name)
        flash(f"“{lp.title}” marked inspected today.")
    except ValidationError as exc:
        db().rollback()
        flash("; ".join(exc.errors.values()), "error")
    return redirect(url_for("machines.machine", machine_id=lp.machine_id, _anchor="lockout"))


# --- instruments ---------------------------------------------------------------------------


@bp.route("/sites/<int:site_id>/instruments")
def instruments(site_id: int) -> Any:
    site = get_site(site_id)
    today = _today()
    rows = []
    for ins in verification.instruments(db(), site):
        due_on = verification.calibration_due(ins)
        rows.append(
            {
                "ins": ins,
                "due_on": due_on,
                "overdue": due_on is None or due_on < today,
                "days_left": None if due_on is None else (due_on - today).days,
            }
        )
    return render_template(
        "instruments.html", site=site, rows=rows, title=f"Instruments · {site.name}"
    )


@bp.route("/sites/<int:site_id>/instruments/new", methods=["GET", "POST"])
@require_role("assessor")
def new_instrument(site_id: int) -> Any:
    site = get_site(site_id)
    form = InstrumentForm()
    if form.validate_on_submit():
        try:
            ins = verification.save_instrument(db(), site, form.data)
            flash(f"{ins.name} added.")
            return redirect(url_for("trust.instruments", site_id=site.id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=None,
        title=f"New instrument at {site.name}",
        intro="A measuring instrument such as a stop-time meter; calibrate it as its "
        "maker says (often yearly).",
        submit="Add the instrument",
    ), _status()


@bp.route("/instruments/<int:instrument_id>/calibrate", methods=["GET", "POST"])
@require_role("assessor")
def calibrate(instrument_id: int) -> Any:
    ins: Instrument = _get(Instrument, instrument_id, "instrument")
    form = CalibrationForm()
    if request.method == "GET":
        form.calibrated_on.data = _today().isoformat()
    if form.validate_on_submit():
        try:
            verification.calibrate(db(), ins, form.calibrated_on.data)
            flash(
                f"Calibration of {ins.name} recorded; next due {verification.calibration_due(ins)}."
            )
            return redirect(url_for("trust.instruments", site_id=ins.site_id))
        except ValidationError as exc:
            db().rollback()
            apply_errors(form, exc)
    return render_template(
        "simple_form.html",
        form=form,
        machine=None,
        title=f"Calibration of {ins.name}",
        submit="Record the calibration",
    ), _status()


# --- intervals --------------------------------------------------------------------------------


@bp.route("/sites/<int:site_id>/intervals", methods=["GET", "POST"])
def intervals(site_id: int) -> Any:
    site = get_site(site_id)
    form = IntervalForm()
    form.kind.choices = [(k, info.label) for k, info in KINDS.items()]
    status = 200
    if request.method == "POST":
        if not current_user.can("approver"):
            abort(403)
        if form.validate_on_submit():
            try:
                verification.set_interval(db(), site, form.kind.data, form.days.data)
                flash(
                    f"{KINDS[form.kind.data].label}: every {int(form.days.data)} days at {site.name}."
                )
                return redirect(url_for("trust.intervals", site_id=site.id))
            except ValidationError as exc:
                db().rollback()
                apply_errors(form, exc)
        status = 400
    rows = [
        {
            "kind": k,
            "info": info,
            "days": verification.interval_days(db(), site, k),
        }
        for k, info in KINDS.items()
    ]
    return render_template(
        "intervals.html",
        site=site,
        rows=rows,
        form=form,
        interval_text=interval_text,
        title=f"Verification intervals · {site.name}",
    ), status


@bp.route("/safeguards/<int:safeguard_id>/intervals", methods=["POST"])
@require_role("assessor")
def safeguard_interval(safeguard_id: int) -> Any:
    sg = safeguards.load_safeguard(db(), safeguard_id)
    form = IntervalForm(prefix="iv")
    form.kind.choices = [(k, KINDS[k].label) for k in PER_SAFEGUARD]
    if form.validate_on_submit():
        kind = form.kind.data
        if kind not in PER_SAFEGUARD:
            flash(
                "Choose one of: " + ", ".join(KINDS[k].label for k in PER_SAFEGUARD) + ".",
                "error",
            )
        else:
            try:
                verification.set_interval(db(), sg.machine.site, kind, form.days.data, sg)
                flash(f"{KINDS[kind].label} of {sg.label}: every {int(form.days.data)} days.")
            except ValidationError as exc:
                db().rollback()
                flash("; ".join(exc.errors.values()), "error")
    else:
        flash("The form was not complete; enter the interval again.", "error")
    return redirect(url_for("safeguards.safeguard", safeguard_id=sg.id, _anchor="intervals"))


# --- corrective actions of a site ------------------------------------------------------------


@bp.route("/sites/<int:site_id>/actions")
def actions(site_id: int) -> Any:
    site = get_site(site_id)
    rows = safeguards.actions_of_site(db(), site.id)
    files = {
        a.id: db().get(EvidenceFile, a.closing_evidence_id) for a in rows if a.closing_evidence_id
    }
    return render_template(
        "site_actions.html",
        site=site,
        open_rows=[a for a in rows if a.status == "open"],
        closed_rows=[a for a in rows if a.status != "open"],
        files=files,
        today=_today(),
        title=f"Corrective actions · {site.name}",
    )


# --- calendar feed and its links ------------------------------------------------------------

NEW_LINK_KEY = "riskreg.new_calendar_link"


@bp.route("/sites/<int:site_id>/calendar", methods=["GET", "POST"])
@require_role("admin")
def calendar_links(site_id: int) -> Any:
    site = get_site(site_id)
    form = CalendarLinkForm()
    if form.validate_on_submit():
        token = verification.new_calendar_token(db(), site, form.label.data or "")
        # Shown once, on the page this redirects to; only its hash is stored.
        session[NEW_LINK_KEY] = url_for("trust.calendar_feed", token=token, _external=True)
        flash("Calendar link created. Copy it now: it is shown only this once.")
        return redirect(url_for("trust.calendar_links", site_id=site.id))
    new_url = session.pop(NEW_LINK_KEY, None) if request.method == "GET" else None
    return render_template(
        "calendar_links.html",
        site=site,
        form=form,
        tokens=verification.calendar_tokens(db(), site),
        new_url=new_url,
        revoke_form=ConfirmForm(),
        title=f"Calendar links · {site.name}",
    ), _status()


@bp.route("/calendar-links/<int:token_id>/revoke", methods=["POST"])
@require_role("admin")
def revoke_calendar_link(token_id: int) -> Any:
    row: CalendarToken = _get(CalendarToken, token_id, "calendar link")
    form = ConfirmForm()
    if not form.validate_on_submit():
        abort(400)
    verification.revoke_calendar_token(db(), row.id)
    flash("Calendar link revoked: calendars using it get nothing from now on.")
    return redirect(url_for("trust.calendar_links", site_id=row.site_id))


@bp.route("/calendar/<token>.ics")
def calendar_feed(token: str) -> Any:
    """Public (no login): the token is the secret; unknown or revoked → 404."""
    site = verification.site_for_token(db(), token)
    items = due.due_items(db(), site)

    def link(item: due.DueItem) -> str | None:
        if item.safeguard_id:
            return url_for("safeguards.safeguard", safeguard_id=item.safeguard_id, _external=True)
        if item.machine_id:
            return url_for("machines.machine", machine_id=item.machine_id, _external=True)
        return None

    body = ical.calendar(
        items,
        site_id=site.id,
        name=f"Due at {site.name}",
        now=dt.datetime.now(dt.UTC),
        link=link,
    )
    resp = Response(body, content_type="text/calendar; charset=utf-8")
    resp.headers["Content-Disposition"] = 'inline; filename="due.ics"'
    return resp
