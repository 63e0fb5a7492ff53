"""Security of the web app: headers, the session cookie, login failures and
throttling, and the ``next`` address after login."""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path
from urllib.parse import urljoin, urlsplit

import pytest
from flask import Flask
from flask.testing import FlaskClient
from webtools import PASSWORD, Seed, field_errors
from werkzeug.test import TestResponse

Client = Callable[[str], FlaskClient]


def _csp(resp: TestResponse) -> dict[str, list[str]]:
    header = resp.headers["Content-Security-Policy"]
    out: dict[str, list[str]] = {}
    for part in header.split(";"):
        words = part.split()
        if words:
            out[words[0]] = words[1:]
    return out


def _login(client: FlaskClient, password: str, email: str = Seed.email("assessor")) -> TestResponse:
    return client.post("/login", data={"email": email, "password": password})


@pytest.mark.parametrize(
    "path",
    [
        "/login",
        "/",
        "/sites/{site}",
        "/machines/{machine}",
        "/machines/{machine}/hazards/new",
        "/api/rating-preview?method=iso13849",
        "/machines/999999",
        "/static/css/riskreg.css",
    ],
)
def test_security_headers(client_as: Client, seed: Seed, path: str) -> None:
    client = client_as("assessor")
    resp = client.get(path.format(site=seed.site_id, machine=seed.machine_id))
    assert resp.status_code in (200, 302, 404)
    csp = _csp(resp)
    assert "'unsafe-inline'" not in resp.headers["Content-Security-Policy"]
    assert "'unsafe-eval'" not in resp.headers["Content-Security-Policy"]
    assert csp["frame-ancestors"] == ["'none'"]
    assert csp["script-src"] == ["'self'"] and csp["object-src"] == ["'none'"]
    assert resp.headers["X-Content-Type-Options"] == "nosniff"


def test_headers_on_the_anonymous_login_page_and_redirect(app: Flask) -> None:
    client = app.test_client()
    for resp in (client.get("/login"), client.get("/")):
        assert "frame-ancestors 'none'" in resp.headers["Content-Security-Policy"]
        assert "'unsafe-inline'" not in resp.headers["Content-Security-Policy"]
        assert resp.headers["X-Content-Type-Options"] == "nosniff"


@pytest.mark.parametrize(
    "path", ["/login", "/sites/{site}", "/machines/{machine}", "/hazards/{hazard}/edit"]
)
def test_pages_need_no_inline_script_or_style(
    app: Flask, client_as: Client, seed: Seed, path: str
) -> None:
    """The CSP forbids inline script and style, so the pages must not rely on them."""
    url = path.format(site=seed.site_id, machine=seed.machine_id, hazard=seed.hazard_id)
    client = app.test_client() if path == "/login" else client_as("admin")
    html = client.get(url).get_data(as_text=True)
    assert not re.search(r"<script(?![^>]*\bsrc=)[^>]*>", html), "inline <script>"
    assert "<style" not in html
    assert not re.search(r"\sstyle=", html), "inline style attribute"
    assert not re.search(r"\son[a-z]+=", html), "inline event handler"


def test_session_cookie_is_httponly_and_samesite(app: Flask) -> None:
    resp = _login(app.test_client(), PASSWORD)
    assert resp.status_code == 302
    cookies = [c for c in resp.headers.getlist("Set-Cookie") if c.startswith("session=")]
    assert cookies, "no session cookie set at login"
    parts = [p.strip().lower() for p in cookies[-1].split(";")]
    assert "httponly" in parts
    assert "samesite=lax" in parts


def test_wrong_password_gets_401_and_a_message(app: Flask) -> None:
    client = app.test_client()
    for email in (Seed.email("assessor"), "nobody@example.com"):
        resp = _login(client, "not-the-password", email)
        assert resp.status_code == 401
        html = resp.get_data(as_text=True)
        # The same message for a wrong password and an unknown person.
        assert field_errors(html, "password") == ["E-mail or password is not right. Try again."]
    assert urlsplit(client.get("/").headers["Location"]).path == "/login"


def test_five_failures_throttle_the_login(app: Flask) -> None:
    client = app.test_client()
    for _ in range(5):
        assert _login(client, "wrong-password-x").status_code == 401
    # Even the right password is refused now.
    resp = _login(client, PASSWORD)
    assert resp.status_code == 429
    assert "Too many failed attempts" in resp.get_data(as_text=True)
    assert urlsplit(client.get("/").headers["Location"]).path == "/login"


def test_four_failures_do_not_throttle(app: Flask) -> None:
    client = app.test_client()
    for _ in range(4):
        assert _login(client, "wrong-password-x").status_code == 401
    assert _login(client, PASSWORD).status_code == 302


@pytest.mark.parametrize(
    "target",
    [
        "//evil.example",
        "//evil.example/login",
        "///evil.example",
        "https://evil.example/",
        "http:evil.example",
        "/\\evil.example",
        "\\\\evil.example",
        "/\t/evil.example",
        "javascript:alert(1)",
        "evil.example",
    ],
)
def test_login_refuses_an_outside_next_address(app: Flask, target: str) -> None:
    resp = app.test_client().post(
        "/login",
        query_string={"next": target},
        data={"email": Seed.email("viewer"), "password": PASSWORD},
    )
    assert resp.status_code == 302
    # Read the address as a browser does: "\\" counts as "/", tabs and newlines drop out.
    location = re.sub(r"[\t\n\r]", "", resp.headers["Location"].strip()).replace("\\", "/")
    where = urlsplit(urljoin("http://localhost/login", location))
    assert (where.scheme, where.netloc) == ("http", "localhost"), resp.headers["Location"]


def test_login_follows_an_inside_next_address(app: Flask, seed: Seed) -> None:
    client = app.test_client()
    wall = client.get(f"/machines/{seed.machine_id}")
    login_url = wall.headers["Location"]
    assert urlsplit(login_url).path == "/login"
    resp = client.post(login_url, data={"email": Seed.email("viewer"), "password": PASSWORD})
    assert resp.status_code == 302
    assert resp.headers["Location"] == f"/machines/{seed.machine_id}"


@pytest.mark.parametrize("hops", [0, 1])
def test_behind_a_proxy_the_forwarded_address_counts(
    engine_url: str, seed: Seed, instance_dir: Path, hops: int
) -> None:
    """With RISKREG_PROXY_HOPS the proxy's X-Forwarded-For names the client, so one
    client's failed logins do not lock out another; without it the header is ignored
    (a client could forge it) and every request counts as the same address."""
    from webtools import make_app

    app = make_app(engine_url, PROXY_HOPS=hops)
    c = app.test_client()
    email = Seed.email("assessor")
    for _ in range(5):
        r = c.post(
            "/login",
            data={"email": email, "password": "wrong"},
            headers={"X-Forwarded-For": "10.0.0.1", "X-Forwarded-Proto": "https"},
        )
        assert r.status_code == 401
    other = c.post(
        "/login",
        data={"email": email, "password": PASSWORD},
        headers={"X-Forwarded-For": "10.0.0.2", "X-Forwarded-Proto": "https"},
    )
    if hops:
        assert other.status_code == 302
        assert "Secure" in other.headers.get("Set-Cookie", "")
    else:
        assert other.status_code == 429
