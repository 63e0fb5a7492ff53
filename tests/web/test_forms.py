"""Forms through the test client: field-level messages with nothing stored, the
live rating preview, uploads, stale versions, archive with confirmation and the
"do not operate" tag."""

from __future__ import annotations

import datetime as dt
import io
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from flask.testing import FlaskClient
from webtools import (
    JPEG_BYTES,
    Seed,
    Store,
    all_field_errors,
    field_errors,
    input_value,
)

from riskreg.model import (
    EvidenceFile,
    Hazard,
    Machine,
    ProtectiveMeasure,
    RiskRating,
    SafetyFunction,
    Task,
)

Client = Callable[[str], FlaskClient]


def _evidence_files(instance: Path) -> list[Path]:
    root = instance / "evidence"
    return sorted(p for p in root.rglob("*") if p.is_file()) if root.exists() else []


def _new_machine(**over: Any) -> dict[str, Any]:
    data = {
        "asset_tag": "P-50",
        "name": "Gap press",
        "kind": "mechanical_press",
        "area_id": "",
        "year": "",
    }
    data.update(over)
    return data


def _new_hazard(seed: Seed, **over: Any) -> dict[str, Any]:
    data = {
        "task_id": str(seed.task_id),
        "hazard_group": "mechanical",
        "hazard_type": "shearing",
        "event": "Fingers between the stripper plate and the punch",
        "harm": "Cut fingers",
        "method": "iso13849",
        "stage": "initial",
        "s": "S2",
        "f": "F2",
        "p": "P1",
    }
    data.update(over)
    return data


# --- field-level messages, nothing stored ------------------------------------------


def test_machine_form_messages_next_to_fields(client_as: Client, seed: Seed, store: Store) -> None:
    before = store.count(Machine)
    resp = client_as("assessor").post(
        f"/sites/{seed.site_id}/machines/new",
        data=_new_machine(asset_tag="", name="", year="1850"),
    )
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert field_errors(html, "asset_tag") == ["Enter the asset tag."]
    assert field_errors(html, "name") == ["Enter a name."]
    assert field_errors(html, "year") == ["Enter a year from 1900 on, or leave it empty."]
    assert field_errors(html, "kind") == []
    assert "Some fields need a fix" in html
    assert store.count(Machine) == before


def test_service_rule_messages_land_on_their_fields(
    client_as: Client, seed: Seed, store: Store
) -> None:
    """Rules only the service knows (a used asset tag, a year in the future)."""
    before = store.count(Machine)
    next_year = dt.date.today().year + 1
    resp = client_as("assessor").post(
        f"/sites/{seed.site_id}/machines/new",
        data=_new_machine(asset_tag="P-01", year=str(next_year)),
    )
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert field_errors(html, "asset_tag") == ["Asset tag 'P-01' is already used at Test Works."]
    [year_msg] = field_errors(html, "year")
    assert f"from 1900 to {next_year - 1}" in year_msg
    assert store.count(Machine) == before


def test_hazard_form_messages_next_to_fields(client_as: Client, seed: Seed, store: Store) -> None:
    hazards, ratings = store.count(Hazard), store.count(RiskRating)
    resp = client_as("assessor").post(
        f"/machines/{seed.machine_id}/hazards/new",
        data=_new_hazard(seed, hazard_type="", event="", s="S2", f="", p=""),
    )
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert field_errors(html, "event") == [
        "Say what could happen (e.g. 'hand crushed between the dies')."
    ]
    # The rating's messages sit next to the F and P choices, not in a list at the top.
    assert field_errors(html, "f") == ["Choose F1 or F2."]
    assert field_errors(html, "p") == ["Choose P1 or P2."]
    assert field_errors(html, "s") == []
    assert (store.count(Hazard), store.count(RiskRating)) == (hazards, ratings)


def test_override_without_its_source_is_refused_field_by_field(
    client_as: Client, seed: Seed, store: Store
) -> None:
    ratings = store.count(RiskRating)
    resp = client_as("assessor").post(
        f"/hazards/{seed.hazard_id}/rate",
        data={
            "method": "iso13849",
            "stage": "initial",
            "s": "S2",
            "f": "F1",
            "p": "P1",
            "override_level": "e",
        },
    )
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert field_errors(html, "override_source") == [
        "Name the standard and clause (or regulation) that sets this level."
    ]
    assert field_errors(html, "override_justification") == [
        "Explain why the derived level does not apply."
    ]
    assert field_errors(html, "override_approved_by") == ["Name who approved the override."]
    assert store.count(RiskRating) == ratings


