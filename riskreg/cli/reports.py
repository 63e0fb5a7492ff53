"""`riskreg report …`: the audit-ready PDFs from the terminal.

Every command writes a PDF/A-3b with the record embedded. The file appears only
when it is complete: it is written beside the target under a temporary name and
renamed at the end, so a bad input or a failure leaves nothing behind.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import itertools
import os
import re
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import click
from sqlalchemy.orm import Session

from riskreg.services import register
from riskreg.services.errors import NotFound, ValidationError

from . import CliError, cli
from .register import db_option, open_session


class _Timestamp(click.ParamType[dt.datetime]):
    name = "ISO8601"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> Any:
        if isinstance(value, dt.datetime):
            return value
        text = str(value).strip()
        try:
            when = dt.datetime.fromisoformat(text.replace("Z", "+00:00").replace("z", "+00:00"))
        except ValueError:
            self.fail(
                f"{text!r} is not a date and time; use ISO 8601, e.g. 2026-12-01T09:00:00Z "
                "(a time without a zone is taken as UTC)",
                param,
                ctx,
            )
        if when.tzinfo is None:
            when = when.replace(tzinfo=dt.UTC)
        return when


class _Day(click.ParamType[dt.date]):
    name = "YYYY-MM-DD"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> Any:
        if isinstance(value, dt.date):
            return value
        try:
            return dt.date.fromisoformat(str(value).strip())
        except ValueError:
            self.fail(f"{value!r} is not a date; use YYYY-MM-DD, e.g. 2026-11-18", param, ctx)


site_option = click.option(
    "--site", default=None, metavar="NAME", help="The site (needed when there are several)."
)
output_option = click.option(
    "-o",
    "--output",
    "output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The PDF file to write.",
)
generated_option = click.option(
    "--generated-at",
    "generated_at",
    type=_Timestamp(),
    default=None,
    help="Fix the report's timestamp (ISO 8601) for reproducible output: the same record "
    "and the same timestamp give the same bytes. Default: now.",
)


@cli.group("report")
def report_group() -> None:
    """Audit-ready PDF reports (PDF/A-3b with the register's record embedded)."""


# --- plumbing ---------------------------------------------------------------------------


def _target(path: Path) -> Path:
    """Refuse an output path that cannot be written, before any work is done."""
    path = path.expanduser()
    parent = path.parent if str(path.parent) else Path(".")
    if path.is_dir():
        raise CliError(f"-o {path}: is a directory; give a file name ending in .pdf")
    if not parent.is_dir():
        raise CliError(f"-o {path}: the folder {parent} does not exist")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise CliError(f"-o {path}: cannot write in {parent} (permission denied)")
    if path.exists() and not os.access(path, os.W_OK):
        raise CliError(f"-o {path}: the file exists and cannot be overwritten")
    return path


def _write_all(files: list[tuple[Path, bytes]]) -> None:
    """Write every file under a temporary name, then rename them all; on failure none
    of them is left behind."""
    temps: list[tuple[str, Path]] = []
    mask = os.umask(0)
    os.umask(mask)
    try:
        for path, data in files:
            fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
            temps.append((tmp, path))
            os.fchmod(fd, 0o666 & ~mask)  # as an ordinary new file, not mkstemp's 0600
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
        for tmp, path in temps:
            os.replace(tmp, path)
    except OSError as exc:
        for tmp, _path in temps:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        raise CliError(f"cannot write {files[0][0]}: {exc.strerror or exc}") from None


def _site(session: Session, name: str | None) -> Any:
    try:
        return register.get_site(session, name)
    except NotFound as exc:
        raise CliError(str(exc)) from None


def _machine(session: Session, site: Any, tag: str) -> Any:
    try:
        return register.machine_by_tag(session, site, tag.strip())
    except NotFound as exc:
        raise CliError(str(exc)) from None


@contextlib.contextmanager
def _service_errors() -> Iterator[None]:
    try:
        yield
    except ValidationError as exc:
        raise CliError("; ".join(f"{k}: {v}" for k, v in exc.errors.items())) from None
    except NotFound as exc:
        raise CliError(str(exc)) from None


def _done(paths: list[Path], pages: list[int]) -> None:
    for path, n in zip(paths, pages, strict=True):
        click.echo(f"Wrote {path} ({n} page{'s' if n != 1 else ''}).")


class _Progress:
    """Progress bars on stderr: the machines read, then the pages laid out (their
    number is not known in advance, so that bar counts without a total)."""

    def __init__(self) -> None:
        self.bar: Any = None
        self.stage = ""
        self.shown = 0

    def __call__(self, stage: str, done: int, total: int | None) -> None:
        if stage == "volumes":
            self.close()
            if done < (total or 0):
                click.echo(f"Volume {done + 1} of {total}", err=True)
            return
        if stage != self.stage:
            self.close()
            self.stage = stage
            if stage == "machines":
                self.bar = click.progressbar(
                    length=total or 0, label="Reading machines", file=sys.stderr
                )
            else:
                self.bar = click.progressbar(
                    itertools.count(), label="Laying out pages", file=sys.stderr, show_pos=True
                )
            self.bar.__enter__()
            self.shown = 0
        if done > self.shown:
            self.bar.update(done - self.shown)
            self.shown = done

    def close(self) -> None:
        if self.bar is not None:
            self.bar.__exit__(None, None, None)
            self.bar = None
            self.stage = ""


# --- commands ----------------------------------------------------------------------------


@report_group.command("machine")
@db_option
@click.option("--asset", "asset", required=True, metavar="TAG", help="The machine's asset tag.")
@site_option
@output_option
@generated_option
def machine_cmd(
    db: str | None, asset: str, site: str | None, output: Path, generated_at: dt.datetime | None
) -> None:
    """One machine's full report: ratings, derivations, safeguards, distances, due dates."""
    from riskreg import reports

    target = _target(output)
    with open_session(db) as session:
        s = _site(session, site)
        m = _machine(session, s, asset)
        with _service_errors():
            r = reports.build_machine_report(session, m, generated_at=generated_at)
    _write_all([(target, r.pdf)])
    _done([target], [r.pages])


@report_group.command("site")
@db_option
@site_option
@output_option
@generated_option
@click.option(
    "--volumes",
    type=click.Choice(["auto", "yes", "no"]),
    default="auto",
    show_default=True,
    help="Print in volumes (a summary, then one per area, written beside the output "
    "file); 'auto' does so above "
    "the machine count one document can hold.",
)
def site_cmd(
    db: str | None,
    site: str | None,
    output: Path,
    generated_at: dt.datetime | None,
    volumes: str,
) -> None:
    """Every machine of a site: a summary table, then each machine's sections."""
    from riskreg import reports

    target = _target(output)
    progress = _Progress()
    with open_session(db) as session:
        s = _site(session, site)
        choice = {"auto": None, "yes": True, "no": False}[volumes]
        try:
            with _service_errors():
                made = reports.build_site(
                    session, s, generated_at=generated_at, progress=progress, volumes=choice
                )
        finally:
            progress.close()
    paths = [target]
    for r in made[1:]:
        vol = r.record["volume"]
        name = re.sub(r"[^A-Za-z0-9]+", "-", vol["name"]).strip("-")
        paths.append(target.with_name(f"{target.stem}-vol{vol['number']:02d}-{name}.pdf"))
    _write_all([(p, r.pdf) for p, r in zip(paths, made, strict=True)])
    _done(paths, [r.pages for r in made])


@report_group.command("due")
@db_option
@site_option
@output_option
@generated_option
@click.option(
    "--within",
    type=click.IntRange(0, 3650),
    default=30,
    show_default=True,
    metavar="DAYS",
    help="Besides what is overdue, list what falls due within DAYS days.",
)
def due_cmd(
    db: str | None, site: str | None, output: Path, generated_at: dt.datetime | None, within: int
) -> None:
    """What is overdue and what falls due soon, with the basis of every interval."""
    from riskreg import reports

    target = _target(output)
    with open_session(db) as session:
        s = _site(session, site)
        with _service_errors():
            r = reports.build_due_report(session, s, generated_at=generated_at, within_days=within)
    _write_all([(target, r.pdf)])
    _done([target], [r.pages])


@report_group.command("labels")
@db_option
@click.option("--area", "area", required=True, metavar="NAME", help="The area (line or cell).")
@site_option
@click.option(
    "--base-url",
    default=None,
    metavar="URL",
    help="The register's web address the QR codes open (default: the site's setting).",
)
@output_option
@generated_option
def labels_cmd(
    db: str | None,
    area: str,
    site: str | None,
    base_url: str | None,
    output: Path,
    generated_at: dt.datetime | None,
) -> None:
    """A printable sheet of labels, one per machine of an area, with a QR code of its
    page in the register."""
    from riskreg import reports

    target = _target(output)
    with open_session(db) as session:
        s = _site(session, site)
        with _service_errors():
            r = reports.build_labels(session, s, area, base_url, generated_at=generated_at)
    _write_all([(target, r.pdf)])
    _done([target], [r.pages])


@report_group.command("certificate")
@db_option
@click.option("--asset", "asset", required=True, metavar="TAG", help="The machine's asset tag.")
@click.option(
    "--date",
    "day",
    type=_Day(),
    default=None,
    help="The measurement's date (default: the latest measurement).",
)
@site_option
@output_option
@generated_option
def certificate_cmd(
    db: str | None,
    asset: str,
    day: dt.date | None,
    site: str | None,
    output: Path,
    generated_at: dt.datetime | None,
) -> None:
    """One stopping-time measurement on one page, for the machine's binder."""
    from riskreg import reports

    target = _target(output)
    with open_session(db) as session:
        s = _site(session, site)
        m = _machine(session, s, asset)
        with _service_errors():
            meas = reports.measurement_on(session, m, day)
            r = reports.build_certificate(session, meas, generated_at=generated_at)
    _write_all([(target, r.pdf)])
    _done([target], [r.pages])
