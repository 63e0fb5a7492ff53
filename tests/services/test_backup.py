"""Backups of the whole register and their restore: same register after the trip, every
check before anything is replaced, a damaged or foreign archive refused."""

from __future__ import annotations

import io
import json
import os
import sqlite3
import tarfile
from collections.abc import Callable
from pathlib import Path

import pytest
from sqlalchemy import Engine, func, select, text
from sqlalchemy.orm import Session

from riskreg import migrate
from riskreg.db import make_engine, session_factory
from riskreg.model import Base, Site
from riskreg.services import audit, backup, exchange, register, safeguards, verification
from riskreg.services.verification import Upload
from seed_demo import build

POSTGRES = bool(os.environ.get("RISKREG_TEST_POSTGRES_URL"))
PNG = b"\x89PNG\r\n\x1a\n" + b"guard photo" + b"\x00" * 40
PDF = b"%PDF-1.4\n% interlock test: door opened at mid-stroke, ram stopped\n%%EOF\n"


def _counts(url: str) -> dict[str, int]:
    eng = make_engine(url)
    try:
        with eng.connect() as conn:
            return {
                n: int(conn.execute(select(func.count()).select_from(t)).scalar_one())
                for n, t in Base.metadata.tables.items()
            }
    finally:
        eng.dispose()


def _export(url: str, name: str | None = None) -> bytes:
    eng = make_engine(url)
    factory = session_factory(eng)
    try:
        with factory() as s:
            return exchange.dumps(exchange.export_site(s, register.get_site(s, name)))
    finally:
        eng.dispose()


def _files(folder: Path) -> dict[str, bytes]:
    return {
        str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()
    }


@pytest.fixture
def instance(tmp_path: Path) -> Path:
    return tmp_path / "instance"


@pytest.fixture
def small(session: Session, instance: Path) -> Site:
    """A small register with two evidence files on a verification."""
    site = register.create_site(session, "Brenvik Works")
    m = register.create_machine(
        session, site, {"asset_tag": "HP-7", "name": "Hydraulic press", "kind": "hydraulic_press"}
    )
    guard = safeguards.save_safeguard(
        session,
        m,
        {
            "kind": "interlocking_guard",
            "label": "Front door",
            "installed_distance_mm": 900,
            "device_type": "2",
            "motivation_to_defeat": "low",
            "opening_c_mm": 120,
        },
    )
    verification.record_verification(
        session,
        m,
        {
            "kind": "functional_test",
            "safeguard_id": guard.id,
            "performed_on": "2026-01-15",
            "performed_by": "Marit Quennell-Sand",
            "result": "pass",
        },
        [Upload("door.png", PNG), Upload("report.pdf", PDF)],
        instance_path=instance,
    )
    return site