@pytest.mark.parametrize(
    ("path", "data", "field", "message", "model"),
    [
        (
            "/machines/{m}/tasks/new",
            {"phase": "operation", "description": ""},
            "description",
            "Say what is done.",
            Task,
        ),
        (
            "/machines/{m}/functions/new",
            {"name": "Stop on gate opening", "response_time_ms": "20000"},
            "response_time_ms",
            "Enter 0 to 10000 ms, or leave it empty.",
            SafetyFunction,
        ),
        (
            "/machines/{m}/functions/new",
            {"name": "", "response_time_ms": "40"},
            "name",
            "Name the function.",
            SafetyFunction,
        ),
        (
            "/machines/{m}/measures/new",
            {"kind": "fixed_guard", "status": "proposed", "description": "Rear fence"},
            "hazard_ids",
            "Choose the hazard or hazards this measure reduces.",
            ProtectiveMeasure,
        ),
    ],
)
def test_small_forms_messages_next_to_fields(
    client_as: Client,
    seed: Seed,
    store: Store,
    path: str,
    data: dict[str, str],
    field: str,
    message: str,
    model: type[Any],
) -> None:
    before = store.count(model)
    resp = client_as("assessor").post(path.format(m=seed.machine_id), data=data)
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), field) == [message]
    assert store.count(model) == before


def test_do_not_operate_needs_a_reason_said_once(
    client_as: Client, seed: Seed, store: Store
) -> None:
    resp = client_as("assessor").post(
        f"/machines/{seed.machine_id}/do-not-operate", data={"flag": "y", "reason": ""}
    )
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert field_errors(html, "reason") == ["Say why the machine must not be operated."]
    assert all_field_errors(html) == ["Say why the machine must not be operated."]
    assert store.machine(seed.machine_id, "do_not_operate") is False


def test_login_form_messages_next_to_fields(app: Any) -> None:
    resp = app.test_client().post("/login", data={"email": "", "password": ""})
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert field_errors(html, "email") == ["Enter your e-mail address."]
    assert field_errors(html, "password") == ["Enter your password."]


# --- live rating preview ------------------------------------------------------------


@pytest.mark.parametrize(
    ("s", "f", "p", "plr"),
    [
        # ISO 13849-1:2015 Annex A, Figure A.1 risk graph [std, from memory]
        ("S2", "F1", "P2", "d"),
        ("S1", "F1", "P1", "a"),
        ("S1", "F2", "P2", "c"),
        ("S2", "F2", "P2", "e"),
    ],
)
def test_rating_preview_gives_the_risk_graph_level(
    client_as: Client, seed: Seed, s: str, f: str, p: str, plr: str
) -> None:
    resp = client_as("viewer").get(
        "/api/rating-preview",
        query_string={
            "method": "iso13849",
            "severity": s,
            "frequency": f,
            "avoidance": p,
            "machine": seed.machine_id,
        },
    )
    assert resp.status_code == 200 and resp.mimetype == "application/json"
    body = resp.get_json()
    assert body["level"] == plr
    assert body["edition"] == "2015"
    assert body["steps"] and body["warnings"]


def test_rating_preview_sil_and_b11(client_as: Client) -> None:
    client = client_as("assessor")
    sil = client.get(
        "/api/rating-preview",
        query_string={
            "method": "iec62061",
            "severity": "3",
            "frequency": "5",
            "probability": "4",
            "avoidance": "3",
        },
    ).get_json()
    # IEC 62061 Annex A: Se 3, CI = Fr 5 + Pr 4 + Av 3 = 12 (column 11–13) → SIL 2
    # [std, from memory]
    assert sil["level"] == "SIL 2"
    b11 = client.get(
        "/api/rating-preview",
        query_string={"method": "ansi_b11", "severity": "serious", "probability": "likely"},
    ).get_json()
    # ANSI B11.0 example matrix: serious × likely → high [std, from memory]
    assert b11["level"] == "high"


def test_rating_preview_names_what_is_missing(client_as: Client) -> None:
    resp = client_as("assessor").get(
        "/api/rating-preview", query_string={"method": "iso13849", "severity": "S2"}
    )
    assert resp.status_code == 200
    assert resp.get_json() == {"level": None, "missing": ["avoidance", "frequency"]}


def test_saved_hazard_stores_the_previewed_level(
    client_as: Client, seed: Seed, store: Store
) -> None:
    client = client_as("assessor")
    resp = client.post(f"/machines/{seed.machine_id}/hazards/new", data=_new_hazard(seed))
    assert resp.status_code == 302
    with store.session() as s:
        h = s.query(Hazard).order_by(Hazard.id.desc()).first()
        assert h is not None
        [r] = h.ratings
        # ISO 13849-1:2015 Annex A: S2/F2/P1 → PLr d [std, from memory]
        assert (r.method, r.stage, r.derived_level) == ("iso13849", "initial", "d")


