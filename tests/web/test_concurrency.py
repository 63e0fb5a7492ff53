"""Several writers on loopback editing the same record at once: exactly one save
wins; every other writer gets "changed by someone else" with the other's change,
and nothing is silently overwritten. Runs on SQLite and on PostgreSQL."""

from __future__ import annotations

import http.cookiejar
import re
import threading
import urllib.error
import urllib.parse
import urllib.request
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import Engine
from waitress.server import create_server
from webtools import PASSWORD, Seed

from riskreg.model import Hazard
from riskreg.web import create_app

WRITERS = 6


@pytest.fixture
def server(engine_url: str, seed: Seed, instance_dir: Path) -> Iterator[str]:
    app = create_app({"DATABASE_URL": engine_url, "SECRET_KEY": "concurrency"})
    srv = create_server(app, host="127.0.0.1", port=0, threads=WRITERS)
    port = srv.socket.getsockname()[1]  # type: ignore[union-attr]
    thread = threading.Thread(target=srv.run, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{port}"
    finally:
        srv.close()
        thread.join(timeout=5)
        app.extensions["riskreg.engine"].dispose()


class Client:
    def __init__(self, base: str) -> None:
        self.base = base
        self.opener = urllib.request.build_opener(
            urllib.request.HTTPCookieProcessor(http.cookiejar.CookieJar())
        )

    def get(self, path: str) -> str:
        with self.opener.open(self.base + path, timeout=20) as r:
            return r.read().decode()

    def post(self, path: str, data: dict[str, str]) -> tuple[int, str]:
        body = urllib.parse.urlencode(data).encode()
        try:
            with self.opener.open(self.base + path, body, timeout=20) as r:
                return r.status, r.read().decode()
        except urllib.error.HTTPError as exc:
            return exc.code, exc.read().decode()


def _token(page: str) -> str:
    m = re.search(r'name="csrf_token"[^>]*value="([^"]+)"', page) or re.search(
        r'value="([^"]+)"[^>]*name="csrf_token"', page
    )
    assert m, "no CSRF token on the page"
    return m.group(1)


def _field(page: str, name: str) -> str:
    m = re.search(rf'name="{name}"[^>]*value="([^"]*)"', page) or re.search(
        rf'value="([^"]*)"[^>]*name="{name}"', page
    )
    assert m, f"no field {name}"
    return m.group(1)


def test_concurrent_edits_never_overwrite_silently(server: str, seed: Seed, engine: Engine) -> None:
    clients = []
    forms = []
    for _ in range(WRITERS):
        c = Client(server)
        login = c.get("/login")
        status, _body = c.post(
            "/login",
            {"csrf_token": _token(login), "email": Seed.email("assessor"), "password": PASSWORD},
        )
        assert status == 200  # followed the redirect to the overview
        page = c.get(f"/hazards/{seed.hazard_id}/edit")  # everyone opens the same version
        forms.append((_token(page), _field(page, "version")))
        clients.append(c)
    assert len({v for _t, v in forms}) == 1

    results: list[tuple[int, str]] = [(0, "")] * WRITERS
    start = threading.Barrier(WRITERS)

    def write(i: int) -> None:
        token, version = forms[i]
        start.wait(timeout=20)
        results[i] = clients[i].post(
            f"/hazards/{seed.hazard_id}/edit",
            {
                "csrf_token": token,
                "version": version,
                "hazard_group": "mechanical",
                "hazard_type": "crushing",
                "event": f"edit by writer {i}",
                "method": "iso13849",
                "stage": "initial",
            },
        )

    threads = [threading.Thread(target=write, args=(i,)) for i in range(WRITERS)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=60)
    statuses = sorted(s for s, _ in results)
    assert statuses.count(200) == 1, statuses  # the winner follows its redirect
    assert statuses.count(409) == WRITERS - 1, statuses
    winner = next(i for i, (s, _) in enumerate(results) if s == 200)
    for s, body in results:
        if s == 409:
            assert "changed by someone else" in body
            assert f"edit by writer {winner}" in body  # the other's change is shown
    from sqlalchemy.orm import Session

    with Session(engine) as check:
        h = check.get(Hazard, seed.hazard_id)
        assert h is not None and h.event == f"edit by writer {winner}"
