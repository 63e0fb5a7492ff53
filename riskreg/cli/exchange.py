"""export, import, backup, restore: a site's register in and out, the whole register kept safe.

Output files are written under a temporary name and renamed when complete, so a
failed or interrupted command never leaves half a file under the name asked for.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import click

from riskreg.db import database_url
from riskreg.services import backup as backups
from riskreg.services import exchange, register
from riskreg.services.errors import NotFound, ValidationError

from . import CliError, cli
from .register import db_option, open_session

ROOT = Path(__file__).resolve().parent.parent.parent


def default_instance() -> Path:
    """The instance folder the web application uses (evidence/ and secret_key live there)."""
    return Path(os.environ.get("RISKREG_INSTANCE", ROOT / "instance")).absolute()


instance_option = click.option(
    "--instance",
    "instance",
    default=None,
    type=click.Path(file_okay=False, path_type=Path),
    metavar="DIR",
    help="The instance folder with evidence/ (default: $RISKREG_INSTANCE, then the "
    "application's instance folder).",
)


def _write_atomically(path: Path, data: bytes) -> None:
    """Write to a temporary file beside ``path``, then rename it: all of it or nothing."""
    folder = path.parent
    if not folder.is_dir():
        raise CliError(f"there is no folder {folder} to write {path.name} into")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
    mask = os.umask(0)
    os.umask(mask)
    try:
        os.fchmod(fd, 0o666 & ~mask)  # as an ordinary new file, not mkstemp's owner-only
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except OSError as exc:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise CliError(f"cannot write {path}: {exc.strerror or exc}") from None
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _size(n: int) -> str:
    if n < 1024:
        return f"{n} B"
    if n < 1024 * 1024:
        return f"{n / 1024:.0f} KB"
    return f"{n / 1048576:.1f} MB"


@cli.command("export")
@db_option
@click.option("--site", default=None, help="The site (needed when there are several).")
@click.option(
    "-o",
    "--output",
    "output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    metavar="FILE",
    help="FILE.json (the whole site), or FILE.csv / FILE.xlsx (one table, with --table).",
)
@click.option(
    "--table",
    type=click.Choice(exchange.TABLES),
    default=None,
    help="For .csv and .xlsx: machines, hazards (with current ratings) or due items.",
)
def export_cmd(db: str | None, site: str | None, output: Path, table: str | None) -> None:
    """Export a site: the whole register as JSON, or one table for a spreadsheet."""
    suffix = output.suffix.lower()
    if suffix not in (".json", ".csv", ".xlsx"):
        raise CliError(f"{output.name}: the output must end in .json, .csv or .xlsx")
    if suffix == ".json" and table:
        raise CliError("--table is for .csv and .xlsx; a .json export holds the whole site")
    if suffix != ".json" and not table:
        raise CliError(f"a {suffix} export is one table: add --table machines, hazards or due")
    with open_session(db) as session:
        try:
            s = register.get_site(session, site)
        except NotFound as exc:
            raise CliError(str(exc)) from None
        if suffix == ".json":
            doc = exchange.export_site(session, s)
            try:
                data = exchange.dumps(doc)
            except ValueError as exc:
                raise CliError(f"the site cannot be written as JSON: {exc}") from None
            what = (
                f"{s.name} ({len(doc['machines'])} machines, {len(doc['audit'])} audit entries, "
                f"{len(doc['files'])} evidence file references)"
            )
        else:
            try:
                data = exchange.export_table(session, s, str(table), suffix[1:])
            except ValidationError as exc:
                raise CliError("; ".join(exc.errors.values())) from None
            what = f"the {table} table of {s.name}"
    _write_atomically(output, data)
    click.echo(f"Exported {what} to {output} ({_size(len(data))}).")


@cli.command("import")
@db_option
@click.argument("file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--site-name", default=None, help="Import the site under this name instead.")
@click.option("--by", "by", default=None, metavar="EMAIL", help="Who imports (for the log).")
@instance_option
def import_cmd(
    db: str | None, file: Path, site_name: str | None, by: str | None, instance: Path | None
) -> None:
    """Import a site exported with 'riskreg export' (checked whole first; all or nothing)."""
    size = file.stat().st_size
    if size > exchange.MAX_FILE_BYTES:
        raise CliError(
            f"{file.name} is {size / 1048576:.0f} MB; at most "
            f"{exchange.MAX_FILE_BYTES // 1048576} MB can be imported"
        )
    try:
        raw = file.read_bytes()
    except OSError as exc:
        raise CliError(f"cannot read {file}: {exc.strerror or exc}") from None
    with open_session(db) as session:
        report = exchange.import_site(
            session, raw, actor_email=by, site_name=site_name, instance_path=instance
        )
    for w in report.warnings:
        click.echo(f"riskreg: warning: {w}", err=True)
    if not report.accepted:
        n = len(report.problems)
        click.echo(
            f"riskreg: error: {file.name} was refused ({n} problem{'s' if n != 1 else ''}); "
            "nothing was written:",
            err=True,
        )
        for p in report.problems:
            click.echo(f"  {p}", err=True)
        raise click.exceptions.Exit(2)
    c = report.counts
    click.echo(
        f"Imported {report.site_name} from {file.name}: {c.get('machines', 0)} machines, "
        f"{c.get('hazards', 0)} hazards, {c.get('verifications', 0)} verifications, "
        f"{c.get('audit', 0)} audit entries."
    )


@cli.command("backup")
@db_option
@click.option(
    "-o",
    "--output",
    "output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    metavar="FILE",
    help="The archive to write (.tar.gz); an existing file is never overwritten.",
)
@instance_option
def backup_cmd(db: str | None, output: Path, instance: Path | None) -> None:
    """Back up the database and the evidence files into one archive (safe while serving)."""
    try:
        r = backups.backup(database_url(db), instance or default_instance(), output)
    except backups.BackupError as exc:
        raise CliError(str(exc)) from None
    except OSError as exc:
        raise CliError(f"the backup failed: {exc.strerror or exc} ({exc.filename})") from None
    for w in r.warnings:
        click.echo(f"riskreg: warning: {w}", err=True)
    click.echo(
        f"Backed up to {r.archive}: the {r.engine} database at schema {r.schema_revision} "
        f"({_size(r.database_bytes)}) and {r.evidence_files} evidence file(s) "
        f"({_size(r.evidence_bytes)})."
    )


@cli.command("restore")
@db_option
@click.argument("archive", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--force", is_flag=True, help="Replace a database that holds data.")
@instance_option
def restore_cmd(db: str | None, archive: Path, force: bool, instance: Path | None) -> None:
    """Restore a backup archive (checked whole before anything is replaced)."""
    try:
        r = backups.restore(archive, database_url(db), instance or default_instance(), force=force)
    except backups.BackupError as exc:
        raise CliError(str(exc)) from None
    except OSError as exc:
        raise CliError(
            f"the restore failed before replacing the database: {exc.strerror or exc} "
            f"({exc.filename})"
        ) from None
    for w in r.warnings:
        click.echo(f"riskreg: warning: {w}", err=True)
    click.echo(
        f"Restored {archive.name}: the {r.engine} database at schema {r.schema_revision} "
        f"and {r.evidence_files} evidence file(s)."
    )
    if r.previous_copy is not None:
        click.echo(f"The database it replaced is kept as {r.previous_copy}.")
    if r.needs_upgrade:
        click.echo(
            f"Its schema ({r.schema_revision}) is older than this riskreg's ({r.head_revision}): "
            "run 'riskreg init --no-admin' with the same --db to upgrade it."
        )
