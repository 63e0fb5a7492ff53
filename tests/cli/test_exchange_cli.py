"""`riskreg export | import | backup | restore`: files written whole or not at all, bad
input as one line (or the list of problems) with exit status 2, and crash safety: a
command killed in the middle leaves the database as it was and no partial file."""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from openpyxl import load_workbook
from sqlalchemy import Engine, func, insert, select, text
from sqlalchemy.orm import Session

from riskreg import migrate
from riskreg.cli import main
from riskreg.db import make_engine
from riskreg.model import AuditEntry, Base
from riskreg.services import backup as backups
from riskreg.services import exchange, register, safeguards, verification
from riskreg.services.verification import Upload

POSTGRES = bool(os.environ.get("RISKREG_TEST_POSTGRES_URL"))
PNG = b"\x89PNG\r\n\x1a\n" + b"x" * 64
WAIT_S = 30.0  # bound of every wait below; each normally ends within a second or two


def call(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        main(list(argv))
    out, err = capsys.readouterr()
    code = exc.value.code
    return (code if isinstance(code, int) else 1), out, err


def bad(capsys: pytest.CaptureFixture[str], *argv: str) -> str:
    code, out, err = call(capsys, *argv)
    assert code == 2, err
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("riskreg: error: ")
    return lines[0]


def counts(url: str) -> dict[str, int]:
    eng = make_engine(url)
    try:
        with eng.connect() as conn:
            return {
                n: int(conn.execute(select(func.count()).select_from(t)).scalar_one())
                for n, t in Base.metadata.tables.items()
            }
    finally:
        eng.dispose()


def integrity_ok(url: str) -> None:
    """SQLite: PRAGMA integrity_check says ok. PostgreSQL: every table reads."""
    if url.startswith("sqlite"):
        con = sqlite3.connect(url.split("sqlite:///", 1)[1])
        try:
            assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        finally:
            con.close()
    else:
        counts(url)


@pytest.fixture
def works(session: Session, tmp_path: Path) -> str:
    """A small register: one site, two machines, a safeguard, a verification with a file."""
    site = register.create_site(session, "Kessler Forming")
    area = register.create_area(session, site, "Hall A")
    press = register.create_machine(
        session,
        site,
        {"asset_tag": "P-1", "name": "=2+3 press", "kind": "mechanical_press", "area_id": area.id},
    )
    register.create_machine(session, site, {"asset_tag": "S-1", "name": "Shear", "kind": "shear"})
    register.add_hazard(
        session,
        register.current_assessment(press),
        {"hazard_group": "mechanical", "event": "Hand in the die"},
        {"method": "iso13849", "severity": "S2", "frequency": "F2", "avoidance": "P2"},
    )
    guard = safeguards.save_safeguard(
        session,
        press,
        {
            "kind": "light_curtain",
            "label": "Front curtain",
            "installed_distance_mm": 600,
            "espe_type": "4",
            "resolution_mm": 14,
            "blanking": "none",
        },
    )
    verification.record_verification(
        session,
        press,
        {
            "kind": "functional_test",
            "safeguard_id": guard.id,
            "performed_on": "2026-01-15",
            "performed_by": "Ann",
            "result": "pass",
        },
        [Upload("rod.png", PNG)],
        instance_path=tmp_path / "instance",
    )
    return "Kessler Forming"


@pytest.fixture
def fresh(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """A second register, migrated and empty."""
    if POSTGRES:
        url = str(request.getfixturevalue("db_url"))
    else:
        url = f"sqlite:///{tmp_path / 'fresh.sqlite'}"
    eng = make_engine(url)
    migrate.upgrade(eng)
    eng.dispose()
    return url


# --- export -------------------------------------------------------------------------------


def test_export_import_round_trip(
    capsys: pytest.CaptureFixture[str], works: str, engine_url: str, fresh: str, tmp_path: Path
) -> None:
    out = tmp_path / "kessler.json"
    code, stdout, err = call(capsys, "export", "--db", engine_url, "-o", str(out))
    assert code == 0, err
    assert stdout.startswith("Exported Kessler Forming (2 machines,")
    assert json.loads(out.read_bytes())["format"] == "riskreg-site"
    code, stdout, err = call(capsys, "import", "--db", fresh, str(out), "--by", "ann@x.invalid")
    assert code == 0, err
    assert stdout.startswith(
        "Imported Kessler Forming from kessler.json: 2 machines, 1 hazards, 1 verifications, "
    )
    again = tmp_path / "again.json"
    assert call(capsys, "export", "--db", fresh, "-o", str(again))[0] == 0
    assert again.read_bytes() == out.read_bytes()
    # the file's evidence is named, not carried: a warning says so when the folder lacks it
    code, _, err = call(
        capsys,
        "import",
        "--db",
        fresh,
        str(out),
        "--site-name",
        "Copy",
        "--instance",
        str(tmp_path / "empty"),
    )
    assert code == 0
    assert "riskreg: warning: files[0]: 'rod.png'" in err and "is not in the evidence folder" in err


def test_tables_for_spreadsheets(
    capsys: pytest.CaptureFixture[str], works: str, engine_url: str, tmp_path: Path
) -> None:
    m = tmp_path / "machines.csv"
    assert call(capsys, "export", "--db", engine_url, "-o", str(m), "--table", "machines")[0] == 0
    rows = list(csv.reader(io.StringIO(m.read_bytes().decode("utf-8-sig"))))
    assert rows[0][:4] == ["asset_tag", "name", "kind", "area"]
    assert [r[:4] for r in rows[1:]] == [
        ["P-1", "'=2+3 press", "Mechanical power press", "Hall A"],  # a formula stays text
        ["S-1", "Shear", "Shear", ""],
    ]
    h = tmp_path / "hazards.xlsx"
    assert call(capsys, "export", "--db", engine_url, "-o", str(h), "--table", "hazards")[0] == 0
    ws = load_workbook(h).active
    got = list(ws.iter_rows(values_only=True))
    assert got[0][:4] == ("asset_tag", "machine", "revision", "hazard")
    assert got[1][:4] == ("P-1", "=2+3 press", 1, 1) and ws["B2"].data_type == "s"
    d = tmp_path / "due.csv"
    assert call(capsys, "export", "--db", engine_url, "-o", str(d), "--table", "due")[0] == 0
    assert d.read_bytes().decode("utf-8-sig").startswith("due_date,status,days_overdue")


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["-o", "{dir}/x.txt"], "x.txt: the output must end in .json, .csv or .xlsx"),
        (["-o", "{dir}/x.csv"], "a .csv export is one table: add --table machines, hazards or due"),
        (["-o", "{dir}/x.json", "--table", "due"], "--table is for .csv and .xlsx"),
        (["-o", "{dir}/x.csv", "--table", "people"], "Invalid value for '--table'"),
        (["-o", "{dir}/x.json", "--site", "Nowhere"], "No site named 'Nowhere'"),
        (["-o", "{dir}/no/such/x.json"], "there is no folder"),
    ],
)
def test_export_bad_arguments(
    capsys: pytest.CaptureFixture[str],
    works: str,
    engine_url: str,
    tmp_path: Path,
    args: list[str],
    message: str,
) -> None:
    argv = [a.replace("{dir}", str(tmp_path)) for a in args]
    line = bad(capsys, "export", "--db", engine_url, *argv)
    assert message in line
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(("x.", ".x."))]


