"""Keeping safeguards trusted, through the test client: verification records with
their files, the "not trusted" banner, start-of-shift checks, lockout procedures,
the due board and its filters, instruments, intervals, the site's corrective actions
with closing evidence, and the iCalendar feed behind a revocable link."""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import re
import struct
import zlib
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import Engine, select
from trustseed import CHECKLIST, TrustSeed, add_trust_records
from webtools import Seed, Store, field_errors

from riskreg.db import session_factory
from riskreg.model import (
    CalendarToken,
    CorrectiveAction,
    EvidenceFile,
    Instrument,
    LockoutProcedure,
    Machine,
    Safeguard,
    ShiftCheck,
    ShiftChecklist,
    Verification,
    VerificationInterval,
)
from riskreg.services import audit, due, register, safeguards, verification
from riskreg.web import ical

Client = Callable[[str], FlaskClient]
TODAY = dt.date.today()
TOMORROW = (TODAY + dt.timedelta(days=1)).isoformat()
PDF = b"%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\ntrailer << /Root 1 0 R >>\n%%EOF\n"
ELF = b"\x7fELF\x02\x01\x01\x00" + bytes(200)  # the start of a Linux executable
CSV = b"trial,stop_ms\n1,182\n2,186\n"


def png(width: int = 4, height: int = 3) -> bytes:
    """A real (tiny, grey) PNG image: signature, IHDR, IDAT, IEND (PNG spec, ISO/IEC 15948)."""

    def chunk(kind: bytes, body: bytes) -> bytes:
        return (
            struct.pack(">I", len(body))
            + kind
            + body
            + struct.pack(">I", zlib.crc32(kind + body) & 0xFFFFFFFF)
        )

    raw = b"".join(b"\x00" + b"\x80" * width for _ in range(height))
    return (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0))
        + chunk(b"IDAT", zlib.compress(raw))
        + chunk(b"IEND", b"")
    )


@pytest.fixture
def ts(seed: Seed, engine: Engine, instance_dir: Path) -> TrustSeed:
    return add_trust_records(engine, seed, instance_dir)


def _files_on_disk(instance: Path) -> list[Path]:
    root = instance / "evidence"
    return sorted(p for p in root.rglob("*") if p.is_file()) if root.exists() else []


def _form(ts: TrustSeed, **over: Any) -> dict[str, Any]:
    data: dict[str, Any] = {
        "safeguard_id": str(ts.safeguard_id),
        "kind": "functional_test",
        "result": "pass",
        "performed_on": TODAY.isoformat(),
        "performed_by": "Maintenance fitter",
        "measured_values": "",
        "notes": "",
        "press_serial": "",
        "signature": "",
        "instrument_id": "",
    }
    data.update(over)
    return data


def _state(store: Store, instance: Path, ts: TrustSeed) -> tuple[Any, ...]:
    return (
        store.count(Verification),
        store.count(EvidenceFile),
        store.count(CorrectiveAction),
        store.value(Safeguard, ts.safeguard_id, "trusted"),
        _files_on_disk(instance),
    )


def _post(client: FlaskClient, url: str, data: dict[str, Any]) -> Any:
    return client.post(url, data=data, content_type="multipart/form-data")


# --- recording a verification -----------------------------------------------------------


def test_form_is_prefilled_for_the_phone(client_as: Client, ts: TrustSeed) -> None:
    url = f"/machines/{ts.machine_id}/verifications/new?kind=inspection&safeguard={ts.safeguard_id}"
    html = client_as("assessor").get(url).get_data(as_text=True)
    assert re.search(r'<input type="radio" name="kind" value="inspection"[^>]*checked', html)
    assert re.search(
        rf'<option selected value="{ts.safeguard_id}">|<option value="{ts.safeguard_id}" selected',
        html,
    )
    assert f'value="{TODAY.isoformat()}"' in html and 'value="Anton Fieldwork"' in html
    # every kind shows where its interval comes from
    for info in verification.KINDS.values():
        assert info.label in html
    assert "commonly yearly [practice]" in html and "29 CFR 1910.217(e)(1)(ii)" in html
    # the file input takes several files, photos from the camera, PDFs and CSV exports
    tag = re.search(r'<input id="files"[^>]*>', html)
    assert tag is not None
    for attr in (
        'type="file"',
        "multiple",
        'accept="image/*,application/pdf,text/csv"',
        'capture="environment"',
    ):
        assert attr in tag.group(0)


