"""Helpers of the web tests (imported by the tests and by their conftest)."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from html.parser import HTMLParser
from typing import Any

from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from riskreg.model import Hazard, Machine
from riskreg.web import create_app

PASSWORD = "long-test-password-7"
ROLES = ("viewer", "assessor", "approver", "admin")
NAMES = {
    "viewer": "Vesna Reader",
    "assessor": "Anton Fieldwork",
    "approver": "Paula Signoff",
    "admin": "Ada Keeper",
}
# The first bytes of a JPEG (SOI marker, then an APP0 "JFIF" segment): what the
# evidence store sniffs for.
JPEG_BYTES = b"\xff\xd8\xff\xe0\x00\x10JFIF\x00\x01\x01\x00\x00\x01\x00\x01\x00\x00" + bytes(64)


@dataclass(frozen=True)
class Seed:
    """Ids of the register the fixture built."""

    site_id: int
    area_id: int
    machine_id: int
    assessment_id: int
    task_id: int
    hazard_id: int
    measure_id: int
    function_id: int
    file_id: int
    viewer_id: int

    @staticmethod
    def email(role: str) -> str:
        return f"{role}@example.com"


class Store:
    """Reads what the app stored, each time through a fresh session."""

    def __init__(self, app: Flask) -> None:
        self._factory = app.extensions["riskreg.sessions"]

    def session(self) -> Session:
        s: Session = self._factory()
        return s

    def count(self, model: type[Any], *where: Any) -> int:
        with self.session() as s:
            return int(s.scalar(select(func.count()).select_from(model).where(*where)) or 0)

    def value(self, model: type[Any], ident: int, attr: str) -> Any:
        with self.session() as s:
            obj = s.get(model, ident)
            assert obj is not None, f"{model.__name__} {ident} is gone"
            return getattr(obj, attr)

    def machine(self, ident: int, attr: str) -> Any:
        return self.value(Machine, ident, attr)

    def hazard(self, ident: int, attr: str) -> Any:
        return self.value(Hazard, ident, attr)


def make_app(db_url: str, **extra: Any) -> Flask:
    config: dict[str, Any] = {
        "DATABASE_URL": db_url,
        "SECRET_KEY": "test",
        "TESTING": True,
        "WTF_CSRF_ENABLED": False,
    }
    config.update(extra)
    return create_app(config)


def log_in(client: FlaskClient, role: str) -> None:
    resp = client.post("/login", data={"email": Seed.email(role), "password": PASSWORD})
    assert resp.status_code == 302, resp.get_data(as_text=True)


def csrf_token(html: str) -> str:
    m = re.search(r'name="csrf_token"[^>]*value="([^"]+)"', html)
    assert m, "no CSRF token on the page"
    return m.group(1)


# --- reading pages ---------------------------------------------------------------


@dataclass
class _Field:
    names: set[str] = field(default_factory=set)
    errors: list[str] = field(default_factory=list)


class _FieldParser(HTMLParser):
    """Per ``div.field`` of a form: the names of its controls and its error messages."""

    def __init__(self) -> None:
        super().__init__()
        self.fields: list[_Field] = []
        self.inputs: dict[str, str] = {}
        self._stack: list[_Field | None] = []
        self._error: _Field | None = None
        self._buf: list[str] = []

    def _inner(self) -> _Field | None:
        return next((f for f in reversed(self._stack) if f is not None), None)

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {k: v or "" for k, v in attrs}
        classes = a.get("class", "").split()
        if tag == "div":
            entry = _Field() if "field" in classes else None
            if entry is not None:
                self.fields.append(entry)
            self._stack.append(entry)
        elif tag in ("input", "select", "textarea") and a.get("name"):
            inner = self._inner()
            if inner is not None:
                inner.names.add(a["name"])
            if tag == "input" and "value" in a:
                self.inputs.setdefault(a["name"], a["value"])
        elif tag == "p" and "error" in classes:
            self._error = self._inner()
            self._buf = []

    def handle_data(self, data: str) -> None:
        if self._error is not None:
            self._buf.append(data)

    def handle_endtag(self, tag: str) -> None:
        if tag == "p" and self._error is not None:
            self._error.errors.append("".join(self._buf).strip())
            self._error = None
        elif tag == "div" and self._stack:
            self._stack.pop()


def _parse(html: str) -> _FieldParser:
    p = _FieldParser()
    p.feed(html)
    p.close()
    return p


def field_errors(html: str, name: str) -> list[str]:
    """The error messages shown in the field block of the control named ``name``."""
    blocks = [f for f in _parse(html).fields if name in f.names]
    assert blocks, f"no field {name!r} on the page"
    return [e for f in blocks for e in f.errors]


def all_field_errors(html: str) -> list[str]:
    return [e for f in _parse(html).fields for e in f.errors]


def input_value(html: str, name: str) -> str:
    inputs = _parse(html).inputs
    assert name in inputs, f"no input {name!r} on the page"
    return inputs[name]
