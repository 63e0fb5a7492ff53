"""Audit-ready PDF reports: the register's records, printed and archived.

Every report is a PDF/A-3b that carries the record it was printed from as the
embedded file ``record.json`` (relationship Data), with the SHA-256 of exactly
that file on its last page. The record is gathered once through the services
(:mod:`riskreg.reports.record`); the pages are rendered from the same data, so
what is printed and what is archived cannot disagree. Given the same record and
the same ``generated_at``, a report is byte-for-byte the same.

``base_url`` is the address of the register on the web (the site's setting by
default): the reports print it, as a QR code, so a reader can open the live
record from paper. No part of this package imports Flask.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import logging
import re
import threading
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from riskreg import __version__
from riskreg.engineering import cautions
from riskreg.model import Area, Machine, Site, StoppingTimeMeasurement
from riskreg.services import due, verification
from riskreg.services.errors import NotFound, ValidationError

from . import present, render
from .record import (
    SCHEMA,
    ProgressFn,
    cautions_of,
    iso_datetime,
    machine_identity,
    machine_record,
    measurement_record,
    rests_on_recalled,
    site_identity,
    site_machines,
    site_records,
    summary_row,
)

__all__ = [
    "Report",
    "SINGLE_DOCUMENT_MAX_MACHINES",
    "build_certificate",
    "build_due_report",
    "build_labels",
    "build_machine_report",
    "build_site",
    "build_site_report",
    "build_site_volumes",
    "machine_record",
    "measurement_on",
    "wants_volumes",
]

# Above this many machines a site report is printed in volumes (a summary, then one
# per area, an area split further when it alone has more). Measured with
# bench/reports.py on copies of the demo's machines (about 4.8 pages each): peak
# memory of one document was 769 MiB at 50 machines, 1281 MiB at 100 and 5892 MiB at
# 500 (about 11 MiB a machine, 2.4 MiB a page). 100 keeps one document, or one
# volume, under 1.5 GiB with some room for machines with longer records; see
# bench/REPORTS.md.
SINGLE_DOCUMENT_MAX_MACHINES = 100
SIGNOFF_STATEMENT = (
    "Signing confirms that the record printed here was reviewed against the machine, and "
    "that its inputs and calculations were checked by a qualified person. It does not "
    "certify that the machine is safe."
)
RECORD_NAME = render.RECORD_NAME
_TS = "%Y%m%dT%H%M%SZ"


@dataclass(frozen=True)
class Report:
    """One rendered report: the PDF and what it was made from."""

    kind: str  # machine, site, site-summary, site-volume, due, certificate, labels
    title: str
    report_id: str
    generated_at: dt.datetime
    filename: str
    pdf: bytes
    html: str
    record: dict[str, Any]
    record_json: bytes
    record_sha256: str
    pages: int


# --- identity, time, progress -------------------------------------------------------------


def _when(generated_at: dt.datetime | None) -> dt.datetime:
    """The report's timestamp: UTC to the second (a naive value is taken as UTC)."""
    value = generated_at or dt.datetime.now(dt.UTC)
    if value.tzinfo is None:
        value = value.replace(tzinfo=dt.UTC)
    return value.astimezone(dt.UTC).replace(microsecond=0)


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-") or "x"


def _check_report_id(report_id: str) -> str:
    rid = report_id.strip()
    if not rid or len(rid) > 80 or not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._:/-]*", rid):
        raise ValidationError(
            {
                "report_id": "A report id is 1 to 80 letters, digits and . _ : / - "
                f"(starting with a letter or digit); got {report_id!r}."
            }
        )
    return rid


def _register_url(site: Site, base_url: str | None) -> str | None:
    url = (base_url or site.base_url or "").strip()
    if not url:
        return None
    if not re.match(r"^https?://[^\s/]+", url):
        raise ValidationError(
            {
                "base_url": "The register's address must start with http:// or https:// and "
                f"name a host (e.g. https://register.example.org); got {url!r}."
            }
        )
    return url.rstrip("/")


class _PageProgress(logging.Handler):
    """Passes WeasyPrint's 'laying out page N' messages of this thread to ``progress``."""

    def __init__(self, progress: ProgressFn) -> None:
        super().__init__(logging.INFO)
        self.progress = progress
        self.thread = threading.get_ident()

    def emit(self, record: logging.LogRecord) -> None:
        if record.thread != self.thread or not isinstance(record.args, tuple):
            return
        if record.msg == "Step 5 - Creating layout - Page %d" and record.args:
            self.progress("pages", int(str(record.args[0])), None)