# --- uploads --------------------------------------------------------------------------


@pytest.mark.parametrize(
    "content",
    [
        b"%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\n",
        b"just some text saved with a .jpg name\n",
        b"MZ\x90\x00\x03\x00\x00\x00\x04\x00\x00\x00\xff\xff",
    ],
    ids=["pdf", "text", "program"],
)
def test_non_image_named_jpg_is_refused_as_hazard_photo(
    client_as: Client, seed: Seed, store: Store, instance_dir: Path, content: bytes
) -> None:
    hazards, files = store.count(Hazard), store.count(EvidenceFile)
    on_disk = _evidence_files(instance_dir)
    data = _new_hazard(seed, photo=(io.BytesIO(content), "die-area.jpg", "image/jpeg"))
    resp = client_as("assessor").post(
        f"/machines/{seed.machine_id}/hazards/new", data=data, content_type="multipart/form-data"
    )
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), "photo") == [
        "'die-area.jpg' is not an accepted file by its content (accepted: JPEG, PNG, WEBP)."
    ]
    assert (store.count(Hazard), store.count(EvidenceFile)) == (hazards, files)
    assert _evidence_files(instance_dir) == on_disk


def test_real_photo_is_stored_and_shown(
    client_as: Client, seed: Seed, store: Store, instance_dir: Path
) -> None:
    """The control for the refusal above: JPEG content is accepted and served back."""
    client = client_as("assessor")
    photo = JPEG_BYTES + b"another picture"
    data = _new_hazard(seed, photo=(io.BytesIO(photo), "die-area.jpg", "image/jpeg"))
    resp = client.post(
        f"/machines/{seed.machine_id}/hazards/new", data=data, content_type="multipart/form-data"
    )
    assert resp.status_code == 302
    with store.session() as s:
        h = s.query(Hazard).order_by(Hazard.id.desc()).first()
        assert h is not None and h.photo is not None
        file_id, kind = h.photo_id, h.photo.content_type
    assert kind == "image/jpeg"
    shown = client.get(f"/files/{file_id}?view=1")
    assert shown.status_code == 200 and shown.data == photo and shown.mimetype == "image/jpeg"


def test_oversize_upload_gets_413_with_a_clear_page(
    client_as: Client, seed: Seed, store: Store, instance_dir: Path
) -> None:
    client = client_as("assessor")
    hazards, files = store.count(Hazard), store.count(EvidenceFile)
    on_disk = _evidence_files(instance_dir)
    big = JPEG_BYTES + bytes(26 * 1024 * 1024)  # over the app's 25 MB request limit
    data = _new_hazard(seed, photo=(io.BytesIO(big), "huge.jpg", "image/jpeg"))
    resp = client.post(
        f"/machines/{seed.machine_id}/hazards/new", data=data, content_type="multipart/form-data"
    )
    assert resp.status_code == 413
    html = resp.get_data(as_text=True)
    assert "File too large" in html and "larger than 25 MB" in html
    assert resp.headers["X-Content-Type-Options"] == "nosniff"
    assert (store.count(Hazard), store.count(EvidenceFile)) == (hazards, files)
    assert _evidence_files(instance_dir) == on_disk


def test_upload_over_the_evidence_limit_is_refused_with_a_message(
    client_as: Client, seed: Seed, store: Store
) -> None:
    """Between the evidence limit (20 MB) and the request limit (25 MB): a field message."""
    hazards = store.count(Hazard)
    big = JPEG_BYTES + bytes(21 * 1024 * 1024)
    data = _new_hazard(seed, photo=(io.BytesIO(big), "big.jpg", "image/jpeg"))
    resp = client_as("assessor").post(
        f"/machines/{seed.machine_id}/hazards/new", data=data, content_type="multipart/form-data"
    )
    assert resp.status_code == 400
    [msg] = field_errors(resp.get_data(as_text=True), "photo")
    assert "the limit is 20 MB" in msg
    assert store.count(Hazard) == hazards


# --- stale versions ---------------------------------------------------------------------


def _edit_machine(html: str, **over: str) -> dict[str, str]:
    data = {
        "version": input_value(html, "version"),
        "asset_tag": input_value(html, "asset_tag"),
        "name": input_value(html, "name"),
        "kind": "mechanical_press",
        "area_id": "",
        "year": input_value(html, "year"),
    }
    data.update(over)
    return data