def test_a_failed_export_leaves_the_old_file(
    capsys: pytest.CaptureFixture[str],
    works: str,
    engine_url: str,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    out = tmp_path / "site.json"
    out.write_bytes(b"yesterday's export")

    def full_disk(fd: int) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", full_disk)
    line = bad(capsys, "export", "--db", engine_url, "-o", str(out))
    assert "cannot write" in line and "No space left on device" in line
    assert out.read_bytes() == b"yesterday's export"
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".site")) == []


# --- import -------------------------------------------------------------------------------


def test_import_refused_prints_every_problem(
    capsys: pytest.CaptureFixture[str], works: str, engine_url: str, fresh: str, tmp_path: Path
) -> None:
    out = tmp_path / "k.json"
    assert call(capsys, "export", "--db", engine_url, "-o", str(out))[0] == 0
    doc = json.loads(out.read_bytes())
    doc["machines"][0]["year"] = 1850
    doc["machines"][0]["verifications"][0]["performed_on"] = "2026-02-30"
    doc["machines"][1]["asset_tag"] = "P-1"
    bad_file = tmp_path / "bad.json"
    bad_file.write_bytes(exchange.dumps(doc))
    before = counts(fresh)
    code, stdout, err = call(capsys, "import", "--db", fresh, str(bad_file))
    assert code == 2 and stdout == "" and "Traceback" not in err
    lines = err.strip().splitlines()
    assert lines[0] == "riskreg: error: bad.json was refused (3 problems); nothing was written:"
    year = dt.date.today().year
    assert lines[1] == f"  machines[0].year: must be from 1900 to {year}; got 1850"
    assert lines[2].startswith("  machines[0].verifications[0].performed_on: must be a date")
    assert lines[3] == (
        "  machines[1].asset_tag: the asset_tag 'P-1' is used twice (also by machines[0])"
    )
    assert counts(fresh) == before