_listening = {"count": 0, "level": logging.NOTSET}
_listening_lock = threading.Lock()


@contextlib.contextmanager
def _page_progress(progress: ProgressFn | None) -> Iterator[None]:
    """Listen to WeasyPrint's page messages while this thread lays out a document
    (other threads may be doing the same: the logger's level is restored by the last)."""
    if progress is None:
        yield
        return
    logger = logging.getLogger("weasyprint.progress")
    handler = _PageProgress(progress)
    with _listening_lock:
        if _listening["count"] == 0:
            _listening["level"] = logger.level
            if logger.getEffectiveLevel() > logging.INFO:
                logger.setLevel(logging.INFO)
        _listening["count"] += 1
        logger.addHandler(handler)
    try:
        yield
    finally:
        with _listening_lock:
            logger.removeHandler(handler)
            _listening["count"] -= 1
            if _listening["count"] == 0:
                logger.setLevel(_listening["level"])


def _document(
    *,
    kind: str,
    template: str,
    title: str,
    filename: str,
    report_id: str,
    when: dt.datetime,
    site: Site,
    content: dict[str, Any],
    context: dict[str, Any],
    progress: ProgressFn | None = None,
) -> Report:
    """Record → canonical JSON → its SHA-256 → HTML → PDF/A-3b with the JSON inside."""
    record = {
        "schema": SCHEMA,
        "report": {
            "kind": kind,
            "id": report_id,
            "title": title,
            "generated_at": iso_datetime(when),
            "generator": f"riskreg {__version__}",
        },
        **content,
    }
    data = render.record_bytes(record)
    digest = render.sha256(data)
    caution_items = cautions_of([content])
    html = render.render_html(
        template,
        doc_title=title,
        author=site.name,
        description=f"{title}. Generated {iso_datetime(when)} from the register; report {report_id}.",
        report_id=report_id,
        generated_label=render.f_datetime(iso_datetime(when)),
        w3c_generated=render.w3c_datetime(when),
        today=when.date().isoformat(),
        paper="letter" if site.units == "in" else "a4",
        caution_items=caution_items,
        recalled=cautions.RECALLED_CONSTANTS if rests_on_recalled(content) else None,
        signoff_statement=SIGNOFF_STATEMENT,
        record_name=RECORD_NAME,
        record_sha256=digest,
        **context,
    )
    with _page_progress(progress):
        pdf, pages = render.write_pdf(
            html,
            report_id=report_id,
            generated_at=when,
            record_json=data,
            description=f"The register's record behind report {report_id} (JSON, {SCHEMA})",
        )
    return Report(
        kind=kind,
        title=title,
        report_id=report_id,
        generated_at=when,
        filename=filename,
        pdf=pdf,
        html=html,
        record=record,
        record_json=data,
        record_sha256=digest,
        pages=pages,
    )


# --- one machine ---------------------------------------------------------------------------


def build_machine_report(
    session: Session,
    machine: Machine,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
    base_url: str | None = None,
) -> Report:
    """The machine's full report: cover, limits, hazards and ratings, derivations,
    measures and the choice of safeguard, PL verification, safety distances, two-hand
    controls, verification and due dates, open actions, revisions, sign-off."""
    when = _when(generated_at)
    site = machine.site
    rid = _check_report_id(report_id or f"RR-{_slug(machine.asset_tag)}-{when:{_TS}}")
    url = _register_url(site, base_url)
    rec = machine_record(session, machine, today=when.date())
    title = f"{machine.asset_tag} · {machine.name} — risk assessment"
    return _document(
        kind="machine",
        template="machine.html",
        title=title,
        filename=f"{_slug(machine.asset_tag)}-risk-assessment-{when:%Y%m%d}.pdf",
        report_id=rid,
        when=when,
        site=site,
        content={"record": rec},
        context={
            "rec": rec,
            "sections": present.machine_sections(rec, f"m{machine.id}-"),
            "register_url": f"{url}/machines/{machine.id}" if url else None,
        },
    )


# --- a site: one document, or volumes -------------------------------------------------------


def _site_summary(recs: list[dict[str, Any]]) -> dict[str, Any]:
    rows = [summary_row(r) for r in recs]
    plrs = [r["highest_plr"] for r in rows if r["highest_plr"]]
    return {
        "rows": rows,
        "machines": len(rows),
        "with_open_findings": sum(1 for r in rows if r["open_findings"]),
        "overdue": sum(r["overdue"] for r in rows),
        "open_actions": sum(r["open_actions"] for r in rows),
        "highest_plr": max(plrs) if plrs else None,
    }