def test_failed_test_with_files_marks_not_trusted_and_shows_hashes(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("assessor")
    photo, sheet = png(), PDF
    resp = _post(
        client,
        f"/machines/{ts.machine_id}/verifications/new",
        _form(
            ts,
            result="fail",
            notes="Beam 3 did not stop the slide",
            measured_values="test rod 14 mm",
            files=[(io.BytesIO(photo), "beam3.png"), (io.BytesIO(sheet), "report.pdf")],
        ),
    )
    assert resp.status_code == 302, resp.get_data(as_text=True)
    page = client.get(resp.headers["Location"])
    html = page.get_data(as_text=True)
    # SHA-256 of the bytes sent (FIPS 180-4, computed here by hashlib)
    for content, name in ((photo, "beam3.png"), (sheet, "report.pdf")):
        assert hashlib.sha256(content).hexdigest() in html and name in html
    with store.session() as s:
        v = s.scalars(select(Verification).order_by(Verification.id.desc())).first()
        assert v is not None and v.result == "fail" and len(v.evidence) == 2
        file_ids = [f.id for f in v.evidence]
        action = s.scalar(select(CorrectiveAction).where(CorrectiveAction.verification_id == v.id))
        assert action is not None and action.status == "open"
    # each file is served as an attachment, byte for byte
    for fid, content in zip(file_ids, (photo, sheet), strict=True):
        got = client.get(f"/files/{fid}")
        assert got.status_code == 200 and got.data == content
        assert got.headers["Content-Disposition"].startswith("attachment")
    assert store.value(Safeguard, ts.safeguard_id, "trusted") is False
    machine = client.get(f"/machines/{ts.machine_id}").get_data(as_text=True)
    banner = machine.split('id="not-trusted"', 1)
    assert len(banner) == 2, "no NOT TRUSTED banner"
    # the banner comes first on the page, names the safeguard and links it
    assert machine.index('id="not-trusted"') < machine.index("<h1")
    assert f'href="/safeguards/{ts.safeguard_id}">Front light curtain</a>' in banner[1][:400]
    assert "Verification history" in machine and "beam3.png" in machine
    assert hashlib.sha256(photo).hexdigest() in machine
    assert "Front light curtain: functional test by maintenance failed" in machine


def test_a_later_pass_makes_it_trusted_again(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("assessor")
    url = f"/machines/{ts.machine_id}/verifications/new"
    assert _post(client, url, _form(ts, result="fail", notes="Lens cracked")).status_code == 302
    assert 'id="not-trusted"' in client.get(f"/machines/{ts.machine_id}").get_data(as_text=True)
    assert _post(client, url, _form(ts, notes="Lens replaced")).status_code == 302
    assert store.value(Safeguard, ts.safeguard_id, "trusted") is True
    assert 'id="not-trusted"' not in client.get(f"/machines/{ts.machine_id}").get_data(as_text=True)


BAD_INPUTS = [
    ({"kind": ""}, "kind", "Choose a kind of verification"),
    ({"kind": "coffee_break"}, "kind", "Choose a kind of verification"),
    ({"result": "maybe"}, "result", "Choose pass, fail or passed with remarks."),
    ({"performed_on": TOMORROW}, "performed_on", "The date is in the future"),
    ({"performed_on": "31/12/2025"}, "performed_on", "Enter the date as YYYY-MM-DD."),
    ({"performed_by": "   "}, "performed_by", "Enter who did the verification."),
    ({"safeguard_id": "999999"}, "safeguard_id", "Choose one of this machine's safeguards."),
    ({"safeguard_id": ""}, "safeguard_id", "Choose the safeguard this verification is for."),
    ({"result": "fail", "notes": ""}, "notes", "Say what was found."),
    ({"result": "remarks", "notes": " "}, "notes", "Say what was found."),
    ({"kind": "weekly_press", "safeguard_id": ""}, "press_serial", "Enter the press serial"),
    ({"kind": "weekly_press", "press_serial": "X-1"}, "signature", "certifies the inspection"),
    ({"instrument_id": "999999"}, "instrument_id", "Choose one of this site's instruments."),
    ({"performed_by": "x" * 201}, "performed_by", "200"),
]


@pytest.mark.parametrize(("over", "field", "message"), BAD_INPUTS)
def test_bad_input_gets_a_field_message_and_stores_nothing(
    client_as: Client,
    ts: TrustSeed,
    store: Store,
    instance_dir: Path,
    over: dict[str, Any],
    field: str,
    message: str,
) -> None:
    before = _state(store, instance_dir, ts)
    data = _form(ts, **over)
    data["files"] = [(io.BytesIO(png()), "ok.png")]  # a good file is not kept either
    resp = _post(client_as("assessor"), f"/machines/{ts.machine_id}/verifications/new", data)
    assert resp.status_code == 400
    errors = field_errors(resp.get_data(as_text=True), field)
    assert any(message in e for e in errors), errors
    assert _state(store, instance_dir, ts) == before


@pytest.mark.parametrize(
    ("files", "message"),
    [
        ([(ELF, "photo.jpg")], "'photo.jpg' is not an accepted file by its content"),
        ([(png(), "a.png"), (ELF, "b.jpg")], "'b.jpg' is not an accepted file by its content"),
        ([(b"", "empty.png")], "The file is empty"),
        ([(png(), f"p{i}.png") for i in range(11)], "Attach at most 10 files"),
    ],
    ids=["executable-named-jpg", "one-bad-of-two", "empty", "eleven"],
)
def test_bad_files_are_refused_by_content_and_nothing_is_stored(
    client_as: Client,
    ts: TrustSeed,
    store: Store,
    instance_dir: Path,
    files: list[tuple[bytes, str]],
    message: str,
) -> None:
    before = _state(store, instance_dir, ts)
    data = _form(ts, result="fail", notes="Beam 3 did not stop the slide")
    data["files"] = [(io.BytesIO(b), name) for b, name in files]
    resp = _post(client_as("assessor"), f"/machines/{ts.machine_id}/verifications/new", data)
    assert resp.status_code == 400
    errors = field_errors(resp.get_data(as_text=True), "files")
    assert any(message in e for e in errors), errors
    # the failure was not recorded: no action, still trusted, no file kept
    assert _state(store, instance_dir, ts) == before


class LazyMultipart(io.RawIOBase):
    """A multipart body of ``size`` bytes with one file part, produced as it is read
    (so the test holds no 200 MB in memory); ``consumed`` says how much was read."""

    def __init__(self, size: int, boundary: str) -> None:
        self.head = (
            f"--{boundary}\r\n"
            'Content-Disposition: form-data; name="files"; filename="huge.png"\r\n'
            "Content-Type: image/png\r\n\r\n"
        ).encode() + b"\x89PNG\r\n\x1a\n"
        self.tail = f"\r\n--{boundary}--\r\n".encode()
        self.size = size
        self.pos = 0
        self.consumed = 0

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:  # the test client measures the body by seeking
        return True

    def seek(self, offset: int, whence: int = 0) -> int:
        self.pos = {0: 0, 1: self.pos, 2: self.size}[whence] + offset
        return self.pos

    def tell(self) -> int:
        return self.pos

    def readinto(self, buf: Any) -> int:
        start = self.pos
        n = min(len(buf), self.size - start)
        end = start + n
        out = bytearray(n)  # zeros between the head and the tail
        if start < len(self.head):
            piece = self.head[start : min(end, len(self.head))]
            out[: len(piece)] = piece
        tail_at = self.size - len(self.tail)
        if end > tail_at:
            s = max(start, tail_at)
            piece = self.tail[s - tail_at : end - tail_at]
            out[s - start : s - start + len(piece)] = piece
        buf[:n] = out
        self.pos = end
        self.consumed += n
        return n


def test_a_200_mb_upload_gets_the_413_page_and_nothing_is_stored(
    client_as: Client, ts: TrustSeed, store: Store, instance_dir: Path
) -> None:
    before = _state(store, instance_dir, ts)
    size = 200 * 1024 * 1024
    body = LazyMultipart(size, "riskregboundary")
    resp = client_as("assessor").post(
        f"/machines/{ts.machine_id}/verifications/new",
        input_stream=body,
        content_length=size,
        content_type="multipart/form-data; boundary=riskregboundary",
    )
    assert resp.status_code == 413
    html = resp.get_data(as_text=True)
    assert "File too large" in html and "larger than 25 MB" in html
    assert body.consumed < 1024 * 1024, "the app read the body instead of refusing it"
    assert _state(store, instance_dir, ts) == before


def test_press_fields_are_kept_only_for_the_weekly_press_inspection(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("assessor")
    url = f"/machines/{ts.machine_id}/verifications/new"
    weekly = _form(
        ts, kind="weekly_press", safeguard_id="", press_serial="SN-77", signature="P. Signoff"
    )
    assert _post(client, url, weekly).status_code == 302
    other = _form(ts, press_serial="SN-77", signature="P. Signoff")
    assert _post(client, url, other).status_code == 302
    with store.session() as s:
        rows = list(s.scalars(select(Verification).order_by(Verification.id.desc()).limit(2)))
    assert (rows[1].kind, rows[1].press_serial, rows[1].signature) == (
        "weekly_press",
        "SN-77",
        "P. Signoff",
    )
    assert (rows[0].press_serial, rows[0].signature) == ("", "")


def test_viewer_cannot_record_and_sees_no_write_links(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("viewer")
    url = f"/machines/{ts.machine_id}/verifications/new"
    before = store.count(Verification)
    assert client.get(url).status_code == 403
    assert _post(client, url, _form(ts)).status_code == 403
    assert store.count(Verification) == before
    html = client.get(f"/machines/{ts.machine_id}").get_data(as_text=True)
    assert "Verification history" in html
    assert url not in html and f"/lockout/{ts.lockout_id}/inspected" not in html


# --- start-of-shift checks ----------------------------------------------------------------


def _tick(ts: TrustSeed, **over: Any) -> dict[str, Any]:
    data: dict[str, Any] = {
        "shift_date": TODAY.isoformat(),
        "shift": "1",
        "performed_by": "Operator A",
        "ok_items": list(CHECKLIST),
        "notes": "",
    }
    data.update(over)
    return data


def test_shift_check_page_has_a_big_box_per_item(client_as: Client, ts: TrustSeed) -> None:
    html = (
        client_as("assessor").get(f"/machines/{ts.machine_id}/shift-check").get_data(as_text=True)
    )
    boxes = re.findall(r'<label class="choice tick"><input[^>]*type="checkbox"[^>]*>', html)
    assert len(boxes) == len(CHECKLIST)
    for item in CHECKLIST:
        assert item in html
    assert 'value="Shift 2"' not in html and ">Shift 2<" in html  # 2 shifts a day


def test_all_ticked_is_stored_without_an_action(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    actions = store.count(CorrectiveAction)
    resp = client_as("assessor").post(f"/machines/{ts.machine_id}/shift-check", data=_tick(ts))
    assert resp.status_code == 302
    assert store.count(ShiftCheck) == 1 and store.count(CorrectiveAction) == actions


def test_an_unticked_item_needs_notes_then_opens_an_action(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("assessor")
    url = f"/machines/{ts.machine_id}/shift-check"
    actions = store.count(CorrectiveAction)
    resp = client.post(url, data=_tick(ts, ok_items=CHECKLIST[:2]))
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), "notes") == [
        "Some items did not pass: say what was found."
    ]
    assert store.count(ShiftCheck) == 0 and store.count(CorrectiveAction) == actions
    resp = client.post(url, data=_tick(ts, ok_items=CHECKLIST[:2], notes="E-stop button stuck"))
    assert resp.status_code == 302
    with store.session() as s:
        check = s.scalars(select(ShiftCheck)).one()
        assert check.failed_items == [CHECKLIST[2]]
    assert store.count(CorrectiveAction) == actions + 1


@pytest.mark.parametrize(
    ("over", "field", "message"),
    [
        ({"shift_date": TOMORROW}, "shift_date", "The date is in the future"),
        ({"shift": "3"}, "shift", "Choose a shift from 1 to 2."),
        ({"performed_by": ""}, "performed_by", "Enter who did the check."),
        ({"ok_items": ["Something else"]}, "ok_items", "Tick items of this machine's checklist"),
    ],
)
def test_bad_shift_check_gets_a_field_message(
    client_as: Client, ts: TrustSeed, store: Store, over: dict[str, Any], field: str, message: str
) -> None:
    resp = client_as("assessor").post(
        f"/machines/{ts.machine_id}/shift-check", data=_tick(ts, **over)
    )
    assert resp.status_code == 400
    assert any(message in e for e in field_errors(resp.get_data(as_text=True), field))
    assert store.count(ShiftCheck) == 0


def test_the_same_shift_twice_is_refused(client_as: Client, ts: TrustSeed, store: Store) -> None:
    client = client_as("assessor")
    url = f"/machines/{ts.machine_id}/shift-check"
    assert client.post(url, data=_tick(ts)).status_code == 302
    resp = client.post(url, data=_tick(ts))
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), "shift_date") == [
        f"Shift 1 of {TODAY} is already recorded."
    ]
    assert store.count(ShiftCheck) == 1


def test_checklist_editing_needs_an_assessor(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    url = f"/machines/{ts.machine_id}/shift-checklist"
    assert client_as("viewer").post(url, data={"items": "x"}).status_code == 403
    client = client_as("assessor")
    resp = client.post(url, data={"items": "", "shifts_per_day": "1"})
    assert resp.status_code == 400
    assert "Enter one check per line" in field_errors(resp.get_data(as_text=True), "items")[0]
    resp = client.post(url, data={"items": "A\nB", "shifts_per_day": "4"})
    assert field_errors(resp.get_data(as_text=True), "shifts_per_day") == [
        "Enter 1, 2 or 3 shifts per day."
    ]
    with store.session() as s:
        assert s.scalars(select(ShiftChecklist)).one().items == CHECKLIST


# --- lockout procedures ---------------------------------------------------------------


def test_lockout_add_and_mark_inspected_today(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("assessor")
    resp = client.post(
        f"/machines/{ts.machine_id}/lockout/new",
        data={"title": "Lock-out for die change", "interval_days": "0"},
    )
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), "interval_days") == [
        "Enter the inspection interval, 1 to 3650 days."
    ]
    resp = client.post(
        f"/machines/{ts.machine_id}/lockout/new",
        data={"title": "Lock-out for die change", "interval_days": "365"},
    )
    assert resp.status_code == 302
    html = client.get(f"/machines/{ts.machine_id}").get_data(as_text=True)
    assert "Lock-out for die change" in html and "Never inspected" in html
    assert client.post(f"/lockout/{ts.lockout_id}/inspected").status_code == 302
    assert store.value(LockoutProcedure, ts.lockout_id, "last_inspected_on") == TODAY
    assert store.value(LockoutProcedure, ts.lockout_id, "inspected_by") == "Anton Fieldwork"
    assert client_as("viewer").post(f"/lockout/{ts.lockout_id}/inspected").status_code == 403


# --- the due board ---------------------------------------------------------------------------


@pytest.fixture
def board(ts: TrustSeed, engine: Engine, instance_dir: Path) -> dict[str, int]:
    """A second machine in another area, with a functional test 100 days old (overdue
    by 10 days on the 90-day default) and an inspection done today."""
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as s:
        machine = s.get(Machine, ts.machine_id)
        assert machine is not None
        site = machine.site
        area = register.create_area(s, site, "Fabrication")
        brake = register.create_machine(
            s,
            site,
            {"asset_tag": "PB-9", "name": "Press brake", "kind": "press_brake", "area_id": area.id},
        )
        guard = safeguards.save_safeguard(
            s,
            brake,
            {
                "kind": "fixed_guard",
                "label": "Rear fence",
                "opening_mm": "10",
                "opening_distance_mm": "100",
            },
        )
        for kind, ago in (("functional_test", 100), ("inspection", 0)):
            verification.record_verification(
                s,
                brake,
                {
                    "kind": kind,
                    "safeguard_id": guard.id,
                    "result": "pass",
                    "performed_on": TODAY - dt.timedelta(days=ago),
                    "performed_by": "Fitter",
                },
                instance_path=instance_dir,
            )
        return {"machine_id": brake.id, "safeguard_id": guard.id, "site_id": site.id}


def _rows(html: str) -> list[str]:
    return re.findall(r'<li class="due-row.*?</li>', html, flags=re.S)


def test_due_board_sections_and_record_links(
    client_as: Client, ts: TrustSeed, board: dict[str, int]
) -> None:
    html = client_as("assessor").get(f"/sites/{ts.site_id}/due").get_data(as_text=True)
    for anchor in ('id="overdue"', 'id="within-7"', 'id="within-30"', 'id="later"'):
        assert anchor in html
    overdue = html.split('id="overdue"', 1)[1].split('id="within-7"', 1)[0]
    row = next(r for r in _rows(overdue) if "Rear fence" in r)
    assert "10 days overdue" in row and "Functional test by maintenance" in row
    link = (
        f"/machines/{board['machine_id']}/verifications/new?kind=functional_test&amp;"
        f"safeguard={board['safeguard_id']}"
    )
    assert link in row
    assert f'href="/safeguards/{board["safeguard_id"]}"' in row
    assert f'href="/machines/{board["machine_id"]}"' in row
    # the link opens the form with kind and safeguard chosen
    form = client_as("assessor").get(link.replace("&amp;", "&")).get_data(as_text=True)
    assert re.search(r'name="kind" value="functional_test"[^>]*checked', form)
    later = html.split('id="later"', 1)[1]
    assert "<details" in html.split('id="later"', 1)[0][-80:]
    assert any("Stopping-time measurement" in r for r in _rows(later))


def test_viewer_sees_the_board_without_record_buttons(
    client_as: Client, ts: TrustSeed, board: dict[str, int]
) -> None:
    html = client_as("viewer").get(f"/sites/{ts.site_id}/due").get_data(as_text=True)
    assert _rows(html) and "verifications/new" not in html


def _kinds_and_tags(html: str) -> set[tuple[str, str]]:
    out = set()
    for r in _rows(html):
        what = re.search(r'<div class="due-what">(.*?)</div>', r, flags=re.S)
        assert what is not None
        tag = re.search(r'<span class="tag">([^<]+)</span>', what.group(1))
        kind = re.search(r"<b>([^<]+)</b>", what.group(1))
        out.add((tag.group(1) if tag else "", kind.group(1) if kind else ""))
    return out


def test_due_board_filters(client_as: Client, ts: TrustSeed, board: dict[str, int]) -> None:
    client = client_as("viewer")
    base = f"/sites/{ts.site_id}/due"
    everything = _kinds_and_tags(client.get(base).get_data(as_text=True))
    assert {t for t, _k in everything} >= {"P-01", "PB-9"}
    by_kind = _kinds_and_tags(client.get(base + "?kind=functional_test").get_data(as_text=True))
    assert by_kind == {
        ("P-01", "Functional test by maintenance"),
        ("PB-9", "Functional test by maintenance"),
    }
    by_machine = _kinds_and_tags(
        client.get(base + f"?machine={board['machine_id']}").get_data(as_text=True)
    )
    assert by_machine == {
        ("PB-9", "Functional test by maintenance"),
        ("PB-9", "Periodic inspection"),
    }
    by_tag = client.get(base + "?machine=PB-9").get_data(as_text=True)
    assert _kinds_and_tags(by_tag) == by_machine  # the asset tag, as typed in the filter
    assert 'name="machine" value="PB-9"' in by_tag
    by_area = _kinds_and_tags(client.get(base + "?area=Fabrication").get_data(as_text=True))
    assert by_area == by_machine
    press_line = _kinds_and_tags(client.get(base + "?area=Press+line").get_data(as_text=True))
    assert {t for t, _k in press_line} == {"P-01"}
    both = _kinds_and_tags(
        client.get(base + "?area=Press+line&kind=lockout").get_data(as_text=True)
    )
    assert both == {("P-01", "Lockout procedure inspection")}


@pytest.mark.parametrize(
    ("query", "message"),
    [
        ("area=Nowhere", "There is no area “Nowhere”"),
        ("machine=abc", "“abc” is not a machine of Test Works in service"),
        ("machine=999999", "“999999” is not a machine of Test Works in service"),
        ("kind=coffee", "“coffee” is not a kind of check"),
        ("kind=%00%ff", "is not a kind of check"),
    ],
)
def test_due_board_bad_filters_get_a_clear_message(
    client_as: Client, ts: TrustSeed, query: str, message: str
) -> None:
    resp = client_as("viewer").get(f"/sites/{ts.site_id}/due?{query}")
    assert resp.status_code == 400
    html = resp.get_data(as_text=True)
    assert message in html
    assert _rows(html), "the board is still shown, without the bad filter"


def test_overview_shows_the_three_counts_with_links(
    client_as: Client, ts: TrustSeed, board: dict[str, int], store: Store
) -> None:
    html = client_as("viewer").get(f"/sites/{ts.site_id}").get_data(as_text=True)
    with store.session() as s:
        machine = s.get(Machine, ts.machine_id)
        assert machine is not None
        site = machine.site
        counts = due.counts(due.due_items(s, site))
    assert counts["overdue"] >= 1
    for anchor, key in (
        ("overdue", "overdue"),
        ("within-7", "within 7 days"),
        ("within-30", "within 30 days"),
    ):
        m = re.search(rf'href="/sites/{ts.site_id}/due#{anchor}"[^>]*><b>(\d+)</b>', html)
        assert m is not None, anchor
        assert int(m.group(1)) == counts[key]


# --- instruments ---------------------------------------------------------------------------


def test_instruments_list_flags_overdue_and_records_calibration(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    client = client_as("assessor")
    old = (TODAY - dt.timedelta(days=400)).isoformat()
    resp = client.post(
        f"/sites/{ts.site_id}/instruments/new",
        data={
            "name": "Stop-time meter B",
            "calibrated_on": old,
            "calibration_interval_days": "365",
        },
    )
    assert resp.status_code == 302
    html = client.get(f"/sites/{ts.site_id}/instruments").get_data(as_text=True)
    # calibrated 400 days ago, every 365 days → 35 days overdue
    assert "CALIBRATION OVERDUE by 35 days" in html
    with store.session() as s:
        b = s.scalar(select(Instrument).where(Instrument.name == "Stop-time meter B"))
        assert b is not None
        bid = b.id
    resp = client.post(f"/instruments/{bid}/calibrate", data={"calibrated_on": TOMORROW})
    assert resp.status_code == 400
    assert (
        "The date is in the future" in field_errors(resp.get_data(as_text=True), "calibrated_on")[0]
    )
    assert (
        client.post(
            f"/instruments/{bid}/calibrate", data={"calibrated_on": TODAY.isoformat()}
        ).status_code
        == 302
    )
    assert store.value(Instrument, bid, "calibrated_on") == TODAY
    resp = client.post(f"/sites/{ts.site_id}/instruments/new", data={"name": "Stop-time meter B"})
    assert resp.status_code == 400
    assert "already has an instrument named" in field_errors(resp.get_data(as_text=True), "name")[0]


def test_measurement_with_an_out_of_calibration_instrument_is_flagged(
    client_as: Client, ts: TrustSeed, engine: Engine
) -> None:
    factory = session_factory(engine)
    with factory() as s:
        machine = s.get(Machine, ts.machine_id)
        assert machine is not None
        site = machine.site
        stale = verification.save_instrument(
            s,
            site,
            {
                "name": "Old meter",
                "calibrated_on": (TODAY - dt.timedelta(days=500)).isoformat(),
                "calibration_interval_days": "365",
            },
        )
        stale_id = stale.id
    client = client_as("assessor")
    form = client.get(f"/machines/{ts.machine_id}/measurements/new").get_data(as_text=True)
    assert f'<option value="{stale_id}">Old meter — CALIBRATION RAN OUT' in form
    assert f'<option value="{ts.instrument_id}">Stop-time meter A (A-1) — calibrated' in form
    for ins, warned in ((stale_id, True), (ts.instrument_id, False)):
        resp = client.post(
            f"/machines/{ts.machine_id}/measurements/new",
            data={
                "measured_on": TODAY.isoformat(),
                "trials_ms": "180, 182",
                "instrument_id": str(ins),
            },
        )
        assert resp.status_code == 302
        page = client.get(resp.headers["Location"]).get_data(as_text=True)
        assert ("which was not in calibration" in page) is warned
    resp = client.post(
        f"/machines/{ts.machine_id}/measurements/new",
        data={"measured_on": TODAY.isoformat(), "trials_ms": "180", "instrument_id": "999999"},
    )
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), "instrument_id") == [
        "Choose one of this site's instruments."
    ]


# --- intervals ---------------------------------------------------------------------------


def test_site_intervals_need_an_approver(client_as: Client, ts: TrustSeed, store: Store) -> None:
    url = f"/sites/{ts.site_id}/intervals"
    assert "Functional test by maintenance" in client_as("viewer").get(url).get_data(as_text=True)
    for role in ("viewer", "assessor"):
        assert (
            client_as(role).post(url, data={"kind": "inspection", "days": "180"}).status_code == 403
        )
    assert store.count(VerificationInterval) == 0
    client = client_as("approver")
    resp = client.post(url, data={"kind": "inspection", "days": "0"})
    assert resp.status_code == 400
    assert "Enter an interval from 1 to 3650 days." in resp.get_data(as_text=True)
    resp = client.post(url, data={"kind": "inspection", "days": "every week"})
    assert resp.status_code == 400
    assert "Enter the interval as a whole number of days." in resp.get_data(as_text=True)
    assert client.post(url, data={"kind": "inspection", "days": "180"}).status_code == 302
    html = client.get(url).get_data(as_text=True)
    assert "every 180 days" in html and "riskreg's default: every 365 days" in html


def test_safeguard_interval_override_by_an_assessor_moves_the_due_date(
    client_as: Client, ts: TrustSeed, store: Store
) -> None:
    url = f"/safeguards/{ts.safeguard_id}/intervals"
    assert (
        client_as("viewer")
        .post(url, data={"iv-kind": "functional_test", "iv-days": "30"})
        .status_code
        == 403
    )
    client = client_as("assessor")
    resp = client.post(
        url, data={"iv-kind": "functional_test", "iv-days": "5000"}, follow_redirects=True
    )
    assert "Enter an interval from 1 to 3650 days." in resp.get_data(as_text=True)
    assert store.count(VerificationInterval) == 0
    assert client.post(url, data={"iv-kind": "functional_test", "iv-days": "7"}).status_code == 302
    page = client.get(f"/safeguards/{ts.safeguard_id}").get_data(as_text=True)
    assert "every 7 days" in page and "the site's: every 90 days" in page
    # the functional test was done 10 days ago: on a 7-day interval it is 3 days overdue
    board = client.get(f"/sites/{ts.site_id}/due?kind=functional_test").get_data(as_text=True)
    overdue = board.split('id="overdue"', 1)[1].split('id="within-7"', 1)[0]
    assert "3 days overdue" in overdue and "Front light curtain" in overdue


# --- corrective actions of the site, with closing evidence ------------------------------------


def test_site_actions_open_first_then_closed(client_as: Client, ts: TrustSeed) -> None:
    client = client_as("assessor")
    client.post(f"/machines/{ts.machine_id}/actions/new", data={"title": "Second action"})
    client.post(f"/actions/{ts.action_id}/close", data={"closing_note": "Guard refitted"})
    html = client.get(f"/sites/{ts.site_id}/actions").get_data(as_text=True)
    opened, closed = html.split("<h2>Closed", 1)
    assert "Second action" in opened and "Refit the rear guard" not in opened
    assert "Refit the rear guard" in closed and "Guard refitted" in closed


def test_closing_with_an_evidence_file(
    client_as: Client, ts: TrustSeed, store: Store, instance_dir: Path
) -> None:
    client = client_as("assessor")
    url = f"/actions/{ts.action_id}/close"
    before = (store.count(EvidenceFile), _files_on_disk(instance_dir))
    # a bad file: refused, the action stays open, nothing kept
    resp = _post(
        client, url, {"closing_note": "Done", "closing_file": (io.BytesIO(ELF), "fix.jpg")}
    )
    assert resp.status_code == 400
    assert "is not an accepted file" in field_errors(resp.get_data(as_text=True), "closing_file")[0]
    # a good file without a note: refused too, and the file is not kept
    resp = _post(client, url, {"closing_note": "", "closing_file": (io.BytesIO(png()), "fix.png")})
    assert resp.status_code == 400
    assert field_errors(resp.get_data(as_text=True), "closing_note")
    assert store.value(CorrectiveAction, ts.action_id, "status") == "open"
    assert (store.count(EvidenceFile), _files_on_disk(instance_dir)) == before
    photo = png(6, 5)
    resp = _post(
        client,
        url,
        {"closing_note": "Guard refitted", "closing_file": (io.BytesIO(photo), "fix.png")},
    )
    assert resp.status_code == 302
    assert store.value(CorrectiveAction, ts.action_id, "status") == "closed"
    fid = store.value(CorrectiveAction, ts.action_id, "closing_evidence_id")
    assert store.value(EvidenceFile, fid, "sha256") == hashlib.sha256(photo).hexdigest()
    html = client.get(f"/sites/{ts.site_id}/actions").get_data(as_text=True)
    assert hashlib.sha256(photo).hexdigest() in html and f"/files/{fid}" in html


# --- the calendar feed ------------------------------------------------------------------------


def _lines(body: bytes) -> list[bytes]:
    """Physical lines; every one must end in CRLF (RFC 5545 3.1) [std, from memory]."""
    assert body.endswith(b"\r\n")
    parts = body.split(b"\r\n")[:-1]
    for p in parts:
        assert b"\n" not in p and b"\r" not in p, f"bare line break in {p!r}"
    return parts


def _unfold(lines: list[bytes]) -> list[str]:
    """Logical lines: a line starting with a space continues the one before (RFC 5545 3.1)."""
    out: list[bytes] = []
    for p in lines:
        if p.startswith(b" "):
            out[-1] += p[1:]
        else:
            out.append(p)
    return [x.decode("utf-8") for x in out]


def _unescape(value: str) -> str:
    """TEXT values per RFC 5545 3.3.11 [std, from memory]."""
    return re.sub(r"\\([\\;,nN])", lambda m: "\n" if m.group(1) in "nN" else m.group(1), value)


TRICKY = "Lock-out; main isolator, air valve \\ bay 3 — Sägewerk Überprüfung " + "x" * 40


def test_feed_works_without_login_and_is_valid_icalendar(
    app: Flask, ts: TrustSeed, engine: Engine, store: Store
) -> None:
    factory = session_factory(engine)
    with factory() as s:
        m = s.get(Machine, ts.machine_id)
        assert m is not None
        verification.save_lockout(s, m, {"title": TRICKY, "interval_days": "365"})
        expected = len(due.due_items(s, m.site))
    client = app.test_client()  # not logged in
    resp = client.get(f"/calendar/{ts.token}.ics")
    assert resp.status_code == 200
    assert resp.headers["Content-Type"] == "text/calendar; charset=utf-8"
    lines = _lines(resp.data)
    # folding: no physical line longer than 75 octets (RFC 5545 3.1) [std, from memory]
    assert max(len(p) for p in lines) <= 75
    assert any(p.startswith(b" ") for p in lines), "the long lines were not folded"
    logical = _unfold(lines)
    assert logical[0] == "BEGIN:VCALENDAR" and logical[-1] == "END:VCALENDAR"
    assert "VERSION:2.0" in logical
    prodid = [x for x in logical if x.startswith("PRODID:")]
    assert prodid == ["PRODID:-//riskreg//Due dates of safeguards and checks//EN"]
    events: list[dict[str, str]] = []
    for x in logical:
        if x == "BEGIN:VEVENT":
            events.append({})
        elif events and x != "END:VEVENT" and ":" in x:
            name, value = x.split(":", 1)
            events[-1][name] = value
    assert len(events) == expected == logical.count("END:VEVENT")
    for ev in events:
        assert re.fullmatch(
            r"[a-z_]+-\d+-\d+(-[0-9a-f]{10})?@riskreg|calibration-site\d+-[0-9a-f]{10}@riskreg",
            ev["UID"],
        )
        assert re.fullmatch(
            r"\d{8}T\d{6}Z", ev["DTSTAMP"]
        )  # UTC form (RFC 5545 3.3.5) [std, from memory]
        assert re.fullmatch(
            r"\d{8}", ev["DTSTART;VALUE=DATE"]
        )  # DATE form (RFC 5545 3.3.4) [std, from memory]
        assert ev["SUMMARY"] and ev["DESCRIPTION"]
    assert len({ev["UID"] for ev in events}) == len(events), "UIDs are not unique"
    tricky = next(ev for ev in events if "Sägewerk" in ev["DESCRIPTION"])
    raw = tricky["DESCRIPTION"]
    # backslash, semicolon, comma and newline escaped (RFC 5545 3.3.11) [std, from memory]
    assert "Lock-out\\; main isolator\\, air valve \\\\ bay 3" in raw and "\\n" in raw
    assert re.search(r"(?<!\\);|(?<!\\),", raw.replace("\\\\", "")) is None
    assert TRICKY in _unescape(raw).split("\n")
    # the same items give the same UIDs next time
    again = _unfold(_lines(client.get(f"/calendar/{ts.token}.ics").data))
    assert [x for x in again if x.startswith("UID:")] == [
        x for x in logical if x.startswith("UID:")
    ]


def test_feed_404s_for_an_unknown_token_and_after_revoking(
    client_as: Client, app: Flask, ts: TrustSeed, store: Store
) -> None:
    anon = app.test_client()
    assert anon.get("/calendar/not-a-token.ics").status_code == 404
    assert anon.get(f"/calendar/{ts.token}.ics").status_code == 200
    assert client_as("approver").post(f"/calendar-links/{ts.token_id}/revoke").status_code == 403
    assert anon.get(f"/calendar/{ts.token}.ics").status_code == 200
    assert client_as("admin").post(f"/calendar-links/{ts.token_id}/revoke").status_code == 302
    assert store.value(CalendarToken, ts.token_id, "revoked_at") is not None
    resp = anon.get(f"/calendar/{ts.token}.ics")
    assert resp.status_code == 404 and "not valid" in resp.get_data(as_text=True)


def test_new_link_is_shown_once_to_an_admin(client_as: Client, app: Flask, ts: TrustSeed) -> None:
    assert client_as("approver").get(f"/sites/{ts.site_id}/calendar").status_code == 403
    client = client_as("admin")
    resp = client.post(f"/sites/{ts.site_id}/calendar", data={"label": "planner"})
    assert resp.status_code == 302
    first = client.get(resp.headers["Location"]).get_data(as_text=True)
    m = re.search(
        r'id="new-url" type="text" readonly value="(http://[^"]+/calendar/([^"/]+)\.ics)"', first
    )
    assert m is not None
    assert app.test_client().get(f"/calendar/{m.group(2)}.ics").status_code == 200
    second = client.get(f"/sites/{ts.site_id}/calendar").get_data(as_text=True)
    assert m.group(2) not in second and 'id="new-url"' not in second
    # only the hash is stored
    assert hashlib.sha256(m.group(2).encode()).hexdigest() not in second


# --- the iCalendar text rules, on the formatter itself ----------------------------------------


def test_fold_at_75_octets_with_a_leading_space() -> None:
    # RFC 5545 3.1 [std, from memory]: lines SHOULD NOT be longer than 75 octets; a
    # folded line continues with a single space. 100 ASCII characters → 75 + (1 + 25).
    folded = ical.fold("A" * 100)
    first, second = folded.split("\r\n")
    assert first == "A" * 75 and second == " " + "A" * 25


def test_fold_never_splits_a_utf8_character() -> None:
    # "é" is 2 octets in UTF-8: 37 of them make 74 octets, a 38th would make 76.
    # 50 × 2 = 100 octets → 37 characters (74 octets), then " " + 13 characters (27 octets).
    folded = ical.fold("é" * 50)
    first, second = folded.split("\r\n")
    assert first == "é" * 37 and second == " " + "é" * 13
    assert all(len(x.encode()) <= 75 for x in (first, second))


def test_short_line_is_not_folded() -> None:
    assert ical.fold("VERSION:2.0") == "VERSION:2.0"
    assert ical.fold("X" * 75) == "X" * 75


def test_text_escaping() -> None:
    # RFC 5545 3.3.11 [std, from memory]: \\ \; \, and \n for a line break
    assert ical.escape_text("a\\b;c,d\ne") == "a\\\\b\\;c\\,d\\ne"
    assert ical.escape_text("one\r\ntwo") == "one\\ntwo"