@pytest.mark.parametrize(
    ("content", "message"),
    [
        ("utf16", "file: the file is UTF-16 or UTF-32 encoded"),
        ("latin1", "file: the file is not valid UTF-8: byte 0xE9 at line 1"),
        ("truncated", "it may have been cut off"),
    ],
)
def test_import_unreadable_file(
    capsys: pytest.CaptureFixture[str], fresh: str, tmp_path: Path, content: str, message: str
) -> None:
    text_doc = '{"format": "riskreg-site", "version": 1, "site": {"name": "Fabriqué"}}'
    data = {
        "utf16": text_doc.encode("utf-16"),
        "latin1": text_doc.encode("latin-1"),
        "truncated": text_doc.encode()[:40],
    }[content]
    f = tmp_path / "in.json"
    f.write_bytes(data)
    code, stdout, err = call(capsys, "import", "--db", fresh, str(f))
    assert code == 2 and stdout == "" and "Traceback" not in err
    lines = err.strip().splitlines()
    assert lines[0].startswith("riskreg: error: in.json was refused (1 problem)")
    assert message in lines[1]


def test_import_needs_a_file_and_a_register(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    assert "does not exist" in bad(capsys, "import", "--db", "x.sqlite", str(tmp_path / "no"))
    f = tmp_path / "in.json"
    f.write_text("{}")
    line = bad(capsys, "import", "--db", str(tmp_path / "none.sqlite"), str(f))
    assert "no database at" in line


# --- backup and restore -------------------------------------------------------------------


def test_backup_and_restore(
    capsys: pytest.CaptureFixture[str], works: str, engine_url: str, fresh: str, tmp_path: Path
) -> None:
    archive = tmp_path / "b.tar.gz"
    inst = tmp_path / "instance"
    code, stdout, err = call(
        capsys, "backup", "--db", engine_url, "-o", str(archive), "--instance", str(inst)
    )
    assert code == 0, err
    assert "and 1 evidence file(s)" in stdout
    assert "exists already" in bad(
        capsys, "backup", "--db", engine_url, "-o", str(archive), "--instance", str(inst)
    )
    restored = tmp_path / "restored-instance"
    # a migrated, empty register may be replaced without --force
    code, stdout, err = call(
        capsys, "restore", "--db", fresh, str(archive), "--instance", str(restored)
    )
    assert code == 0, err
    assert stdout.startswith("Restored b.tar.gz: the ")
    one = tmp_path / "one.json"
    two = tmp_path / "two.json"
    assert call(capsys, "export", "--db", engine_url, "-o", str(one))[0] == 0
    assert call(capsys, "export", "--db", fresh, "-o", str(two))[0] == 0
    assert one.read_bytes() == two.read_bytes()
    # now it holds data: --force is needed
    line = bad(capsys, "restore", "--db", fresh, str(archive), "--instance", str(restored))
    assert "add --force to replace it" in line
    damaged = tmp_path / "damaged.tar.gz"
    data = bytearray(archive.read_bytes())
    data[len(data) // 2] ^= 0xFF
    damaged.write_bytes(bytes(data))
    line = bad(
        capsys, "restore", "--db", fresh, str(damaged), "--force", "--instance", str(restored)
    )
    assert "damaged" in line
    assert call(capsys, "export", "--db", fresh, "-o", str(two))[0] == 0
    assert one.read_bytes() == two.read_bytes()


# --- crash safety -------------------------------------------------------------------------


def _start(tmp_path: Path, *argv: str) -> subprocess.Popen[bytes]:
    """``riskreg ARGS`` in its own process group (so that a kill reaches pg_dump too)."""
    return subprocess.Popen(
        [sys.executable, "-c", "from riskreg.cli import main; main()", *argv],
        cwd=tmp_path,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        start_new_session=True,
    )


def _kill_when(proc: subprocess.Popen[bytes], ready: Callable[[], bool], what: str) -> None:
    deadline = time.monotonic() + WAIT_S
    while not ready():
        if proc.poll() is not None:
            out, err = proc.communicate()
            pytest.fail(f"riskreg ended (status {proc.returncode}) before {what}: {err!r}")
        if time.monotonic() > deadline:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=10)
            pytest.fail(f"{what} did not happen within {WAIT_S:.0f} s")
        time.sleep(0.005)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(timeout=10)
    proc.communicate()
    assert proc.returncode == -signal.SIGKILL, "it finished before it was killed"


def _writing(url: str) -> Callable[[], bool]:
    """True once the import has started writing: SQLite's write-ahead log has grown past
    the page cache (uncommitted pages spill into it); PostgreSQL's backend has a
    transaction id (given at its first write)."""
    if url.startswith("sqlite"):
        wal = Path(url.split("sqlite:///", 1)[1] + "-wal")
        start = wal.stat().st_size if wal.exists() else 0
        return lambda: wal.exists() and wal.stat().st_size > start + 1024 * 1024
    eng = make_engine(url)

    def ready() -> bool:
        with eng.connect() as conn:
            n = conn.execute(
                text(
                    "SELECT count(*) FROM pg_stat_activity WHERE datname = current_database() "
                    "AND backend_xid IS NOT NULL AND pid <> pg_backend_pid()"
                )
            ).scalar_one()
        return bool(n)

    return ready


@pytest.fixture
def big_file(works: str, session: Session, tmp_path: Path) -> Iterator[Path]:
    """A site export with 15 000 audit entries of about 2 kB: some 35 MB to read and write."""
    doc = exchange.export_site(session, register.get_site(session, works))
    session.rollback()  # give the connection back: the test's process holds nothing open
    doc["site"]["name"] = "Kessler Forming, copy"
    filler = {f"field_{i}": "measured and recorded " * 4 for i in range(10)}
    doc["audit"].extend(
        {
            "at": f"2026-01-01T00:{(n // 60) % 60:02d}:{n % 60:02d}+00:00",
            "user_email": "ann@x.invalid",
            "action": "update",
            "entity": "machine",
            "record": "machine:P-1",
            "machine": "machine:P-1",
            "before": {"n": n, **filler},
            "after": {"n": n + 1, **filler},
        }
        for n in range(15000)
    )
    path = tmp_path / "big.json"
    path.write_bytes(exchange.dumps(doc))
    yield path


def test_import_killed_midway_leaves_the_database_as_it_was(
    engine: Engine, engine_url: str, big_file: Path, tmp_path: Path
) -> None:
    engine.dispose()  # close the test's connections
    before = counts(engine_url)
    writing = _writing(engine_url)
    proc = _start(tmp_path, "import", "--db", engine_url, str(big_file))
    _kill_when(proc, writing, "the import started writing")
    assert counts(engine_url) == before
    integrity_ok(engine_url)
    # and the register still works: the same file imports in full
    proc = _start(tmp_path, "import", "--db", engine_url, str(big_file))
    out, err = proc.communicate(timeout=120)
    assert proc.returncode == 0, err
    assert counts(engine_url)["audit_entry"] > before["audit_entry"] + 15000


@pytest.fixture
def big_register(works: str, engine: Engine, tmp_path: Path) -> Path:
    """About 20 MB of audit trail in the database and 16 MB of evidence files."""
    filler = {"notes": os.urandom(400).hex()}
    with engine.begin() as conn:
        for _ in range(20):
            conn.execute(
                insert(AuditEntry),
                [
                    {"action": "update", "entity": "machine", "user_email": "", "after": filler}
                    for _ in range(1000)
                ],
            )
    inst = tmp_path / "instance"
    for _ in range(8):
        data = os.urandom(2 * 1024 * 1024)
        sha = hashlib.sha256(data).hexdigest()
        (inst / "evidence" / sha[:2]).mkdir(parents=True, exist_ok=True)
        (inst / "evidence" / sha[:2] / sha).write_bytes(data)
    engine.dispose()
    return inst


def test_backup_killed_midway_leaves_no_archive(
    engine_url: str, big_register: Path, tmp_path: Path
) -> None:
    before = counts(engine_url)
    out_dir = tmp_path / "backups"
    out_dir.mkdir()
    final = out_dir / "nightly.tar.gz"

    def archive_started() -> bool:
        return any(p.stat().st_size > 0 for p in out_dir.glob(".nightly.tar.gz.*/archive.part"))

    proc = _start(
        tmp_path, "backup", "--db", engine_url, "-o", str(final), "--instance", str(big_register)
    )
    _kill_when(proc, archive_started, "the archive was being written")
    assert not final.exists()
    assert [p.name for p in out_dir.iterdir() if not p.name.startswith(".")] == []
    assert counts(engine_url) == before
    integrity_ok(engine_url)
    # a second try writes the archive whole
    proc = _start(
        tmp_path, "backup", "--db", engine_url, "-o", str(final), "--instance", str(big_register)
    )
    _out, err = proc.communicate(timeout=120)
    assert proc.returncode == 0, err
    assert len(backups.check_archive(final).evidence) == 9  # the eight and the rod photo