def _site_document(
    site: Site,
    recs: list[dict[str, Any]],
    own_due: list[due.DueItem],
    *,
    kind: str,
    when: dt.datetime,
    report_id: str,
    url: str | None,
    volume: dict[str, Any] | None = None,
    progress: ProgressFn | None = None,
) -> Report:
    chapters = []
    first = 3 if own_due else 2
    for i, rec in enumerate(recs):
        num = str(first + i)
        mid = rec["machine"]["id"]
        chapters.append(
            {
                "rec": rec,
                "num": num,
                "anchor": f"m{mid}",
                "sections": present.machine_sections(rec, f"m{mid}-", num),
                "register_url": f"{url}/machines/{mid}" if url else None,
            }
        )
    title = f"{site.name} — site risk register report"
    if volume is not None:
        title = f"{site.name} — site report, volume {volume['number']} of {volume['of']}: {volume['name']}"
    slug = _slug(site.name)
    filename = f"{slug}-site-report-{when:%Y%m%d}.pdf"
    if volume is not None:
        filename = f"{slug}-site-report-{when:%Y%m%d}-vol{volume['number']:02d}-{_slug(volume['name'])}.pdf"
    summary = _site_summary(recs)
    content = {
        "site": site_identity(site),
        "volume": volume,
        "summary": summary,
        "site_due": [d.to_json() for d in own_due],
        "machines": recs,
    }
    return _document(
        kind=kind,
        template="site.html",
        title=title,
        filename=filename,
        report_id=report_id,
        when=when,
        site=site,
        content=content,
        context={
            "site": content["site"],
            "summary": summary,
            "site_due": content["site_due"],
            "chapters": chapters,
            "volume": volume,
            "volumes": None,
            "register_url": url,
            "site_due_num": "2" if own_due else None,
            "end_num": str(first + len(chapters)),
        },
        progress=progress,
    )


def build_site_report(
    session: Session,
    site: Site,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
    base_url: str | None = None,
    progress: ProgressFn | None = None,
) -> Report:
    """One document: a summary of every machine, then each machine's sections."""
    when = _when(generated_at)
    rid = _check_report_id(report_id or f"RR-SITE{site.id}-{when:{_TS}}")
    url = _register_url(site, base_url)
    machines = site_machines(session, site)
    recs, own = site_records(session, site, machines, today=when.date(), progress=progress)
    return _site_document(
        site, recs, own, kind="site", when=when, report_id=rid, url=url, progress=progress
    )


def _volumes_of(recs: list[dict[str, Any]], max_machines: int) -> list[tuple[str, list[Any]]]:
    """Machines grouped by area (in report order); an area too large for one volume is
    split into parts of at most ``max_machines``."""
    areas: dict[str, list[dict[str, Any]]] = {}
    for r in recs:
        areas.setdefault(r["machine"]["area"] or "Machines without an area", []).append(r)
    out: list[tuple[str, list[Any]]] = []
    for name, rows in areas.items():
        parts = [rows[i : i + max_machines] for i in range(0, len(rows), max_machines)]
        for k, part in enumerate(parts, start=1):
            out.append((name if len(parts) == 1 else f"{name}, part {k} of {len(parts)}", part))
    return out


