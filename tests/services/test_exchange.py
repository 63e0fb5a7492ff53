"""A site's register out as JSON and back in: byte-identical round trip, all-or-nothing
import that reports every problem, the audit trail carried over, tables for spreadsheets."""

from __future__ import annotations

import copy
import csv
import datetime as dt
import hashlib
import io
import json
import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from openpyxl import load_workbook
from sqlalchemy import func, select
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm import Session

from riskreg import migrate
from riskreg.db import make_engine, session_factory
from riskreg.model import (
    AuditEntry,
    Base,
    CalendarToken,
    Component,
    CorrectiveAction,
    Hazard,
    Instrument,
    Machine,
    Safeguard,
    Site,
    User,
)
from riskreg.services import (
    audit,
    due,
    evidence,
    exchange,
    register,
    revisions,
    safeguards,
    users,
    verification,
)
from riskreg.services.verification import Upload
from seed_demo import build

PNG = b"\x89PNG\r\n\x1a\n" + b"front of the press" + b"\x00" * 32
PDF = b"%PDF-1.4\n% light curtain test report, beam 1 to 40 all stop\n%%EOF\n"
CLOSING_PDF = b"%PDF-1.4\n% new connector fitted, re-test passed\n%%EOF\n"
TODAY = dt.date.today()


def counts(session: Session) -> dict[str, int]:
    """Rows in every table of the schema."""
    session.expire_all()
    return {
        name: int(session.scalar(select(func.count()).select_from(t)) or 0)
        for name, t in Base.metadata.tables.items()
    }


def _open(url: str) -> tuple[Any, Session]:
    eng = make_engine(url)
    migrate.upgrade(eng)
    factory = session_factory(eng)
    audit.install(factory)
    return eng, factory()


