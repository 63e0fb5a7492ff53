"""Fixtures of the report tests: the demo plant (built once, then a fresh copy of its
database for each test module) and helpers to read a PDF back."""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import re
import shutil
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from pypdf import PdfReader
from sqlalchemy import Engine, select
from sqlalchemy.orm import Session

from riskreg import migrate
from riskreg.db import make_engine, session_factory
from riskreg.model import Machine, Site
from riskreg.services import audit

# A fixed timestamp makes every report reproducible. It is today's (the demo dates its
# records back from the day it is built), so what is due or overdue stays the same.
WHEN = dt.datetime.combine(dt.date.today(), dt.time(9, 0), tzinfo=dt.UTC)


@pytest.fixture(scope="session")
def demo_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo plant, built once; each module works on its own copy of the file."""
    from seed_demo import build

    path = tmp_path_factory.mktemp("demo-template") / "demo.sqlite"
    engine = make_engine(f"sqlite:///{path}")
    migrate.upgrade(engine)
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as session:
        build.build(session)
    engine.dispose()
    return path


@pytest.fixture(scope="module")
def demo_path(demo_template: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("demo") / "demo.sqlite"
    shutil.copyfile(demo_template, path)
    return path


@pytest.fixture(scope="module")
def demo_engine(demo_path: Path) -> Iterator[Engine]:
    engine = make_engine(f"sqlite:///{demo_path}")
    yield engine
    engine.dispose()


@pytest.fixture(scope="module")
def demo(demo_engine: Engine) -> Iterator[Session]:
    """One session on the demo for the whole module (the reports only read)."""
    factory = session_factory(demo_engine)
    audit.install(factory)
    with factory() as session:
        yield session


def machine(session: Session, tag: str) -> Machine:
    m = session.scalar(select(Machine).where(Machine.asset_tag == tag))
    assert m is not None, tag
    return m


def measured_on(session: Session, tag: str) -> list[dt.date]:
    """The dates of a machine's stopping-time measurements, oldest first."""
    from riskreg.services import safeguards

    return sorted(m.measured_on for m in safeguards.measurements_of(machine(session, tag)))


def the_site(session: Session) -> Site:
    s = session.scalar(select(Site).order_by(Site.id))
    assert s is not None
    return s


class Pdf:
    """A PDF read back with pypdf: page texts, the attachment, the XMP packet."""

    def __init__(self, data: bytes, path: Path) -> None:
        path.write_bytes(data)
        self.reader = PdfReader(str(path))
        self.texts = [p.extract_text() for p in self.reader.pages]
        self.root: Any = self.reader.trailer["/Root"]

    @property
    def text(self) -> str:
        return "\n".join(self.texts)

    def flat(self, page: int | None = None) -> str:
        """Text with runs of white space made one space (table cells wrap lines)."""
        text = self.text if page is None else self.texts[page]
        return " ".join(text.split())

    def attachment(self, name: str = "record.json") -> bytes:
        found = self.reader.attachments.get(name)
        assert found, f"no attachment {name}; have {list(self.reader.attachments)}"
        assert len(found) == 1
        return found[0]

    def record(self) -> dict[str, Any]:
        data = json.loads(self.attachment())
        assert isinstance(data, dict)
        return data

    def xmp(self) -> bytes:
        data: bytes = self.root["/Metadata"].get_object().get_data()
        return data

    def printed_sha256(self) -> str:
        """The SHA-256 printed on the last page (64 hex digits, possibly wrapped)."""
        last = "".join(self.texts[-1].split())
        found = re.findall(r"SHA-256ofrecord\.json:([0-9a-f]{64})", last) or re.findall(
            r"SHA-256is([0-9a-f]{64})", last
        )
        assert len(found) == 1, self.texts[-1]
        return found[0]


def sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


SMALL = "Small Works"


def small_site(session: Session) -> Site:
    """A second site with three rated machines in two areas (made once per database):
    small enough to print in volumes quickly."""
    from riskreg.services import register

    found = session.scalar(select(Site).where(Site.name == SMALL))
    if found is not None:
        return found
    site = register.create_site(session, SMALL, base_url="https://register.example.org")
    areas = [register.create_area(session, site, n) for n in ("Line A", "Line B")]
    for tag, area, params in (
        ("A-1", areas[0], ("S2", "F2", "P2")),
        ("A-2", areas[0], ("S2", "F1", "P2")),
        ("B-1", areas[1], ("S1", "F2", "P1")),
    ):
        m = register.create_machine(
            session,
            site,
            {
                "asset_tag": tag,
                "name": f"Press {tag}",
                "kind": "hydraulic_press",
                "area_id": area.id,
            },
        )
        a = register.current_assessment(m)
        t = register.add_task(session, a, {"phase": "operation", "description": "Load parts"})
        register.add_hazard(
            session,
            a,
            {
                "hazard_group": "mechanical",
                "hazard_type": "crushing",
                "event": "Hand under the ram",
                "harm": "Crushed hand",
                "task_id": t.id,
            },
            {
                "method": "iso13849",
                "stage": "initial",
                "severity": params[0],
                "frequency": params[1],
                "avoidance": params[2],
            },
        )
    return site
