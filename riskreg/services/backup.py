"""Backups of the whole register: the database and the evidence files in one archive.

An archive is a gzip-compressed tar file. Its first member, ``manifest.json``,
names the database engine, the schema revision and every other member with its
SHA-256 and size::

    manifest.json
    database/riskreg.sqlite        (SQLite: a copy made with the online backup API)
    database/riskreg.pgdump        (PostgreSQL: pg_dump's custom format)
    evidence/<aa>/<sha256>         (every evidence file of the instance folder)

:func:`backup` works while the server runs (SQLite in WAL mode lets the copy read a
consistent snapshot while others write). The archive is written under a temporary
name and appears under its final name only when it is complete.

:func:`restore` checks the archive first — the manifest, every hash, that the
database opens and passes ``PRAGMA integrity_check`` (or ``pg_restore --list``),
that its schema revision is one riskreg knows — before replacing anything. It
refuses to overwrite a database that holds data unless ``force`` is given.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import os
import re
import shutil
import sqlite3
import subprocess
import tarfile
import tempfile
import zlib
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any, cast

from sqlalchemy import column, func, inspect, select, table
from sqlalchemy.engine import make_url
from sqlalchemy.exc import SQLAlchemyError

from riskreg import __version__, migrate
from riskreg.db import database_url, make_engine

from .errors import ServiceError

FORMAT = "riskreg-backup"
VERSION = 1
MANIFEST = "manifest.json"
DB_MEMBER = {"sqlite": "database/riskreg.sqlite", "postgresql": "database/riskreg.pgdump"}
MEMBER = re.compile(r"database/riskreg\.(sqlite|pgdump)|evidence/[0-9a-f]{2}/[0-9a-f]{64}")
SHA = re.compile(r"[0-9a-f]{64}")
CHUNK = 1 << 20
MANIFEST_LIMIT = 64 * 1024 * 1024
LOCK_TIMEOUT = "10s"  # PostgreSQL restore: give up when the server still holds the tables


class BackupError(ServiceError):
    """A backup or restore that cannot go on; nothing has been replaced."""


@dataclass(frozen=True)
class ArchiveFile:
    path: str
    sha256: str
    size: int


@dataclass(frozen=True)
class Manifest:
    engine: str
    schema_revision: str
    created_at: str
    riskreg_version: str
    files: tuple[ArchiveFile, ...]

    @property
    def database(self) -> ArchiveFile:
        return next(f for f in self.files if f.path == DB_MEMBER[self.engine])

    @property
    def evidence(self) -> tuple[ArchiveFile, ...]:
        return tuple(f for f in self.files if f.path.startswith("evidence/"))

    def to_json(self) -> dict[str, Any]:
        return {
            "format": FORMAT,
            "version": VERSION,
            "engine": self.engine,
            "schema_revision": self.schema_revision,
            "created_at": self.created_at,
            "riskreg_version": self.riskreg_version,
            "database": DB_MEMBER[self.engine],
            "files": [{"path": f.path, "sha256": f.sha256, "size": f.size} for f in self.files],
        }


@dataclass(frozen=True)
class BackupReport:
    archive: Path
    engine: str
    schema_revision: str
    evidence_files: int
    database_bytes: int
    evidence_bytes: int
    warnings: tuple[str, ...]


@dataclass(frozen=True)
class RestoreReport:
    engine: str
    schema_revision: str
    head_revision: str | None
    evidence_files: int
    replaced: bool  # the target held data that is now replaced
    previous_copy: Path | None  # SQLite: the replaced database, kept beside the new one
    warnings: tuple[str, ...]

    @property
    def needs_upgrade(self) -> bool:
        return self.schema_revision != self.head_revision


# --- helpers ------------------------------------------------------------------------------


def _engine_kind(url: str) -> str:
    if url.startswith("sqlite"):
        return "sqlite"
    if url.startswith("postgresql"):
        return "postgresql"
    raise BackupError(
        f"backups are made of SQLite or PostgreSQL databases; got {url.split(':')[0]}"
    )


def _sqlite_path(url: str) -> Path:
    path = make_url(url).database
    if not path or path == ":memory:":
        raise BackupError("an in-memory database cannot be backed up or restored")
    return Path(path)


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with path.open("rb") as fh:
        while block := fh.read(CHUNK):
            h.update(block)
    return h.hexdigest()


def _fsync_dir(path: Path) -> None:
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:  # pragma: no cover - platforms without directory handles
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


def _known_revision(rev: str) -> bool:
    from alembic.script import ScriptDirectory

    script = ScriptDirectory.from_config(migrate.alembic_config("sqlite://"))
    try:
        return script.get_revision(rev) is not None
    except Exception:
        return False


def _pg_env(url: str) -> dict[str, str]:
    """libpq settings for the command-line tools; the password goes in the environment,
    never on a command line where other users could read it."""
    u = make_url(url)
    env = dict(os.environ)
    for name, value in (
        ("PGHOST", u.host),
        ("PGPORT", str(u.port) if u.port else None),
        ("PGUSER", u.username),
        ("PGPASSWORD", u.password),
        ("PGDATABASE", u.database),
    ):
        if value:
            env[name] = str(value)
    sslmode = u.query.get("sslmode")
    if isinstance(sslmode, str):
        env["PGSSLMODE"] = sslmode
    return env


def _tool(name: str) -> str:
    found = shutil.which(name)
    if found is None:
        raise BackupError(
            f"{name} is not installed; install the PostgreSQL client tools "
            "(the same major version as the server)"
        )
    return found


def _run(cmd: list[str], env: dict[str, str], what: str, **kwargs: Any) -> str:
    proc = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False, **kwargs)
    if proc.returncode != 0:
        detail = " ".join((proc.stderr or proc.stdout or "").split())[:400]
        raise BackupError(f"{what} failed: {detail or f'exit status {proc.returncode}'}")
    return proc.stdout or ""


def _sqlite_revision(path: Path) -> str:
    con = sqlite3.connect(path)
    try:
        row = con.execute("SELECT version_num FROM alembic_version").fetchone()
    except sqlite3.DatabaseError as exc:
        raise BackupError(f"{path.name} holds no riskreg register ({exc})") from None
    finally:
        con.close()
    if row is None:
        raise BackupError(f"{path.name} holds no riskreg register (no schema revision)")
    return str(row[0])


def _sqlite_integrity(path: Path) -> None:
    con = sqlite3.connect(path)
    try:
        rows = con.execute("PRAGMA integrity_check").fetchall()
    except sqlite3.DatabaseError as exc:
        raise BackupError(f"the database in the archive does not open: {exc}") from None
    finally:
        con.close()
    if rows != [("ok",)]:
        first = "; ".join(str(r[0]) for r in rows[:3])
        raise BackupError(f"the database in the archive fails its integrity check: {first}")


def _sqlite_rows(path: Path) -> int | None:
    """Rows in the register tables of a SQLite file; None when it is not a database."""
    try:
        con = sqlite3.connect(path.absolute().as_uri() + "?mode=ro", uri=True)
    except sqlite3.DatabaseError:
        return None
    try:
        names = [
            r[0]
            for r in con.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' "
                "AND name NOT LIKE 'sqlite_%' AND name != 'alembic_version'"
            )
        ]
        return sum(int(con.execute(f'SELECT count(*) FROM "{n}"').fetchone()[0]) for n in names)
    except sqlite3.DatabaseError:
        return None
    finally:
        con.close()


def _evidence_files(instance_path: Path) -> list[tuple[str, Path]]:
    root = instance_path / "evidence"
    out: list[tuple[str, Path]] = []
    if not root.is_dir():
        return out
    for sub in sorted(root.iterdir()):
        if not sub.is_dir() or not re.fullmatch(r"[0-9a-f]{2}", sub.name):
            continue
        for f in sorted(sub.iterdir()):
            if f.is_file() and SHA.fullmatch(f.name) and f.name.startswith(sub.name):
                out.append((f"evidence/{sub.name}/{f.name}", f))
    return out


# --- backup -------------------------------------------------------------------------------


def backup(
    db_url: str, instance_path: str | os.PathLike[str], out_file: str | os.PathLike[str]
) -> BackupReport:
    """Write one archive of the database and the evidence files; never overwrites a file."""
    url = database_url(db_url)
    engine = _engine_kind(url)
    out = Path(out_file).absolute()
    instance = Path(instance_path)
    if out.exists():
        raise BackupError(
            f"{out.name} exists already; choose a new name (backups are not overwritten)"
        )
    if not out.parent.is_dir():
        raise BackupError(f"there is no folder {out.parent} to write {out.name} into")
    warnings: list[str] = []
    with tempfile.TemporaryDirectory(prefix=f".{out.name}.", dir=out.parent) as tmp_name:
        tmp = Path(tmp_name)
        snapshot = tmp / Path(DB_MEMBER[engine]).name
        if engine == "sqlite":
            revision, stored = _snapshot_sqlite(url, snapshot)
        else:
            revision, stored = _snapshot_postgres(url, snapshot)
        files = [ArchiveFile(DB_MEMBER[engine], _sha256(snapshot), snapshot.stat().st_size)]
        evidence_bytes = 0
        present: set[str] = set()
        sources: dict[str, Path] = {DB_MEMBER[engine]: snapshot}
        for member, path in _evidence_files(instance):
            digest = _sha256(path)
            if digest != path.name:
                warnings.append(
                    f"{member} does not match its SHA-256 name (damaged on disk?); "
                    "it is backed up as it is"
                )
            files.append(ArchiveFile(member, digest, path.stat().st_size))
            sources[member] = path
            present.add(path.name)
            evidence_bytes += path.stat().st_size
        missing = sorted(set(stored) - present)
        if missing:
            warnings.append(
                f"{len(missing)} evidence file(s) recorded in the database are not in "
                f"{instance / 'evidence'} (e.g. {missing[0][:12]}…); they cannot be backed up"
            )
        manifest = Manifest(
            engine,
            revision,
            dt.datetime.now(dt.UTC).isoformat(),
            __version__,
            tuple(files),
        )
        part = tmp / "archive.part"
        _write_archive(part, manifest, sources)
        try:
            os.link(part, out)  # fails when the name was taken meanwhile: never overwrite
        except FileExistsError:
            raise BackupError(
                f"{out.name} appeared while the backup was written; choose a new name"
            ) from None
        except OSError:
            if out.exists():
                raise BackupError(f"{out.name} exists already; choose a new name") from None
            os.replace(part, out)
        _fsync_dir(out.parent)
    return BackupReport(
        out,
        engine,
        revision,
        len(files) - 1,
        files[0].size,
        evidence_bytes,
        tuple(warnings),
    )


def _snapshot_sqlite(url: str, snapshot: Path) -> tuple[str, list[str]]:
    source = _sqlite_path(url)
    if not source.is_file():
        raise BackupError(f"no database at {source}")
    try:
        src = sqlite3.connect(source, timeout=30)
        dst = sqlite3.connect(snapshot)
        try:
            src.backup(dst)  # one step: a consistent snapshot, even while others write
            dst.execute("PRAGMA journal_mode=DELETE")  # one self-contained file
            shas = [r[0] for r in dst.execute("SELECT sha256 FROM evidence_file")]
        finally:
            dst.close()
            src.close()
    except sqlite3.DatabaseError as exc:
        raise BackupError(f"cannot read the database at {source}: {exc}") from None
    _sqlite_integrity(snapshot)
    return _sqlite_revision(snapshot), shas


def _snapshot_postgres(url: str, snapshot: Path) -> tuple[str, list[str]]:
    eng = make_engine(url)
    try:
        revision = migrate.current_revision(eng)
        with eng.connect() as conn:
            q = select(table("evidence_file", column("sha256")).c.sha256)
            shas = [str(s) for s in conn.execute(q).scalars()]
    except SQLAlchemyError as exc:
        detail = " ".join(str(getattr(exc, "orig", None) or exc).split())[:300]
        raise BackupError(f"cannot read the database: {detail}") from None
    finally:
        eng.dispose()
    if revision is None:
        raise BackupError("the database holds no riskreg register (no schema revision)")
    _run(
        [
            _tool("pg_dump"),
            "--format=custom",
            "--no-owner",
            "--no-privileges",
            f"--file={snapshot}",
        ],
        _pg_env(url),
        "pg_dump",
    )
    _run([_tool("pg_restore"), "--list", str(snapshot)], _pg_env(url), "pg_restore --list")
    return revision, shas


def _write_archive(part: Path, manifest: Manifest, sources: dict[str, Path]) -> None:
    # a backup holds everything, password hashes included: readable by its owner only
    raw = os.fdopen(os.open(part, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600), "wb")
    try:
        with tarfile.open(
            fileobj=raw, mode="w:gz", compresslevel=6, format=tarfile.PAX_FORMAT
        ) as tar:
            data = json.dumps(manifest.to_json(), indent=1, sort_keys=True).encode()
            info = tarfile.TarInfo(MANIFEST)
            info.size = len(data)
            info.mtime = int(dt.datetime.now(dt.UTC).timestamp())
            info.mode = 0o644
            tar.addfile(info, io.BytesIO(data))
            for f in manifest.files:
                src = sources[f.path]
                info = tarfile.TarInfo(f.path)
                info.size = f.size
                info.mtime = int(src.stat().st_mtime)
                info.mode = 0o644
                with src.open("rb") as fh:
                    tar.addfile(info, cast(IO[bytes], _Checked(fh, f)))
        raw.flush()
        os.fsync(raw.fileno())
    finally:
        raw.close()


class _Checked:
    """Reads a file into the archive and checks it is still the file that was hashed."""

    def __init__(self, fh: IO[bytes], expected: ArchiveFile) -> None:
        self.fh = fh
        self.expected = expected
        self.h = hashlib.sha256()
        self.n = 0

    def read(self, size: int = -1) -> bytes:
        block = self.fh.read(size)
        self.h.update(block)
        self.n += len(block)
        if self.n == self.expected.size and self.h.hexdigest() != self.expected.sha256:
            raise BackupError(f"{self.expected.path} changed while it was backed up; try again")
        return block


# --- reading an archive -------------------------------------------------------------------


def _parse_manifest(data: bytes) -> Manifest:
    try:
        doc = json.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise BackupError(f"the archive's manifest is not readable JSON ({exc})") from None
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise BackupError("the archive is not a riskreg backup (its manifest has another format)")
    version = doc.get("version")
    if not isinstance(version, int) or isinstance(version, bool) or version < 1:
        raise BackupError("the archive's manifest has no valid version")
    if version > VERSION:
        raise BackupError(
            f"the archive is backup format {version}, made by a newer riskreg; "
            f"this version reads format {VERSION}"
        )
    engine = doc.get("engine")
    if engine not in DB_MEMBER:
        raise BackupError(f"the archive's manifest names an unknown engine {engine!r}")
    revision = doc.get("schema_revision")
    if not isinstance(revision, str) or not revision:
        raise BackupError("the archive's manifest has no schema revision")
    files: list[ArchiveFile] = []
    raw_files = doc.get("files")
    if not isinstance(raw_files, list):
        raise BackupError("the archive's manifest has no list of files")
    for f in raw_files:
        if not isinstance(f, dict):
            raise BackupError("the archive's manifest lists a file that is not an object")
        path, sha, size = f.get("path"), f.get("sha256"), f.get("size")
        if not isinstance(path, str) or not MEMBER.fullmatch(path):
            raise BackupError(f"the archive's manifest lists an unexpected member {path!r}")
        if path.startswith("database/") and path != DB_MEMBER[str(engine)]:
            raise BackupError(f"the manifest lists {path!r}, which is not a {engine} database")
        if not isinstance(sha, str) or not SHA.fullmatch(sha):
            raise BackupError(f"the manifest gives no SHA-256 for {path}")
        if not isinstance(size, int) or isinstance(size, bool) or size < 0:
            raise BackupError(f"the manifest gives no size for {path}")
        files.append(ArchiveFile(path, sha, size))
    paths = [f.path for f in files]
    if len(set(paths)) != len(paths):
        raise BackupError("the archive's manifest lists a member twice")
    if DB_MEMBER[str(engine)] not in paths:
        raise BackupError("the archive's manifest lists no database")
    return Manifest(
        str(engine),
        revision,
        str(doc.get("created_at") or ""),
        str(doc.get("riskreg_version") or ""),
        tuple(files),
    )


def _extract(archive: Path, into: Path) -> Manifest:
    """Every member into ``into``, each checked against the manifest; raises when any
    member is missing, unexpected, of the wrong size or hash, or the gzip stream is bad."""
    try:
        with tarfile.open(archive, mode="r:gz") as tar:
            first = tar.next()
            if first is None or first.name != MANIFEST or not first.isfile():
                raise BackupError(
                    f"{archive.name} is not a riskreg backup: it does not start with its manifest"
                )
            if first.size > MANIFEST_LIMIT:
                raise BackupError("the archive's manifest is too large to be a riskreg manifest")
            fh = tar.extractfile(first)
            assert fh is not None
            manifest = _parse_manifest(fh.read())
            expected = {f.path: f for f in manifest.files}
            seen: set[str] = set()
            while (member := tar.next()) is not None:
                f = expected.get(member.name)
                if f is None or member.name in seen:
                    raise BackupError(
                        f"the archive holds {member.name!r}, which its manifest does not list "
                        "(or lists once)"
                    )
                if not member.isfile() or member.size != f.size:
                    raise BackupError(
                        f"{member.name} in the archive is not the {f.size}-byte file the "
                        "manifest lists: the archive is damaged"
                    )
                dest = into / f.path
                dest.parent.mkdir(parents=True, exist_ok=True)
                src = tar.extractfile(member)
                assert src is not None
                h = hashlib.sha256()
                with dest.open("wb") as out:
                    while block := src.read(CHUNK):
                        h.update(block)
                        out.write(block)
                if h.hexdigest() != f.sha256:
                    raise BackupError(
                        f"{f.path} does not match its SHA-256 in the manifest: the archive is damaged"
                    )
                seen.add(f.path)
            missing = sorted(set(expected) - seen)
            if missing:
                raise BackupError(
                    f"the archive lacks {len(missing)} file(s) its manifest lists "
                    f"(e.g. {missing[0]}): it is incomplete"
                )
            rest = tar.fileobj
            assert rest is not None
            while rest.read(CHUNK):  # to the end, so that gzip checks its CRC
                pass
    except BackupError:
        raise
    except (tarfile.TarError, OSError, EOFError, zlib.error) as exc:
        raise BackupError(
            f"cannot read {archive.name}: the archive is damaged or not a riskreg backup ({exc})"
        ) from None
    return manifest


def _pg_revision(dump: Path) -> str:
    sql = _run(
        [_tool("pg_restore"), "--data-only", "--table=alembic_version", "--file=-", str(dump)],
        dict(os.environ),
        "pg_restore",
    )
    lines = sql.splitlines()
    for i, line in enumerate(lines):
        if line.startswith("COPY ") and "alembic_version" in line and i + 1 < len(lines):
            value = lines[i + 1].strip()
            if value and value != "\\.":
                return value
    raise BackupError("the database dump in the archive holds no schema revision")


def _check_database(manifest: Manifest, into: Path) -> None:
    db = into / manifest.database.path
    if manifest.engine == "sqlite":
        _sqlite_integrity(db)
        revision = _sqlite_revision(db)
    else:
        _run([_tool("pg_restore"), "--list", str(db)], dict(os.environ), "pg_restore --list")
        revision = _pg_revision(db)
    if revision != manifest.schema_revision:
        raise BackupError(
            f"the database in the archive is at schema revision {revision}, but its manifest "
            f"says {manifest.schema_revision}: the archive is not consistent"
        )
    if not _known_revision(revision):
        raise BackupError(
            f"the database in the archive is at schema revision {revision}, which this "
            "version of riskreg does not know (made by a newer riskreg?)"
        )


@contextmanager
def _workdir(near: Path | None) -> Iterator[Path]:
    with tempfile.TemporaryDirectory(
        prefix=".riskreg-restore-", dir=str(near) if near is not None else None
    ) as name:
        yield Path(name)


def check_archive(archive: str | os.PathLike[str]) -> Manifest:
    """Verify an archive completely (every hash, the database) without restoring it."""
    path = Path(archive)
    if not path.is_file():
        raise BackupError(f"no archive at {path}")
    with _workdir(None) as tmp:
        manifest = _extract(path, tmp)
        _check_database(manifest, tmp)
    return manifest


# --- restore ------------------------------------------------------------------------------


def restore(
    archive: str | os.PathLike[str],
    db_url: str,
    instance_path: str | os.PathLike[str],
    *,
    force: bool = False,
) -> RestoreReport:
    """Check the archive, then put its database and evidence files in place.

    Nothing is replaced until every check has passed. A database that holds data is
    replaced only with ``force``; for SQLite the replaced file is kept beside the new
    one (``<name>.before-restore-<time>``).
    """
    path = Path(archive)
    if not path.is_file():
        raise BackupError(f"no archive at {path}")
    url = database_url(db_url)
    engine = _engine_kind(url)
    target = _sqlite_path(url).absolute() if engine == "sqlite" else None
    if target is not None:
        target.parent.mkdir(parents=True, exist_ok=True)
    with _workdir(target.parent if target is not None else None) as tmp:
        manifest = _extract(path, tmp)
        if manifest.engine != engine:
            raise BackupError(
                f"the archive holds a {manifest.engine} database and cannot be restored into "
                f"{engine}; restore it into a {manifest.engine} database, then move sites "
                "across with 'riskreg export' and 'riskreg import'"
            )
        _check_database(manifest, tmp)
        script = None
        if target is None:  # read all of the dump now: damaged data shows before any change
            script = _pg_script(tmp / manifest.database.path, tmp)
        warnings: list[str] = []
        if target is not None:
            replaced = _sqlite_target_ready(target, force)
        else:
            replaced = _pg_target_ready(url, force)
        _restore_evidence(manifest, tmp, Path(instance_path), warnings)
        previous: Path | None = None
        if target is not None:
            previous = _replace_sqlite(tmp / manifest.database.path, target, replaced)
        else:
            assert script is not None
            _replace_postgres(script, url, tmp)
    return RestoreReport(
        engine,
        manifest.schema_revision,
        migrate.head_revision(),
        len(manifest.evidence),
        replaced,
        previous,
        tuple(warnings),
    )


def _sqlite_target_ready(target: Path, force: bool) -> bool:
    """True when the target holds data (to be replaced); raises when it must not be."""
    if not target.exists() or target.stat().st_size == 0:
        return False
    rows = _sqlite_rows(target)
    if rows == 0:
        return False
    if not force:
        what = f"holds {rows} records" if rows is not None else "is not an empty riskreg database"
        raise BackupError(
            f"the database at {target} {what}; restore into a new file, or add --force to "
            "replace it (a copy of it is kept beside the restored one)"
        )
    return True


def _pg_target_ready(url: str, force: bool) -> bool:
    eng = make_engine(url)
    try:
        names = [n for n in inspect(eng).get_table_names() if n != "alembic_version"]
        with eng.connect() as conn:
            rows = sum(
                int(conn.execute(select(func.count()).select_from(table(n))).scalar_one())
                for n in names
            )
    except SQLAlchemyError as exc:
        detail = " ".join(str(getattr(exc, "orig", None) or exc).split())[:300]
        raise BackupError(f"cannot open the target database: {detail}") from None
    finally:
        eng.dispose()
    if rows and not force:
        raise BackupError(
            f"the target database holds {rows} records; restore into an empty database, "
            "or add --force to replace it (take a backup of it first)"
        )
    return rows > 0


def _restore_evidence(manifest: Manifest, tmp: Path, instance: Path, warnings: list[str]) -> None:
    """Evidence files first: stored by content, so adding them never harms the old register."""
    for f in manifest.evidence:
        name = f.path.rsplit("/", 1)[1]
        if f.sha256 != name:
            warnings.append(f"{f.path} does not match its SHA-256 name; restored as it was")
        dest = instance / f.path
        if dest.is_file() and dest.stat().st_size == f.size and _sha256(dest) == f.sha256:
            continue
        dest.parent.mkdir(parents=True, exist_ok=True)
        part = dest.with_name(dest.name + ".part")
        shutil.copyfile(tmp / f.path, part)
        with part.open("rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(part, dest)
    if manifest.evidence:
        _fsync_dir(instance / "evidence")


def _replace_sqlite(staged: Path, target: Path, replaced: bool) -> Path | None:
    wal = target.with_name(target.name + "-wal")
    shm = target.with_name(target.name + "-shm")
    if target.exists():
        try:  # fold the old log into the old file, so nothing of it is left beside the new one
            con = sqlite3.connect(target, timeout=5)
            try:
                con.execute("PRAGMA wal_checkpoint(TRUNCATE)")
            finally:
                con.close()
        except sqlite3.DatabaseError:
            pass
        if wal.exists() or shm.exists():
            raise BackupError(
                f"the database at {target} is in use (its -wal/-shm files stay open); "
                "stop the riskreg server, then restore again"
            )
    with staged.open("rb+") as fh:
        os.fsync(fh.fileno())
    previous: Path | None = None
    if replaced:
        stamp = dt.datetime.now(dt.UTC).strftime("%Y%m%dT%H%M%SZ")
        previous = target.with_name(f"{target.name}.before-restore-{stamp}")
        try:
            os.link(target, previous)
        except OSError:
            shutil.copy2(target, previous)
    os.replace(staged, target)  # atomic: the old database or the new one, never half of one
    _fsync_dir(target.parent)
    return previous


def _pg_script(dump: Path, tmp: Path) -> Path:
    """The dump as SQL (pg_restore reads every block of it, so damage shows here)."""
    script = tmp / "restore.sql"
    with script.open("w", encoding="utf-8") as fh:
        proc = subprocess.run(
            [_tool("pg_restore"), "--no-owner", "--no-privileges", "--file=-", str(dump)],
            stdout=fh,
            stderr=subprocess.PIPE,
            text=True,
            check=False,
        )
    if proc.returncode != 0:
        detail = " ".join((proc.stderr or "").split())[:400]
        raise BackupError(f"pg_restore failed on the database in the archive: {detail}")
    return script


def _replace_postgres(script: Path, url: str, tmp: Path) -> None:
    """Drop the target's tables and load the dump in ONE transaction: all or nothing."""
    eng = make_engine(url)
    try:
        names = inspect(eng).get_table_names()
    finally:
        eng.dispose()
    prelude = tmp / "prelude.sql"
    with prelude.open("w", encoding="utf-8") as fh:
        fh.write(f"SET lock_timeout = '{LOCK_TIMEOUT}';\n")
        if names:
            quoted = ", ".join('public."' + n.replace('"', '""') + '"' for n in names)
            fh.write(f"DROP TABLE IF EXISTS {quoted} CASCADE;\n")
    _run(
        [
            _tool("psql"),
            "--no-psqlrc",
            "--quiet",
            "--single-transaction",
            "--set=ON_ERROR_STOP=1",
            f"--file={prelude}",
            f"--file={script}",
        ],
        _pg_env(url),
        "loading the dump",
    )