@pytest.fixture
def target(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """Where to restore: a database that does not exist yet (SQLite) or is empty (PostgreSQL)."""
    if POSTGRES:
        return str(request.getfixturevalue("db_url"))
    return f"sqlite:///{tmp_path / 'restored' / 'riskreg.sqlite'}"


def _occupy(url: str) -> None:
    """Give the target a register with one site of its own."""
    eng = make_engine(url)
    migrate.upgrade(eng)
    factory = session_factory(eng)
    audit.install(factory)
    with factory() as s:
        register.create_site(s, "Kept Works")
    eng.dispose()


def _rewrite(
    archive: Path, out: Path, change: Callable[[dict[str, bytes]], None], *, fix: bool = False
) -> None:
    """A copy of an archive with its members changed; ``fix`` updates the manifest's
    hashes and sizes to match (a well-formed archive with other content)."""
    with tarfile.open(archive, "r:gz") as tar:
        members = {m.name: tar.extractfile(m).read() for m in tar.getmembers()}  # type: ignore[union-attr]
    change(members)
    if fix:
        import hashlib

        manifest = json.loads(members["manifest.json"])
        for f in manifest["files"]:
            f["sha256"] = hashlib.sha256(members[f["path"]]).hexdigest()
            f["size"] = len(members[f["path"]])
        members["manifest.json"] = json.dumps(manifest).encode()
    with tarfile.open(out, "w:gz") as tar:
        for name, data in members.items():
            info = tarfile.TarInfo(name)
            info.size = len(data)
            tar.addfile(info, io.BytesIO(data))


# --- the round trip -----------------------------------------------------------------------


def test_backup_then_restore_gives_the_same_register(
    session: Session, engine_url: str, target: str, instance: Path, tmp_path: Path
) -> None:
    build.build(session)
    site = register.get_site(session)
    m = register.machine_by_tag(session, site, "PR-101")
    verification.record_verification(
        session,
        m,
        {
            "kind": "weekly_press",
            "performed_on": "2026-01-15",
            "performed_by": "Jonas Brekke-Lowe",
            "result": "pass",
            "press_serial": m.serial,
            "signature": "Marit Quennell-Sand",
        },
        [Upload("weekly.pdf", PDF), Upload("clutch.png", PNG)],
        instance_path=instance,
    )
    before = exchange.dumps(exchange.export_site(session, site))
    archive = tmp_path / "register.tar.gz"
    made = backup.backup(engine_url, instance, archive)
    assert made.engine == ("postgresql" if POSTGRES else "sqlite")
    assert made.schema_revision == migrate.head_revision()
    assert made.evidence_files == 2 and made.warnings == ()
    assert oct(archive.stat().st_mode & 0o777) == "0o600"  # it holds password hashes

    manifest = backup.check_archive(archive)
    assert [f.path for f in manifest.files][0].startswith("database/riskreg.")
    assert len(manifest.evidence) == 2

    restored_instance = tmp_path / "restored-instance"
    done = backup.restore(archive, target, restored_instance)
    assert done.replaced is False and done.needs_upgrade is False
    assert _export(target) == before
    assert _files(restored_instance / "evidence") == _files(instance / "evidence")
    assert _counts(target) == _counts(engine_url)


def test_backup_reads_a_snapshot_while_a_writer_is_busy(
    engine: Engine, small: Site, engine_url: str, target: str, instance: Path, tmp_path: Path
) -> None:
    """The server keeps writing while the backup runs: the archive holds what was
    committed before, and the writer is not held up (WAL on SQLite, MVCC on PostgreSQL)."""
    writer = engine.connect()
    tx = writer.begin()
    writer.execute(
        Site.__table__.insert(),
        {
            "name": "Not yet committed",
            "units": "mm",
            "distance_method": "ISO",
            "rating_method": "iso13849",
            "editions": {},
            "stop_time_allowance_percent": 0,
            "allow_self_approval": False,
        },
    )
    try:
        backup.backup(engine_url, instance, tmp_path / "busy.tar.gz")
    finally:
        tx.commit()
        writer.close()
    backup.restore(tmp_path / "busy.tar.gz", target, tmp_path / "restored-instance")
    eng = make_engine(target)
    with eng.connect() as conn:
        names = set(conn.execute(select(Site.name)).scalars())
    eng.dispose()
    assert names == {"Brenvik Works"}
    with engine.connect() as conn:
        assert "Not yet committed" in set(conn.execute(select(Site.name)).scalars())


def test_a_backup_never_overwrites_a_file(
    small: Site, engine_url: str, instance: Path, tmp_path: Path
) -> None:
    out = tmp_path / "b.tar.gz"
    out.write_bytes(b"an older backup")
    with pytest.raises(backup.BackupError) as exc:
        backup.backup(engine_url, instance, out)
    assert "b.tar.gz exists already; choose a new name" in str(exc.value)
    assert out.read_bytes() == b"an older backup"
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".b.tar.gz")] == []


# --- refusals -----------------------------------------------------------------------------


@pytest.fixture
def archive(small: Site, engine_url: str, instance: Path, tmp_path: Path) -> Path:
    out = tmp_path / "good.tar.gz"
    backup.backup(engine_url, instance, out)
    return out