def build_site_volumes(
    session: Session,
    site: Site,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
    base_url: str | None = None,
    progress: ProgressFn | None = None,
    max_machines: int = SINGLE_DOCUMENT_MAX_MACHINES,
) -> list[Report]:
    """A summary volume, then one volume per area (split when an area alone has more
    than ``max_machines``); each a PDF/A-3b with its own record. The summary lists
    every volume with the SHA-256 of that volume's record."""
    if max_machines < 1:
        raise ValidationError({"max_machines": f"must be at least 1; got {max_machines}"})
    when = _when(generated_at)
    rid = _check_report_id(report_id or f"RR-SITE{site.id}-{when:{_TS}}")
    url = _register_url(site, base_url)
    machines = site_machines(session, site)
    recs, own = site_records(session, site, machines, today=when.date(), progress=progress)
    groups = _volumes_of(recs, max_machines)
    n = len(groups) + 1
    volumes: list[Report] = []
    for k, (name, part) in enumerate(groups, start=2):
        if progress is not None:
            progress("volumes", k - 1, n)
        vol = {"number": k, "of": n, "name": name, "summary_id": f"{rid}-V01"}
        volumes.append(
            _site_document(
                site,
                part,
                [],
                kind="site-volume",
                when=when,
                report_id=f"{rid}-V{k:02d}",
                url=url,
                volume=vol,
                progress=progress,
            )
        )
    listing = [
        {
            "number": i,
            "name": v.record["volume"]["name"],
            "report_id": v.report_id,
            "filename": v.filename,
            "machines": [r["machine"]["asset_tag"] for r in v.record["machines"]],
            "pages": v.pages,
            "record_sha256": v.record_sha256,
        }
        for i, v in enumerate(volumes, start=2)
    ]
    if progress is not None:
        progress("volumes", n, n)
    summary = _site_summary(recs)
    slug = _slug(site.name)
    title = f"{site.name} — site report, volume 1 of {n}: summary"
    content = {
        "site": site_identity(site),
        "volume": {"number": 1, "of": n, "name": "summary"},
        "summary": summary,
        "site_due": [d.to_json() for d in own],
        "volumes": listing,
    }
    head = _document(
        kind="site-summary",
        template="site.html",
        title=title,
        filename=f"{slug}-site-report-{when:%Y%m%d}-vol01-summary.pdf",
        report_id=f"{rid}-V01",
        when=when,
        site=site,
        content=content,
        context={
            "site": content["site"],
            "summary": summary,
            "site_due": content["site_due"],
            "chapters": [],
            "volume": content["volume"],
            "volumes": listing,
            "register_url": url,
            "site_due_num": "2" if own else None,
            "end_num": "4" if own else "3",
        },
        progress=progress,
    )
    return [head, *volumes]


def wants_volumes(session: Session, site: Site) -> bool:
    """True when the site has more active machines than one document can hold."""
    return len(site_machines(session, site)) > SINGLE_DOCUMENT_MAX_MACHINES


def build_site(
    session: Session,
    site: Site,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
    base_url: str | None = None,
    progress: ProgressFn | None = None,
    volumes: bool | None = None,
) -> list[Report]:
    """The site report as one document, or as volumes: ``volumes=None`` chooses by the
    number of machines (above :data:`SINGLE_DOCUMENT_MAX_MACHINES`, volumes)."""
    if volumes is None:
        volumes = wants_volumes(session, site)
    kwargs: dict[str, Any] = {
        "generated_at": generated_at,
        "report_id": report_id,
        "base_url": base_url,
        "progress": progress,
    }
    if volumes:
        return build_site_volumes(session, site, **kwargs)
    return [build_site_report(session, site, **kwargs)]


# --- what is due ------------------------------------------------------------------------------


def build_due_report(
    session: Session,
    site: Site,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
    base_url: str | None = None,
    within_days: int = 30,
) -> Report:
    """Overdue items, then those due within ``within_days`` days, with the basis of
    every interval."""
    if not 0 <= within_days <= 3650:
        raise ValidationError(
            {"within_days": f"Give 0 to 3650 days for what is upcoming; got {within_days}."}
        )
    when = _when(generated_at)
    rid = _check_report_id(report_id or f"RR-DUE{site.id}-{when:{_TS}}")
    url = _register_url(site, base_url)
    rows = due.due_items(session, site, today=when.date())
    items = [d.to_json() for d in rows]
    shown = [d for d in items if d["days_overdue"] >= -within_days]
    intervals = [
        {
            "kind": k,
            "label": info.label,
            "days": verification.interval_days(session, site, k),
            "default_days": info.default_days,
            "basis": info.source,
        }
        for k, info in verification.KINDS.items()
    ] + [
        {"kind": k, "label": due.LABELS[k], "days": None, "default_days": None, "basis": text}
        for k, text in due.OTHER_KINDS.items()
    ]
    title = f"{site.name} — verifications due and overdue"
    content = {
        "site": site_identity(site),
        "today": when.date().isoformat(),
        "within_days": within_days,
        "items": shown,
        "counts": due.counts(rows),
        "intervals": intervals,
    }
    return _document(
        kind="due",
        template="due.html",
        title=title,
        filename=f"{_slug(site.name)}-due-{when:%Y%m%d}.pdf",
        report_id=rid,
        when=when,
        site=site,
        content=content,
        context={
            "site": content["site"],
            "items": shown,
            "overdue": [d for d in shown if d["days_overdue"] > 0],
            "upcoming": [d for d in shown if d["days_overdue"] <= 0],
            "within_days": within_days,
            "intervals": intervals,
            "register_url": url,
        },
    )