def test_stale_machine_edit_gets_409(client_as: Client, seed: Seed, store: Store) -> None:
    url = f"/machines/{seed.machine_id}/edit"
    first, second = client_as("assessor"), client_as("approver")
    page_1 = first.get(url).get_data(as_text=True)
    page_2 = second.get(url).get_data(as_text=True)
    assert input_value(page_1, "version") == input_value(page_2, "version")
    assert first.post(url, data=_edit_machine(page_1, name="Press one")).status_code == 302
    resp = second.post(url, data=_edit_machine(page_2, name="Press two"))
    assert resp.status_code == 409
    assert "changed by someone else" in resp.get_data(as_text=True)
    assert store.machine(seed.machine_id, "name") == "Press one"
    # After a reload the second person's change goes through.
    page_3 = second.get(url).get_data(as_text=True)
    assert second.post(url, data=_edit_machine(page_3, name="Press two")).status_code == 302
    assert store.machine(seed.machine_id, "name") == "Press two"


def _edit_hazard(html: str, seed: Seed, **over: str) -> dict[str, str]:
    data = _new_hazard(seed, version=input_value(html, "version"), s="S2", f="F1", p="P2")
    data.update(over)
    return data


def test_stale_hazard_edit_gets_409(client_as: Client, seed: Seed, store: Store) -> None:
    url = f"/hazards/{seed.hazard_id}/edit"
    first, second = client_as("assessor"), client_as("admin")
    page_1 = first.get(url).get_data(as_text=True)
    page_2 = second.get(url).get_data(as_text=True)
    ratings = store.count(RiskRating)
    resp = first.post(url, data=_edit_hazard(page_1, seed, event="First change"))
    assert resp.status_code == 302
    resp = second.post(url, data=_edit_hazard(page_2, seed, event="Second change", p="P1"))
    assert resp.status_code == 409
    assert "changed by someone else" in resp.get_data(as_text=True)
    assert store.hazard(seed.hazard_id, "event") == "First change"
    assert store.count(RiskRating) == ratings  # the stale form's new rating was not stored


# --- archive ---------------------------------------------------------------------------


def test_archive_asks_then_archives_without_erasing(
    client_as: Client, seed: Seed, store: Store
) -> None:
    client = client_as("assessor")
    url = f"/hazards/{seed.hazard_id}/archive"
    page = client.get(url)
    assert page.status_code == 200
    html = page.get_data(as_text=True)
    assert f"Archive hazard #{seed.hazard_id}?" in html and 'method="post"' in html
    assert store.hazard(seed.hazard_id, "archived") is False  # asking changes nothing
    hazards = store.count(Hazard)
    resp = client.post(url)
    assert resp.status_code == 302
    assert store.count(Hazard) == hazards
    assert store.hazard(seed.hazard_id, "archived") is True
    machine_page = client.get(f"/machines/{seed.machine_id}").get_data(as_text=True)
    assert "Archived hazards (1)" in machine_page
    assert f'id="h{seed.hazard_id}"' not in machine_page  # out of the live list
    # And it can be restored the same way.
    assert "Restore hazard" in client.get(url + "?restore=1").get_data(as_text=True)
    assert client.post(url + "?restore=1").status_code == 302
    assert store.hazard(seed.hazard_id, "archived") is False


# --- "do not operate" ------------------------------------------------------------------


def test_do_not_operate_tag_on_overview_and_machine_page(
    client_as: Client, seed: Seed, store: Store
) -> None:
    client = client_as("assessor")
    overview = f"/sites/{seed.site_id}"
    machine = f"/machines/{seed.machine_id}"
    assert "DO NOT OPERATE" not in client.get(overview).get_data(as_text=True)
    assert "DO NOT OPERATE" not in client.get(machine).get_data(as_text=True)
    resp = client.post(
        f"{machine}/do-not-operate", data={"flag": "y", "reason": "Brake worn, stops too late"}
    )
    assert resp.status_code == 302
    viewer = client_as("viewer")
    html = viewer.get("/", follow_redirects=True).get_data(as_text=True)
    assert "DO NOT OPERATE" in html and 'class="mrow is-dno"' in html
    page = viewer.get(machine).get_data(as_text=True)
    assert "DO NOT OPERATE" in page and "Brake worn, stops too late" in page
    # Removing the tag removes it from both pages.
    assert client.post(f"{machine}/do-not-operate", data={"reason": ""}).status_code == 302
    assert store.machine(seed.machine_id, "do_not_operate") is False
    assert "DO NOT OPERATE" not in viewer.get(overview).get_data(as_text=True)
    assert "DO NOT OPERATE" not in viewer.get(machine).get_data(as_text=True)
