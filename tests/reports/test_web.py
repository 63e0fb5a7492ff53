"""Report downloads on the web: attachments, and the site report made in the background."""

from __future__ import annotations

import re
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from conftest import Pdf, machine, sha256, small_site, the_site
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy.orm import Session

from riskreg.services import safeguards
from riskreg.web import create_app

PASSWORD = "demo-password-2026"  # the demo's (see seed_demo.build)


@pytest.fixture(scope="module")
def app(demo_path: Path, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Flask]:
    instance = tmp_path_factory.mktemp("instance")
    mp = pytest.MonkeyPatch()
    mp.setenv("RISKREG_INSTANCE", str(instance))
    app = create_app(
        {
            "DATABASE_URL": f"sqlite:///{demo_path}",
            "SECRET_KEY": "test",
            "TESTING": True,
            "WTF_CSRF_ENABLED": False,
        }
    )
    yield app
    mp.undo()
    app.extensions["riskreg.engine"].dispose()


@pytest.fixture(scope="module")
def client(app: Flask) -> FlaskClient:
    c = app.test_client()
    r = c.post("/login", data={"email": "viewer@ostrander.invalid", "password": PASSWORD})
    assert r.status_code == 302, r.get_data(as_text=True)
    return c


def _is_pdf_attachment(resp: Any, name_start: str) -> None:
    assert resp.status_code == 200, resp.get_data(as_text=True)[:500]
    assert resp.mimetype == "application/pdf"
    disposition = resp.headers["Content-Disposition"]
    assert disposition.startswith("attachment;"), disposition
    assert f"filename={name_start}" in disposition
    assert resp.data.startswith(b"%PDF-1.7")


def test_downloads_need_a_login(app: Flask, demo: Session) -> None:
    anonymous = app.test_client()
    r = anonymous.get(f"/machines/{machine(demo, 'PR-101').id}/report.pdf")
    assert r.status_code == 302 and "/login" in r.headers["Location"]


def test_machine_report_download(client: FlaskClient, demo: Session, tmp_path: Path) -> None:
    m = machine(demo, "PR-101")
    r = client.get(f"/machines/{m.id}/report.pdf")
    _is_pdf_attachment(r, "PR-101-risk-assessment-")
    pdf = Pdf(r.data, tmp_path / "m.pdf")
    assert pdf.record()["report"]["id"] == r.headers["X-Report-Id"]
    assert pdf.printed_sha256() == sha256(pdf.attachment())
    # ISO 13855:2010 6.2.3 [std, from memory]: 500 mm (arithmetic in test_machine_report)
    assert "Required 500 mm, installed 450 mm: FAILS" in pdf.flat()


def test_certificate_due_and_labels_downloads(client: FlaskClient, demo: Session) -> None:
    m = machine(demo, "PR-101")
    _is_pdf_attachment(client.get(f"/machines/{m.id}/certificate.pdf"), "PR-101-stopping-time-")
    latest = safeguards.latest_measurement(m)
    assert latest is not None
    _is_pdf_attachment(client.get(f"/measurements/{latest.id}/certificate.pdf"), "PR-101-stopping")
    site = the_site(demo)
    _is_pdf_attachment(
        client.get(f"/sites/{site.id}/due-report.pdf"), "Ostrander-Vale-Pressworks-due-"
    )
    area = next(a for a in site.areas if a.name == "Fabrication")
    _is_pdf_attachment(
        client.get(f"/areas/{area.id}/labels.pdf"), "Ostrander-Vale-Pressworks-Fabrication-labels"
    )


def test_missing_things_are_404_with_a_message(client: FlaskClient, demo: Session) -> None:
    never = machine(demo, "CV-601")
    r = client.get(f"/machines/{never.id}/certificate.pdf")
    assert r.status_code == 404
    assert "has no stopping-time measurement" in r.get_data(as_text=True)
    assert client.get("/measurements/999999/certificate.pdf").status_code == 404
    assert client.get("/areas/999999/labels.pdf").status_code == 404
    assert client.get("/reports/not-a-job-id-at-all").status_code == 404
    r = client.get(f"/sites/{the_site(demo).id}/due-report.pdf?within=soon")
    assert r.status_code == 400


def test_the_site_report_is_made_in_the_background(
    client: FlaskClient, demo: Session, tmp_path: Path
) -> None:
    site = small_site(demo)
    demo.commit()
    r = client.post(f"/sites/{site.id}/report")
    assert r.status_code == 303
    status_url = r.headers["Location"]
    assert re.fullmatch(r"/reports/[A-Za-z0-9_-]+", status_url)
    # asking again while it runs gives the same job
    again = client.post(f"/sites/{site.id}/report")
    page = client.get(status_url)
    seen_running = "Refresh" in page.headers
    if seen_running:
        assert again.headers["Location"] == status_url
        html = page.get_data(as_text=True)
        assert '<meta http-equiv="refresh" content="3">' in html
        # the page works without inline script (the CSP forbids it)
        assert not re.search(r"<script(?![^>]*\bsrc=)", html)
    deadline = time.monotonic() + 120
    while "Refresh" in page.headers and time.monotonic() < deadline:
        time.sleep(0.5)
        page = client.get(status_url)
    html = page.get_data(as_text=True)
    assert "Refresh" not in page.headers, "the report did not finish in time"
    assert "The report is ready" in html, html
    links = re.findall(r'href="(/reports/[^"]+\.pdf)"', html)
    assert len(links) == 1
    r = client.get(links[0])
    _is_pdf_attachment(r, "Small-Works-site-report-")
    pdf = Pdf(r.data, tmp_path / "site.pdf")
    assert [x["machine"]["asset_tag"] for x in pdf.record()["machines"]] == ["A-1", "A-2", "B-1"]
    assert pdf.printed_sha256() == sha256(pdf.attachment())
    assert client.get(status_url.replace("/reports/", "/reports/x") + "/0.pdf").status_code == 404


def test_the_report_links_partial(app: Flask, demo: Session) -> None:
    from flask import render_template

    site = the_site(demo)
    m = machine(demo, "PR-101")
    with app.test_request_context():
        for_machine = render_template("_report_links.html", machine=m)
        for_site = render_template("_report_links.html", site=site)
    assert f'href="/machines/{m.id}/report.pdf"' in for_machine
    assert f'action="/sites/{site.id}/report"' in for_site
    assert f'href="/sites/{site.id}/due-report.pdf"' in for_site
    assert "labels.pdf" not in for_site  # one link per area, beside its heading


def test_the_overview_links_each_area_to_its_labels(client: FlaskClient, demo: Session) -> None:
    site = the_site(demo)
    html = client.get(f"/sites/{site.id}").get_data(as_text=True)
    assert len(site.areas) == 3
    for a in site.areas:
        assert f'href="/areas/{a.id}/labels.pdf"' in html