# --- one measurement ----------------------------------------------------------------------


def build_certificate(
    session: Session,
    measurement: StoppingTimeMeasurement,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
    base_url: str | None = None,
) -> Report:
    """One stopping-time measurement on one page: its trials, the T used and every
    distance check stored with it, with the derivations."""
    when = _when(generated_at)
    machine = measurement.machine
    site = machine.site
    rid = _check_report_id(
        report_id
        or f"RR-ST-{_slug(machine.asset_tag)}-{measurement.measured_on:%Y%m%d}-{when:{_TS}}"
    )
    url = _register_url(site, base_url)
    meas = measurement_record(session, measurement)
    title = f"{machine.asset_tag} · stopping-time measurement of {measurement.measured_on}"
    content = {
        "site": site_identity(site),
        "machine": machine_identity(machine),
        "measurement": meas,
    }
    report: Report | None = None
    for html_class in ("certificate", "certificate dense"):
        report = _certificate(
            site, machine, measurement, meas, content, title, rid, when, url, html_class
        )
        if report.pages == 1:
            break
    assert report is not None
    return report


def _certificate(
    site: Site,
    machine: Machine,
    measurement: StoppingTimeMeasurement,
    meas: dict[str, Any],
    content: dict[str, Any],
    title: str,
    rid: str,
    when: dt.datetime,
    url: str | None,
    html_class: str,
) -> Report:
    return _document(
        kind="certificate",
        template="certificate.html",
        title=title,
        filename=f"{_slug(machine.asset_tag)}-stopping-time-{measurement.measured_on:%Y%m%d}.pdf",
        report_id=rid,
        when=when,
        site=site,
        content=content,
        context={
            "site": content["site"],
            "machine": content["machine"],
            "m": meas,
            "units": site.units,
            "html_class": html_class,
            "register_url": f"{url}/machines/{machine.id}" if url else None,
        },
    )


def measurement_on(
    session: Session, machine: Machine, on: dt.date | None = None
) -> StoppingTimeMeasurement:
    """The machine's latest measurement, or its latest of the day ``on``."""
    from riskreg.services import safeguards

    ms = safeguards.measurements_of(machine)
    if not ms:
        raise NotFound(f"{machine.asset_tag} has no stopping-time measurement.")
    if on is None:
        return ms[0]
    for m in ms:
        if m.measured_on == on:
            return m
    dates = ", ".join(sorted({m.measured_on.isoformat() for m in ms}))
    raise NotFound(f"{machine.asset_tag} has no measurement on {on}; it has: {dates}.")


# --- labels ----------------------------------------------------------------------------------


def build_labels(
    session: Session,
    site: Site,
    area_name: str,
    base_url: str | None = None,
    *,
    generated_at: dt.datetime | None = None,
    report_id: str | None = None,
) -> Report:
    """A sheet of labels, one per active machine of the area: asset tag, name and a QR
    code of the machine's page in the register (``{base_url}/machines/{id}``)."""
    area = session.scalar(select(Area).where(Area.site_id == site.id, Area.name == area_name))
    if area is None:
        names = ", ".join(a.name for a in site.areas) or "none yet"
        raise NotFound(f"{site.name} has no area named {area_name!r}. Areas: {names}.")
    url = _register_url(site, base_url)
    if url is None:
        raise ValidationError(
            {
                "base_url": f"{site.name} has no web address set for the register: give the "
                "address the QR codes should open (e.g. https://register.example.org)."
            }
        )
    when = _when(generated_at)
    rid = _check_report_id(report_id or f"RR-LBL{area.id}-{when:{_TS}}")
    machines = site_machines(session, site, area=area.name)
    labels = [
        {
            "machine_id": m.id,
            "asset_tag": m.asset_tag,
            "name": m.name,
            "kind_label": machine_identity(m)["kind_label"],
            "location": m.location,
            "do_not_operate": m.do_not_operate,
            "url": f"{url}/machines/{m.id}",
        }
        for m in machines
    ]
    title = f"{site.name} · {area.name} — machine labels"
    content = {"site": site_identity(site), "area": area.name, "labels": labels}
    return _document(
        kind="labels",
        template="labels.html",
        title=title,
        filename=f"{_slug(site.name)}-{_slug(area.name)}-labels.pdf",
        report_id=rid,
        when=when,
        site=site,
        content=content,
        context={
            "site": content["site"],
            "area": area.name,
            "labels": labels,
            "html_class": "labels",
        },
    )