def _one_byte_changed(archive: Path, out: Path) -> None:
    data = bytearray(archive.read_bytes())
    data[len(data) // 2] ^= 0x01
    out.write_bytes(bytes(data))


def _member_changed(archive: Path, out: Path) -> None:
    def change(m: dict[str, bytes]) -> None:
        name = next(k for k in m if k.startswith("evidence/"))
        m[name] = m[name][:-1] + b"!"

    _rewrite(archive, out, change)


def _member_added(archive: Path, out: Path) -> None:
    _rewrite(archive, out, lambda m: m.update({"../../outside": b"not from a backup"}))


def _member_missing(archive: Path, out: Path) -> None:
    def change(m: dict[str, bytes]) -> None:
        del m[next(k for k in m if k.startswith("evidence/"))]

    _rewrite(archive, out, change)


def _database_damaged(archive: Path, out: Path) -> None:
    def change(m: dict[str, bytes]) -> None:
        name = next(k for k in m if k.startswith("database/"))
        db = bytearray(m[name])
        db[len(db) // 2 : len(db) // 2 + 4096] = b"\xa5" * 4096  # a page of noise
        m[name] = bytes(db)

    _rewrite(archive, out, change, fix=True)  # hashes match: only the database check finds it


def _not_a_backup(archive: Path, out: Path) -> None:
    out.write_bytes(b"PK\x03\x04 this is a zip file, not a riskreg backup")


def _foreign_tar(archive: Path, out: Path) -> None:
    _rewrite(archive, out, lambda m: m.clear() or m.update({"notes.txt": b"hello"}))


DAMAGE: dict[str, tuple[Callable[[Path, Path], None], str]] = {
    "one byte changed": (_one_byte_changed, "damaged"),
    "a member changed": (_member_changed, "does not match its SHA-256 in the manifest"),
    "a member added": (_member_added, "'../../outside', which its manifest does not list"),
    "a member missing": (_member_missing, "lacks 1 file(s) its manifest lists"),
    "database damaged": (_database_damaged, "the database in the archive"),
    "not a backup": (_not_a_backup, "damaged or not a riskreg backup"),
    "another tar file": (_foreign_tar, "is not a riskreg backup: it does not start with"),
}


@pytest.mark.parametrize("case", list(DAMAGE))
def test_a_damaged_archive_is_refused_and_nothing_replaced(
    archive: Path, target: str, tmp_path: Path, case: str
) -> None:
    damage, message = DAMAGE[case]
    if case == "database damaged" and POSTGRES:
        message = "pg_restore"  # it reads the whole dump before anything is replaced
    _occupy(target)
    before = _export(target, "Kept Works")
    before_counts = _counts(target)
    file_before = Path(target.split("sqlite:///", 1)[1]).read_bytes() if not POSTGRES else b""
    bad = tmp_path / "bad.tar.gz"
    damage(archive, bad)
    kept_instance = tmp_path / "kept-instance"
    (kept_instance / "evidence").mkdir(parents=True)
    with pytest.raises(backup.BackupError) as exc:
        backup.restore(bad, target, kept_instance, force=True)
    assert message in str(exc.value)
    assert _export(target, "Kept Works") == before and _counts(target) == before_counts
    if not POSTGRES:
        assert Path(target.split("sqlite:///", 1)[1]).read_bytes() == file_before
    assert _files(kept_instance) == {}
    assert not (tmp_path / "outside").exists()
    assert not any(p.name.startswith(".riskreg-restore-") for p in tmp_path.rglob("*"))


def test_a_database_with_data_is_replaced_only_with_force(
    archive: Path, target: str, tmp_path: Path
) -> None:
    _occupy(target)
    kept = _export(target, "Kept Works")
    with pytest.raises(backup.BackupError) as exc:
        backup.restore(archive, target, tmp_path / "i2")
    assert "add --force to replace" in str(exc.value)
    assert _export(target, "Kept Works") == kept
    done = backup.restore(archive, target, tmp_path / "i2", force=True)
    assert done.replaced is True
    assert _export(target, "Brenvik Works")
    eng = make_engine(target)
    with eng.connect() as conn:
        assert set(conn.execute(select(Site.name)).scalars()) == {"Brenvik Works"}
    eng.dispose()
    if POSTGRES:
        assert done.previous_copy is None  # take a backup of the target first (docs)
    else:
        assert done.previous_copy is not None
        assert _export(f"sqlite:///{done.previous_copy}", "Kept Works") == kept


@pytest.mark.parametrize("revision", ["9999", "0001"])
def test_the_schema_revision_must_be_known(
    session: Session,
    small: Site,
    engine: Engine,
    engine_url: str,
    instance: Path,
    target: str,
    tmp_path: Path,
    revision: str,
) -> None:
    with engine.begin() as conn:
        conn.execute(text("UPDATE alembic_version SET version_num = :v"), {"v": revision})
    out = tmp_path / "rev.tar.gz"
    assert backup.backup(engine_url, instance, out).schema_revision == revision
    if revision == "9999":
        with pytest.raises(backup.BackupError) as exc:
            backup.restore(out, target, tmp_path / "i2")
        assert "schema revision 9999, which this version of riskreg does not know" in str(exc.value)
    else:  # an older register: restored as it is, to be upgraded with 'riskreg init'
        done = backup.restore(out, target, tmp_path / "i2")
        assert done.needs_upgrade and done.head_revision == migrate.head_revision()


def test_an_archive_of_the_other_engine_is_refused(archive: Path, tmp_path: Path) -> None:
    other = (
        "postgresql+psycopg://nobody@127.0.0.1:1/none"
        if not POSTGRES
        else (f"sqlite:///{tmp_path / 'x.sqlite'}")
    )
    with pytest.raises(backup.BackupError) as exc:
        backup.restore(archive, other, tmp_path / "i2")
    assert "cannot be restored into" in str(exc.value)


@pytest.mark.skipif(
    POSTGRES,
    reason="SQLite only: the restore replaces the database FILE and must refuse while "
    "another process holds it; the PostgreSQL counterpart is "
    "test_restore_gives_up_while_postgres_tables_are_in_use",
)
def test_restore_refuses_a_sqlite_file_in_use(archive: Path, target: str, tmp_path: Path) -> None:
    _occupy(target)
    path = Path(target.split("sqlite:///", 1)[1])
    holder = sqlite3.connect(path)
    holder.execute("PRAGMA journal_mode=WAL")
    holder.execute("SELECT count(*) FROM site").fetchone()
    try:
        before = path.read_bytes()
        with pytest.raises(backup.BackupError) as exc:
            backup.restore(archive, target, tmp_path / "i2", force=True)
        assert "is in use" in str(exc.value) and "stop the riskreg server" in str(exc.value)
        assert path.read_bytes() == before
    finally:
        holder.close()


@pytest.mark.skipif(
    not POSTGRES,
    reason="PostgreSQL only: the restore drops and loads the tables in one transaction "
    "and gives up on a lock; the SQLite counterpart is test_restore_refuses_a_sqlite_file_in_use",
)
def test_restore_gives_up_while_postgres_tables_are_in_use(
    archive: Path, target: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    _occupy(target)
    kept = _export(target, "Kept Works")
    monkeypatch.setattr(backup, "LOCK_TIMEOUT", "300ms")
    eng = make_engine(target)
    holder = eng.connect()
    tx = holder.begin()
    holder.execute(text("SELECT count(*) FROM machine"))  # holds a lock on the table
    try:
        with pytest.raises(backup.BackupError) as exc:
            backup.restore(archive, target, tmp_path / "i2", force=True)
        assert "loading the dump failed" in str(exc.value) and "lock" in str(exc.value)
    finally:
        tx.rollback()
        holder.close()
        eng.dispose()
    assert _export(target, "Kept Works") == kept


def test_missing_database_is_reported(tmp_path: Path) -> None:
    with pytest.raises(backup.BackupError) as exc:
        backup.backup(f"sqlite:///{tmp_path / 'none.sqlite'}", tmp_path, tmp_path / "x.tar.gz")
    assert "no database at" in str(exc.value)
    assert not (tmp_path / "x.tar.gz").exists()