@pytest.fixture
def second(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[Session]:
    """A second, empty register (a fresh database on the same engine)."""
    if os.environ.get("RISKREG_TEST_POSTGRES_URL"):
        url = request.getfixturevalue("db_url")
    else:
        url = f"sqlite:///{tmp_path / 'second.sqlite'}"
    eng, s = _open(url)
    try:
        yield s
    finally:
        s.close()
        eng.dispose()


def _person(session: Session, role: str) -> User:
    u = session.scalar(select(User).where(User.role == role))
    assert u is not None
    return u


def add_extras(session: Session, site: Site, instance: Path) -> dict[str, Any]:
    """What the demo plant lacks, so that every kind of record travels: evidence files
    (on a verification, a machine, a hazard, an instrument, a closed action), intervals,
    an approved revision with its snapshot and a new revision copied from it (lineage),
    a modification, an accepted residual risk and a calendar token (a secret)."""
    assessor, approver = _person(session, "assessor"), _person(session, "approver")
    audit.set_actor(session, assessor)
    pr101 = register.machine_by_tag(session, site, "PR-101")
    curtain = next(s for s in safeguards.safeguards_of(pr101) if s.kind == "light_curtain")
    verification.record_verification(
        session,
        pr101,
        {
            "kind": "functional_test",
            "safeguard_id": curtain.id,
            "performed_on": TODAY.isoformat(),
            "performed_by": "Jonas Brekke-Lowe",
            "result": "pass",
            "measured_values": "test rod stops the slide at every beam",
        },
        [Upload("curtain photo.png", PNG), Upload("test report.pdf", PDF)],
        instance_path=instance,
        user_id=assessor.id,
    )
    photo = evidence.store(session, instance, PNG, "PR-101 front.png", user_id=assessor.id)
    session.flush()
    pr101.photo_id = photo.id
    hazard = register.current_assessment(pr101).hazards[0]
    hazard.photo_id = photo.id
    meter = session.scalar(select(Instrument).where(Instrument.site_id == site.id))
    assert meter is not None
    meter.certificate_id = photo.id
    session.commit()
    register.accept_residual(session, hazard, approver, "Slide speed reduced until re-test")
    action = session.scalar(
        select(CorrectiveAction)
        .join(Machine, Machine.id == CorrectiveAction.machine_id)
        .where(Machine.site_id == site.id, CorrectiveAction.status == "open")
        .order_by(CorrectiveAction.id)
    )
    assert action is not None
    safeguards.close_action(
        session,
        action,
        "Fixed and re-tested",
        ("closing.pdf", CLOSING_PDF),
        instance_path=instance,
        user_id=assessor.id,
    )
    verification.set_interval(session, site, "functional_test", 60)
    verification.set_interval(session, site, "inspection", 180, safeguard=curtain)
    cv601 = register.machine_by_tag(session, site, "CV-601")
    a = register.current_assessment(cv601)
    revisions.submit(session, a, assessor)
    revisions.approve(session, a, approver)
    revisions.new_revision(session, cv601, assessor, "yearly review")
    revisions.record_modification(
        session,
        pr101,
        {
            "kind": "guard",
            "description": "Curtain moved 40 mm outwards",
            "made_on": TODAY,
            "safeguard_ids": [curtain.id],
        },
        assessor,
    )
    token = verification.new_calendar_token(session, site, "maintenance office")
    return {"token": token}


@pytest.fixture
def plant(session: Session, tmp_path: Path) -> Site:
    build.build(session)
    site = register.get_site(session)
    add_extras(session, site, tmp_path / "instance")
    return site


# --- the round trip -----------------------------------------------------------------------


def test_export_import_export_is_byte_identical(
    session: Session, plant: Site, second: Session
) -> None:
    first = exchange.dumps(exchange.export_site(session, plant))
    audit_before = counts(second)["audit_entry"]
    report = exchange.import_site(second, first, actor_email="Admin@Example.com")
    assert report.accepted, [str(p) for p in report.problems]
    again = exchange.dumps(exchange.export_site(second, register.get_site(second)))
    assert again == first
    doc = json.loads(first)
    # every kind of record made the trip (the extras put one of each in the demo plant)
    pr101 = next(m for m in doc["machines"] if m["asset_tag"] == "PR-101")
    assert pr101["photo"] and pr101["modifications"] and pr101["press"]["monitor_settings"]
    assert any(v["evidence"] for v in pr101["verifications"])
    assert any(a["closing_evidence"] for a in pr101["actions"])
    cv601 = next(m for m in doc["machines"] if m["asset_tag"] == "CV-601")
    assert [a["status"] for a in cv601["assessments"]] == ["approved", "draft"]
    assert cv601["assessments"][0]["snapshot"] is not None
    assert cv601["assessments"][0]["approver"] == "approver@ostrander.invalid"
    assert cv601["assessments"][1]["hazards"][0]["origin"] == "machine:CV-601/rev:1/hazard:1"
    assert len(doc["intervals"]) == 2 and len(doc["files"]) == 4
    # the same number of records of each kind in both registers
    a, b = counts(session), counts(second)
    for table in set(a) - {"user_account", "audit_entry", "component", "calendar_token"}:
        assert a[table] == b[table], table

    # the audit trail: the file's entries, and exactly one more, in the system log
    rows = list(second.scalars(select(AuditEntry).order_by(AuditEntry.id)))
    assert len(rows) - audit_before == len(doc["audit"]) + 1
    system = [r for r in rows if r.entity == "system"]
    assert len(system) == 1 and system[0].site_id is None
    assert system[0].action == "import" and system[0].user_email == "admin@example.com"
    assert system[0].after is not None and system[0].after["site"] == plant.name
    assert system[0].after["counts"]["machines"] == 13
    # the imported entries point at the imported records
    site_id = report.site_id
    machine_ids = set(second.scalars(select(Machine.id).where(Machine.site_id == site_id)))
    entries = [r for r in rows if r.entity != "system"]
    assert all(r.site_id == site_id for r in entries)
    assert {r.machine_id for r in entries if r.machine_id} <= machine_ids
    made = [r for r in entries if r.entity == "machine" and r.action == "create"]
    assert {r.entity_id for r in made} == machine_ids

    # people named by e-mail are added, but cannot log in: inactive, no password
    assert sorted(report.people_created) == [
        "approver@ostrander.invalid",
        "assessor@ostrander.invalid",
    ]
    person = second.scalar(select(User).where(User.email == "approver@ostrander.invalid"))
    assert person is not None and not person.active and person.role == "viewer"
    assert users.authenticate(second, "approver@ostrander.invalid", build.DEMO_PASSWORD) is None


def test_keys_do_not_depend_on_database_ids(session: Session, plant: Site, second: Session) -> None:
    """Import into a register that already holds another site (so every id differs)."""
    other = register.create_site(second, "Lindqvist Stamping")
    area = register.create_area(second, other, "Hall 1")
    for tag in ("X-1", "X-2", "X-3"):
        m = register.create_machine(
            second, other, {"asset_tag": tag, "name": "Press", "kind": "shear", "area_id": area.id}
        )
        register.add_hazard(
            second,
            register.current_assessment(m),
            {"hazard_group": "mechanical", "event": "Hand at the blade"},
            {"method": "iso13849", "severity": "S2", "frequency": "F1", "avoidance": "P1"},
        )
    first = exchange.dumps(exchange.export_site(session, plant))
    assert exchange.import_site(second, first).accepted
    imported = register.get_site(second, plant.name)
    assert imported.id != plant.id
    assert exchange.dumps(exchange.export_site(second, imported)) == first
    # and the other site is as it was
    doc = exchange.export_site(second, other)
    assert [m["asset_tag"] for m in doc["machines"]] == ["X-1", "X-2", "X-3"]
    assert all(
        e["machine"] in (None, "machine:X-1", "machine:X-2", "machine:X-3") for e in doc["audit"]
    )


def test_the_document_reads_without_ids_or_credentials(session: Session, plant: Site) -> None:
    raw = exchange.dumps(exchange.export_site(session, plant))
    doc = json.loads(raw)
    pr101 = next(m for m in doc["machines"] if m["asset_tag"] == "PR-101")
    assert pr101["key"] == "machine:PR-101"
    assert pr101["area"] == "area:Press shop"
    h = pr101["assessments"][0]["hazards"][0]
    assert h["key"] == "machine:PR-101/rev:1/hazard:1"
    assert h["ratings"][0]["key"] == "machine:PR-101/rev:1/hazard:1/rating:1"
    assert h["task"] == "machine:PR-101/rev:1/task:1"
    curtain = pr101["safeguards"][0]
    assert curtain["key"] == "machine:PR-101/safeguard:1"
    assert curtain["measure"].startswith("machine:PR-101/rev:1/measure:")
    assert curtain["component"] == "component:1"
    assert pr101["measurements"][0]["checks"][0]["safeguard"] == curtain["key"]
    # lists come in a fixed order: machines by asset tag, measurements by date
    tags = [m["asset_tag"] for m in doc["machines"]]
    assert tags == sorted(tags)
    days = [x["measured_on"] for x in pr101["measurements"]]
    assert days == sorted(days)

    # no database id anywhere outside the audit trail's stored values
    def walk(x: Any, path: str) -> None:
        if isinstance(x, dict):
            for k, v in x.items():
                if k in ("audit", "snapshot", "derivation", "parameters"):
                    continue  # stored values, kept as they were recorded
                assert k != "id" and not k.endswith("_id"), f"{path}.{k}"
                walk(v, f"{path}.{k}")
        elif isinstance(x, list):
            for i, v in enumerate(x):
                walk(v, f"{path}[{i}]")

    walk(doc, "")

    # people by e-mail and name, never a password hash or a token's hash
    token = session.scalar(select(CalendarToken.token_hash))
    assert token
    text = raw.decode()
    assert "password_hash" not in text and "token_hash" not in text and token not in text
    for u in session.scalars(select(User)):
        assert u.password_hash not in text
    assert {p["email"] for p in doc["people"]} == {
        "assessor@ostrander.invalid",
        "approver@ostrander.invalid",
    }
    assert set(doc["people"][0]) == {"email", "name"}
    # evidence by SHA-256 and name, never the bytes
    files = {f["filename"]: f for f in doc["files"]}
    assert files["test report.pdf"]["sha256"] == hashlib.sha256(PDF).hexdigest()
    assert "beam 1 to 40" not in text
    # components are shared: the document carries only those the site uses
    used = {
        s.component_id
        for s in session.scalars(select(Safeguard).join(Machine).where(Machine.site_id == plant.id))
        if s.component_id
    }
    assert (
        len(doc["components"])
        == len(used)
        < session.scalar(select(func.count()).select_from(Component))
    )


def test_import_under_another_name_reuses_parts_and_people(session: Session, plant: Site) -> None:
    doc = exchange.export_site(session, plant)
    n_components = counts(session)["component"]
    n_people = counts(session)["user_account"]
    report = exchange.import_site(session, doc, site_name="Ostrander Vale, copy")
    assert report.accepted and report.people_created == []
    after = counts(session)
    assert after["component"] == n_components and after["user_account"] == n_people
    copy_doc = exchange.export_site(session, register.get_site(session, "Ostrander Vale, copy"))
    assert copy_doc["site"]["name"] == "Ostrander Vale, copy"
    copy_doc["site"]["name"] = plant.name
    assert exchange.dumps(copy_doc) == exchange.dumps(doc)


def test_a_failed_write_leaves_nothing(
    session: Session, occupied: Site, base_doc: dict[str, Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    doc = base_doc
    before = counts(session)

    def broken(self: Any, entries: Any, site_id: int) -> None:
        raise OperationalError("INSERT INTO audit_entry", {}, Exception("disk I/O error"))

    monkeypatch.setattr(exchange._Writer, "audit", broken)
    report = exchange.import_site(session, doc)
    assert not report.accepted
    assert "database refused the import (disk I/O error); nothing was written" in str(
        report.problems[0]
    )
    assert counts(session) == before


def test_the_document_covers_every_column() -> None:
    """A new column or table must be placed in the export (or excluded with a reason)."""
    placed_tables = {k.table.name for k in exchange.all_kinds()}
    links = {x.table.name for k in exchange.all_kinds() for x in k.links}
    for name in Base.metadata.tables:
        assert (
            name in placed_tables
            or name in links
            or name in exchange.NOT_EXPORTED_TABLES
            or name == "audit_entry"
        ), f"table {name} is not in the export"
    for k in exchange.all_kinds():
        covered = {f.name for f in k.fields} | {r.column for r in k.refs}
        covered |= {j.column for j in k.json_refs} | set(k.excluded)
        if k.parent_column:
            covered.add(k.parent_column)
        missing = {c.name for c in k.table.columns} - covered
        assert not missing, f"{k.table.name}: columns {missing} are not in the export"


def test_the_format_document_lists_every_field() -> None:
    """docs/export-format.md carries the field tables made from the import's own rules."""
    doc = (Path(__file__).resolve().parents[2] / "docs" / "export-format.md").read_text()
    start = doc.index("<!-- fields: made by riskreg.services.exchange.field_reference() -->")
    end = doc.index("<!-- /fields -->")
    body = doc[start:end].split("\n", 2)[2]
    assert body == exchange.field_reference()


# --- bad files ----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def base_doc(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """The demo plant's export, made once (on SQLite) and copied by each case."""
    path = tmp_path_factory.mktemp("base") / "demo.sqlite"
    eng, s = _open(f"sqlite:///{path}")
    try:
        build.build(s)
        doc = exchange.export_site(s, register.get_site(s))
    finally:
        s.close()
        eng.dispose()
    return doc


@pytest.fixture
def occupied(session: Session) -> Site:
    """The target register is not empty: a count that did not change means something."""
    site = register.create_site(session, "Lindqvist Stamping")
    m = register.create_machine(session, site, {"asset_tag": "X-1", "name": "P", "kind": "shear"})
    register.add_hazard(
        session,
        register.current_assessment(m),
        {"hazard_group": "mechanical", "event": "Hand at the blade"},
        {"method": "iso13849", "severity": "S2", "frequency": "F1", "avoidance": "P1"},
    )
    return site


def _machine(doc: dict[str, Any], tag: str) -> dict[str, Any]:
    return next(m for m in doc["machines"] if m["asset_tag"] == tag)


def _mutate(fn: Callable[[dict[str, Any]], None]) -> Callable[[dict[str, Any]], bytes]:
    def make(base: dict[str, Any]) -> bytes:
        doc = copy.deepcopy(base)
        fn(doc)
        return exchange.dumps(doc)

    return make


def _latin1(base: dict[str, Any]) -> bytes:
    doc = copy.deepcopy(base)
    _machine(doc, "PR-101")["name"] = "Presse für Blech"
    return exchange.dumps(doc).replace("für".encode(), b"f\xfcr")


def _dates(doc: dict[str, Any]) -> None:
    pr101 = _machine(doc, "PR-101")
    pr101["verifications"][0]["performed_on"] = "2026-02-30"
    pr101["measurements"][0]["measured_on"] = "0000-06-01"


def _negative(doc: dict[str, Any]) -> None:
    m = _machine(doc, "PR-101")["measurements"][0]
    m["trials_s"][0] = -0.18
    m["t_used_s"] = -0.2


def _no_machine(doc: dict[str, Any]) -> None:
    doc["audit"][0]["machine"] = "machine:NO-SUCH"
    _machine(doc, "PR-101")["safeguards"][0]["measure"] = "machine:NO-SUCH/rev:1/measure:1"


def _future(doc: dict[str, Any]) -> None:
    doc["version"] = 2


def _duplicate_tag(doc: dict[str, Any]) -> None:
    doc["machines"][1]["asset_tag"] = doc["machines"][0]["asset_tag"]


def _stage(doc: dict[str, Any]) -> None:
    _machine(doc, "PR-101")["assessments"][0]["hazards"][0]["ratings"][1]["stage"] = "final"


def _types(doc: dict[str, Any]) -> None:
    m = _machine(doc, "PR-101")
    m["year"] = "1998"
    m["active"] = "yes"
    m["colour"] = "red"


def _params(doc: dict[str, Any]) -> None:
    _machine(doc, "PR-101")["assessments"][0]["hazards"][0]["ratings"][0]["parameters"][
        "severity"
    ] = "S3"


def _wrong_kind(doc: dict[str, Any]) -> None:
    _machine(doc, "PR-101")["assessments"][0]["hazards"][0]["task"] = "machine:PR-102"


def _other_assessment(doc: dict[str, Any]) -> None:
    m = _machine(doc, "PR-101")["assessments"][0]["measures"][0]
    m["hazards"] = ["machine:PR-102/rev:1/hazard:1"]


def _huge(doc: dict[str, Any]) -> None:
    _machine(doc, "PR-101")["notes"] = "x" * (10 * 1024 * 1024)


BAD: dict[str, tuple[Callable[[dict[str, Any]], bytes], list[str]]] = {
    "broken JSON": (
        lambda d: b'{"format": "riskreg-site", "version": 1, "site": {"name": "X",,}}',
        ["file: not valid JSON at line 1 column 63: Expecting property name"],
    ),
    "truncated": (
        lambda d: exchange.dumps(d)[: len(exchange.dumps(d)) // 2],
        ["file: not valid JSON at line", "it may have been cut off"],
    ),
    "UTF-16": (
        lambda d: exchange.dumps(d).decode().encode("utf-16"),
        ["file: the file is UTF-16 or UTF-32 encoded", "save it as UTF-8"],
    ),
    "Latin-1": (_latin1, ["file: the file is not valid UTF-8: byte 0xFC at line"]),
    "empty": (lambda d: b"  \n", ["file: the file is empty"]),
    "not an object": (lambda d: b"[1, 2]", ["the file must hold a JSON object"]),
    "NaN": (
        lambda d: exchange.dumps(d).replace(b'"t_used_s": 0.', b'"t_used_s": NaN, "x": 0.', 1),
        ["file: not valid JSON: NaN is not a JSON number"],
    ),
    "huge field": (
        _mutate(_huge),
        ["machines[5].notes: is 10485760 characters long; at most 10000 are allowed"],
    ),
    "impossible dates": (
        _mutate(_dates),
        [
            "machines[5].verifications[0].performed_on: must be a date YYYY-MM-DD that "
            "exists in the calendar; got the text '2026-02-30'",
            "machines[5].measurements[0].measured_on: must be a date YYYY-MM-DD that exists "
            "in the calendar; got the text '0000-06-01'",
        ],
    ),
    "negative stopping times": (
        _mutate(_negative),
        [
            "machines[5].measurements[0].trials_s[0]: must be more than 0 and at most 10 s; "
            "got -0.18",
            "machines[5].measurements[0].t_used_s: must be more than 0 and at most 20 s; got -0.2",
        ],
    ),
    "machine that does not exist": (
        _mutate(_no_machine),
        [
            "audit[0].machine: the text 'machine:NO-SUCH' is not the key of a machine",
            "machines[5].safeguards[0].measure: refers to the text "
            "'machine:NO-SUCH/rev:1/measure:1', which is not the key of any record",
        ],
    ),
    "version from the future": (
        _mutate(_future),
        ["version: the file is format version 2, made by a newer riskreg"],
    ),
    "duplicate asset tag": (
        _mutate(_duplicate_tag),
        ["machines[1].asset_tag: the asset_tag 'CV-601' is used twice (also by machines[0])"],
    ),
    "rating stage": (
        _mutate(_stage),
        [
            "machines[5].assessments[0].hazards[0].ratings[1].stage: must be one of: "
            "initial, residual; got the text 'final'"
        ],
    ),
    "types and unknown fields": (
        _mutate(_types),
        [
            "machines[5].year: must be a whole number; got the text '1998'",
            "machines[5].active: must be true or false; got the text 'yes'",
            "machines[5].colour: is not a field of machines",
        ],
    ),
    "rating parameters": (
        _mutate(_params),
        ["machines[5].assessments[0].hazards[0].ratings[0].parameters.severity: Choose S1 or S2."],
    ),
    "reference of the wrong kind": (
        _mutate(_wrong_kind),
        [
            "machines[5].assessments[0].hazards[0].task: refers to 'machine:PR-102', which is "
            "a machine; a task was expected"
        ],
    ),
    "hazard of another machine": (
        _mutate(_other_assessment),
        [
            "machines[5].assessments[0].measures[0].hazards[0]: refers to "
            "'machine:PR-102/rev:1/hazard:1', which belongs to another assessment revision"
        ],
    ),
    "site name taken": (
        _mutate(lambda d: d["site"].update(name="Lindqvist Stamping")),
        ["site.name: a site named 'Lindqvist Stamping' already exists in this register"],
    ),
}


@pytest.mark.parametrize("case", list(BAD))
def test_a_bad_file_is_refused_whole(
    session: Session, occupied: Site, base_doc: dict[str, Any], case: str
) -> None:
    make, expected = BAD[case]
    assert _machine(base_doc, "PR-101") is base_doc["machines"][5]  # the paths below
    raw = make(base_doc)
    before = counts(session)
    report = exchange.import_site(session, raw)
    assert not report.accepted
    listed = [str(p) for p in report.problems]
    for fragment in expected:
        assert any(fragment in p for p in listed), (fragment, listed)
    assert counts(session) == before


def test_every_problem_is_reported_at_once(
    session: Session, occupied: Site, base_doc: dict[str, Any]
) -> None:
    doc = copy.deepcopy(base_doc)
    for fn in (_dates, _negative, _no_machine, _duplicate_tag, _stage, _types, _params):
        fn(doc)
    before = counts(session)
    report = exchange.import_site(session, exchange.dumps(doc))
    listed = "\n".join(str(p) for p in report.problems)
    for case in (
        "impossible dates",
        "negative stopping times",
        "machine that does not exist",
        "duplicate asset tag",
        "rating stage",
        "types and unknown fields",
        "rating parameters",
    ):
        for fragment in BAD[case][1]:
            assert fragment in listed, fragment
    assert counts(session) == before


def test_markup_and_sql_in_names_are_kept_as_text(
    session: Session, occupied: Site, base_doc: dict[str, Any]
) -> None:
    doc = copy.deepcopy(base_doc)
    odd = {
        "name": "<script>alert('press')</script> & <b>bold</b>",
        "notes": "Robert'); DROP TABLE machine; --",
        "location": '" OR 1=1 --',
    }
    _machine(doc, "PR-101").update(odd)
    doc["site"]["name"] = "Ostrander'; DELETE FROM site; --"
    report = exchange.import_site(session, exchange.dumps(doc))
    assert report.accepted, [str(p) for p in report.problems]
    site = register.get_site(session, "Ostrander'; DELETE FROM site; --")
    m = register.machine_by_tag(session, site, "PR-101")
    assert (m.name, m.notes, m.location) == (odd["name"], odd["notes"], odd["location"])
    assert counts(session)["site"] == 2 and counts(session)["machine"] == 14
    again = exchange.export_site(session, site)
    assert {k: _machine(again, "PR-101")[k] for k in odd} == odd


# --- tables for spreadsheets --------------------------------------------------------------


def _read(data: bytes, fmt: str) -> list[list[Any]]:
    if fmt == "csv":
        assert data.startswith(b"\xef\xbb\xbf")  # UTF-8 with a byte-order mark
        return [list(r) for r in csv.reader(io.StringIO(data.decode("utf-8-sig")))]
    wb = load_workbook(io.BytesIO(data))
    return [list(r) for r in wb.active.iter_rows(values_only=True)]


def test_tables_open_and_carry_the_rows(session: Session) -> None:
    build.build(session)
    site = register.get_site(session)
    for fmt in ("csv", "xlsx"):
        _check_tables(session, site, fmt)


def _check_tables(session: Session, site: Site, fmt: str) -> None:
    machines = _read(exchange.export_table(session, site, "machines", fmt), fmt)
    head, rows = machines[0], machines[1:]
    assert head[:3] == ["asset_tag", "name", "kind"]
    assert [r[0] for r in rows] == sorted(t[0] for t in build.MACHINES)
    pr101 = dict(zip(head, rows[[r[0] for r in rows].index("PR-101")], strict=True))
    # values as the demo plant records them (seed_demo.build.MACHINES)
    assert pr101["name"] == "250 t straight-side press"
    assert pr101["kind"] == "Mechanical power press"
    assert pr101["area"] == "Press shop"
    assert str(pr101["year"]) == "1998"
    # its worst hazard is rated S2, F2, P2: PLr e by the risk graph
    # ISO 13849-1:2015 Annex A, Figure A.1 [std, from memory]
    assert pr101["highest_plr"] == "e"

    hazards = _read(exchange.export_table(session, site, "hazards", fmt), fmt)
    head, rows = hazards[0], hazards[1:]
    live = session.scalar(
        select(func.count()).select_from(Hazard).where(Hazard.archived.is_(False))
    )
    assert len(rows) == live  # one revision per machine in the demo, nothing archived
    first = dict(zip(head, next(r for r in rows if r[0] == "PR-101"), strict=True))
    assert first["event"] == "Hand in the die space when the slide descends"
    assert first["initial_parameters"] == "severity=S2, frequency=F2, avoidance=P2"
    # S2, F2, P2 → PLr e: ISO 13849-1:2015 Annex A, Figure A.1 [std, from memory]
    assert first["initial_level"] == "e"
    assert first["residual_method"] == "iso13849"

    due_rows = _read(exchange.export_table(session, site, "due", fmt), fmt)
    items = due.due_items(session, site)
    assert len(due_rows) - 1 == len(items) > 0
    cell = due_rows[1][0]
    assert (cell if isinstance(cell, str) else cell.date().isoformat()) == items[
        0
    ].due_date.isoformat()


def test_text_that_looks_like_a_formula_stays_text(session: Session) -> None:
    site = register.create_site(session, "Formula Works")
    register.create_machine(
        session,
        site,
        {"asset_tag": "=1+2", "name": '=HYPERLINK("http://x.invalid","open")', "kind": "shear"},
    )
    rows = _read(exchange.export_table(session, site, "machines", "csv"), "csv")
    assert rows[1][:2] == ["'=1+2", '\'=HYPERLINK("http://x.invalid","open")']
    wb = load_workbook(io.BytesIO(exchange.export_table(session, site, "machines", "xlsx")))
    a2 = wb.active["A2"]
    assert a2.value == "=1+2" and a2.data_type == "s"


def test_unknown_table_is_refused(session: Session) -> None:
    site = register.create_site(session, "Table Works")
    with pytest.raises(exchange.ValidationError) as exc:
        exchange.export_table(session, site, "people", "csv")
    assert "Choose a table: machines, hazards, due" in str(exc.value)
    with pytest.raises(exchange.ValidationError):
        exchange.export_table(session, site, "machines", "ods")
