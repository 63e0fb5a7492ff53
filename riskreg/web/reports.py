"""PDF downloads: a machine's report, a measurement's certificate, the due report and
an area's labels are rendered in the request (they take seconds); the site report is
rendered in the background and offered on a status page when it is ready."""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

from flask import Blueprint, current_app, make_response, redirect, render_template, request, url_for
from flask import send_file as _send_file

from riskreg import reports
from riskreg.model import Area, Site, StoppingTimeMeasurement
from riskreg.reports.jobs import SiteReportJobs
from riskreg.services.errors import NotFound, ValidationError

from . import db
from .machines import get_machine

bp = Blueprint("reports", __name__)
REFRESH_SECONDS = 3


def _pdf(report: reports.Report) -> Any:
    resp = _send_file(
        io.BytesIO(report.pdf),
        mimetype="application/pdf",
        as_attachment=True,
        download_name=report.filename,
    )
    resp.headers["X-Report-Id"] = report.report_id
    return resp


def _base_url(site: Site) -> str:
    """The site's register address, else the address this request came to."""
    return site.base_url or request.host_url.rstrip("/")


def _error(message: str, status: int) -> Any:
    return render_template("error.html", title="Report not made", message=message), status


def _jobs() -> SiteReportJobs:
    jobs = current_app.extensions.get("riskreg.report_jobs")
    if jobs is None:
        jobs = SiteReportJobs(
            Path(current_app.instance_path) / "reports", current_app.extensions["riskreg.sessions"]
        )
        current_app.extensions["riskreg.report_jobs"] = jobs
    return jobs


def _site(site_id: int) -> Site:
    s = db().get(Site, site_id)
    if s is None:
        raise NotFound(f"No site number {site_id}.")
    return s


@bp.route("/machines/<int:machine_id>/report.pdf")
def machine_report(machine_id: int) -> Any:
    m = get_machine(machine_id)
    try:
        return _pdf(reports.build_machine_report(db(), m, base_url=_base_url(m.site)))
    except ValidationError as exc:
        return _error(" ".join(exc.errors.values()), 400)


@bp.route("/measurements/<int:measurement_id>/certificate.pdf")
def certificate(measurement_id: int) -> Any:
    meas = db().get(StoppingTimeMeasurement, measurement_id)
    if meas is None:
        raise NotFound(f"No stopping-time measurement number {measurement_id}.")
    return _pdf(reports.build_certificate(db(), meas, base_url=_base_url(meas.machine.site)))


@bp.route("/machines/<int:machine_id>/certificate.pdf")
def latest_certificate(machine_id: int) -> Any:
    m = get_machine(machine_id)
    meas = reports.measurement_on(db(), m)
    return _pdf(reports.build_certificate(db(), meas, base_url=_base_url(m.site)))


@bp.route("/sites/<int:site_id>/due-report.pdf")
def due_report(site_id: int) -> Any:
    s = _site(site_id)
    try:
        within = int(request.args.get("within", 30))
    except ValueError:
        return _error("Give the number of days ahead as a whole number, e.g. ?within=30.", 400)
    try:
        return _pdf(reports.build_due_report(db(), s, within_days=within, base_url=_base_url(s)))
    except ValidationError as exc:
        return _error(" ".join(exc.errors.values()), 400)


@bp.route("/areas/<int:area_id>/labels.pdf")
def labels(area_id: int) -> Any:
    area = db().get(Area, area_id)
    if area is None:
        raise NotFound(f"No area number {area_id}.")
    try:
        return _pdf(reports.build_labels(db(), area.site, area.name, _base_url(area.site)))
    except ValidationError as exc:
        return _error(" ".join(exc.errors.values()), 400)


@bp.route("/sites/<int:site_id>/report", methods=["POST"])
def start_site_report(site_id: int) -> Any:
    s = _site(site_id)
    job_id = _jobs().start(s, base_url=_base_url(s))
    return redirect(url_for("reports.site_report_status", job_id=job_id), code=303)


@bp.route("/reports/<job_id>")
def site_report_status(job_id: str) -> Any:
    st = _jobs().status(job_id)
    if st is None:
        raise NotFound("There is no such report; start it again from the site's page.")
    resp = make_response(
        render_template(
            "report_status.html",
            job=st,
            refresh=None if st.finished else REFRESH_SECONDS,
            title=f"Site report · {st.site_name}",
        )
    )
    if not st.finished:
        resp.headers["Refresh"] = str(REFRESH_SECONDS)
    return resp


@bp.route("/reports/<job_id>/<int:index>.pdf")
def site_report_file(job_id: str, index: int) -> Any:
    found = _jobs().file_path(job_id, index)
    if found is None:
        raise NotFound("This report file is not ready, or it has been removed (after a day).")
    path, f = found
    return _send_file(
        path, mimetype="application/pdf", as_attachment=True, download_name=f.filename
    )
