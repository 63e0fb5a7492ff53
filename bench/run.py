"""Benchmarks at plant and enterprise scale (``make bench``).

    .venv/bin/python bench/run.py            # sizes 50, 500 and 5,000 machines
    BENCH_SIZES=50,500 .venv/bin/python bench/run.py

For every size, a synthetic register (``bench/generate.py``; cached under
``bench/out/``) is served over real HTTP on loopback by waitress in a subprocess
(``bench/server.py``, the app from the ordinary factory behind a bench-only
middleware), on SQLite and on PostgreSQL, and measured:

- server time p50/p95 of the site overview, a machine page, the due board, the
  hazard edit page and a hazard save (a POST with its CSRF token), from the
  middleware's ``X-Bench-Server-Ms`` header, several client threads at once, a
  bounded number of requests per page; client-side times on loopback beside them;
- SQL statements per page (the middleware's ``X-Bench-Statements`` header);
- ``riskreg due`` (the CLI, a fresh process each run);
- the peak RSS of the server process (``VmHWM`` in ``/proc/<pid>/status``).

Then, once: the PDF reports (seconds per page, and the ratio to WeasyPrint laying
out the same HTML, with ``time_report`` of ``bench/reports.py``) and ``riskreg
import`` of an exported site (rows per second). Prints everything and writes
``bench/RESULTS.md`` and ``bench/RESULTS.json``.

Settings (environment): ``BENCH_SIZES`` (default ``50,500,5000``),
``BENCH_BACKENDS`` (``sqlite,postgresql``), ``BENCH_POSTGRES_URL`` (else
``RISKREG_TEST_POSTGRES_URL``; without either PostgreSQL is left out; a server
where the user may create databases: one is made per size and dropped after),
``BENCH_CLIENTS`` (3), ``BENCH_REQUESTS`` (requests per page, 40),
``BENCH_PAGE_SECONDS`` (stop a page's series after this many seconds once it has
10 requests, 90), ``BENCH_IMPORT_SIZES`` (``50``), ``BENCH_PARTS``
(``pages,cli,pdf,import``), ``BENCH_MAX_AGE_DAYS`` (a cached register older than
this is generated again, 7), ``BENCH_BASELINE`` (an earlier RESULTS.json to show
beside these figures), ``BENCH_OUT`` (``bench/RESULTS.md``).
"""

from __future__ import annotations

import datetime as dt
import http.client
import importlib.util
import json
import os
import queue
import shutil
import socket
import sqlite3
import statistics
import subprocess
import sys
import threading
import time
import urllib.parse
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from html.parser import HTMLParser
from http.cookies import SimpleCookie
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
BENCH = ROOT / "bench"
OUT = BENCH / "out"
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import generate  # noqa: E402  (bench/generate.py, next to this file)
from sqlalchemy import text  # noqa: E402

from riskreg import migrate  # noqa: E402
from riskreg.db import make_engine  # noqa: E402
from riskreg.model import Base  # noqa: E402

# Project goals (issue "Benchmarks at plant and enterprise scale").
TARGET_P95_MS = {500: 100.0, 5000: 300.0}  # site overview and due board
TARGET_STATEMENTS = 15
TARGET_PDF_RATIO = 1.3
TARGET_IMPORT_ROWS_S = 5000
TARGET_RSS_MB = 500
PAGES = (
    "overview",
    "machine",
    "due board",
    "hazard edit",
    "hazard save",
    "shift check save",
    "first read of the day",
    "first read after a site-wide change",
)

# What was changed to meet the goals (printed with the results).
CHANGES = [
    "First round (2026-12-01 → 02): a machine-page loader with eager loading; the due items "
    "as one set-based query (a `UNION ALL` with the due dates worked out by the database, "
    "built once per shape); an index for the newest passing verification per safeguard or "
    "machine (migration 0005); the overview and the due board paged (100 per page, counts "
    "over the whole register); batched import writes; PostgreSQL's JIT off for the app's "
    "short queries. Statements per page became constant; the overview and the due board "
    "still worked out every due item of the site on every request (seconds at 5,000).",
    "Second round (2026-12-02): the due items are stored (`due_item`, migration 0006) as "
    "that same query works them out, and kept exact: a session hook notes every write to a "
    "record they are worked out from and, as the write commits, works out that machine's "
    "items again in the same transaction (a site-wide change such as a site interval or an "
    "area marks the whole site to be worked out in full on the next read); the kinds whose "
    "items depend on the day itself (missed start-of-shift checks, validations and "
    "calibrations due now) are worked out for the whole site by the first read of each day "
    "(`due_refresh`). The overview and the due board read one indexed table, their counts "
    "as index ranges. The overview shows 50 machines a page (was 100) and gets its open "
    "hazards, levels and proposed measures in one statement, helped by two covering "
    "indexes; it links each area's QR labels beside its heading instead of every area of "
    "the site at the top; the due board's machine filter takes an asset tag instead of "
    "listing every machine in service. The server freezes what exists before it serves "
    "out of the garbage collector's way (`gc.freeze`): full collections over the whole "
    "program had been stalling every request thread at once (at 500 machines, overview "
    "p95 about 230 → 100 ms, due board about 300 → 100 ms, two runs each). What the "
    "stored items cost is measured above: "
    "`shift check save` (a write that works its machine's items out again), `first read "
    "of the day` and `first read after a site-wide change`.",
]
WHEN = dt.datetime(2026, 12, 1, 9, 0, tzinfo=dt.UTC)


def env(name: str, default: str) -> str:
    return os.environ.get(name) or default


def log(msg: str) -> None:
    print(msg, flush=True)


# --- the registers, cached ------------------------------------------------------------------


def ensure_register(size: int) -> tuple[Path, dict[str, Any]]:
    """The cached SQLite register of ``size`` machines; generated when missing or stale."""
    path = OUT / f"register-{size}.sqlite"
    meta_path = Path(str(path) + ".meta.json")
    max_age = int(env("BENCH_MAX_AGE_DAYS", "7"))
    meta: dict[str, Any] | None = None
    if path.exists() and meta_path.exists():
        meta = json.loads(meta_path.read_text())
        age = (dt.date.today() - dt.date.fromisoformat(meta["anchor"])).days
        if (
            meta.get("generator_version") != generate.GENERATOR_VERSION
            or meta.get("seed") != generate.SEED
            or not 0 <= age <= max_age
        ):
            meta = None
    if meta is None:
        log(f"generating the register of {size} machines (cached in {path.relative_to(ROOT)})")
        meta = generate.generate(path, size, log=log)
        log(f"  {size} machines generated in {meta['seconds']} s")
    elif meta.get("schema") != migrate.head_revision():
        log(f"upgrading the cached register of {size} machines to the current schema")
        engine = make_engine(f"sqlite:///{path}")
        migrate.upgrade(engine)
        engine.dispose()
        meta["schema"] = migrate.head_revision()
        meta_path.write_text(json.dumps(meta, indent=2) + "\n")
    return path, meta


def _pg_admin_url() -> str | None:
    return os.environ.get("BENCH_POSTGRES_URL") or os.environ.get("RISKREG_TEST_POSTGRES_URL")


def copy_to_postgres(sqlite_path: Path, url: str) -> float:
    """Load a register from its SQLite file into a migrated PostgreSQL database with
    COPY, table by table in dependency order; then the sequences and VACUUM ANALYZE."""
    started = time.perf_counter()
    engine = make_engine(url)
    migrate.upgrade(engine)
    src = sqlite3.connect(sqlite_path)
    raw = engine.raw_connection()
    try:
        pg = raw.driver_connection
        assert pg is not None
        with pg.cursor() as cur:
            cur.execute("SET TIME ZONE 'UTC'")
            for t in Base.metadata.sorted_tables:
                cols = [c.name for c in t.c]
                names = ", ".join(f'"{c}"' for c in cols)
                with cur.copy(f'COPY "{t.name}" ({names}) FROM STDIN') as cp:
                    for row in src.execute(f'SELECT {names} FROM "{t.name}"'):
                        cp.write_row(row)
                if "id" in t.c:
                    cur.execute(
                        f"SELECT setval(pg_get_serial_sequence('\"{t.name}\"', 'id'), "
                        f'COALESCE(MAX(id), 1), MAX(id) IS NOT NULL) FROM "{t.name}"'
                    )
        pg.commit()
        # as autovacuum leaves a database in use: statistics and the visibility map
        # (which lets index-only scans skip the table)
        pg.autocommit = True
        with pg.cursor() as cur:
            cur.execute("VACUUM ANALYZE")
    finally:
        raw.close()
        src.close()
        engine.dispose()
    return time.perf_counter() - started


@contextmanager
def database(backend: str, register: Path, label: str) -> Iterator[str]:
    """A working copy of a register on the backend (the benchmark writes to it)."""
    if backend == "sqlite":
        work = OUT / f"work-{label}.sqlite"
        for suffix in ("", "-wal", "-shm"):
            Path(str(work) + suffix).unlink(missing_ok=True)
        shutil.copyfile(register, work)
        try:
            yield f"sqlite:///{work}"
        finally:
            for suffix in ("", "-wal", "-shm"):
                Path(str(work) + suffix).unlink(missing_ok=True)
        return
    admin_url = _pg_admin_url()
    assert admin_url
    name = f"riskreg_bench_{label}_{uuid.uuid4().hex[:8]}".replace("-", "_")
    admin = make_engine(admin_url, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    url = admin_url.rsplit("/", 1)[0] + "/" + name
    try:
        seconds = copy_to_postgres(register, url)
        log(f"  loaded into PostgreSQL in {seconds:.1f} s")
        yield url
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


# --- the server ------------------------------------------------------------------------------


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@dataclass
class Server:
    proc: subprocess.Popen[bytes]
    port: int

    def peak_rss_mb(self) -> float | None:
        try:
            for line in Path(f"/proc/{self.proc.pid}/status").read_text().splitlines():
                if line.startswith("VmHWM:"):
                    return round(int(line.split()[1]) / 1024, 1)
        except OSError:
            return None
        return None


@contextmanager
def serve(url: str, label: str) -> Iterator[Server]:
    port = free_port()
    instance = OUT / f"instance-{label}"
    instance.mkdir(parents=True, exist_ok=True)
    environ = dict(os.environ, RISKREG_INSTANCE=str(instance))
    logfile = open(OUT / f"server-{label}.log", "wb")  # noqa: SIM115
    proc = subprocess.Popen(
        [sys.executable, str(BENCH / "server.py"), "--db", url, "--port", str(port)],
        env=environ,
        stdout=logfile,
        stderr=subprocess.STDOUT,
    )
    server = Server(proc, port)
    try:
        deadline = time.monotonic() + 120
        while True:
            if proc.poll() is not None:
                raise RuntimeError(f"the server stopped; see bench/out/server-{label}.log")
            try:
                c = Client(port)
                if c.request("GET", "/login").status == 200:
                    break
            except OSError:
                pass
            if time.monotonic() > deadline:
                raise RuntimeError("the server did not answer within 120 s")
            time.sleep(0.3)
        yield server
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()
        logfile.close()
        shutil.rmtree(instance, ignore_errors=True)


# --- an HTTP client with a cookie jar --------------------------------------------------------


@dataclass
class Response:
    status: int
    headers: dict[str, str]
    body: str
    client_ms: float

    @property
    def server_ms(self) -> float | None:
        v = self.headers.get("x-bench-server-ms")
        return float(v) if v else None

    @property
    def statements(self) -> int | None:
        v = self.headers.get("x-bench-statements")
        return int(v) if v else None


class Client:
    """One browser: a keep-alive connection and its cookies; no redirects followed."""

    def __init__(self, port: int) -> None:
        self.port = port
        self.conn = http.client.HTTPConnection("127.0.0.1", port, timeout=300)
        self.cookies: dict[str, str] = {}

    def request(
        self, method: str, path: str, form: dict[str, str] | list[tuple[str, str]] | None = None
    ) -> Response:
        headers = {}
        if self.cookies:
            headers["Cookie"] = "; ".join(f"{k}={v}" for k, v in self.cookies.items())
        body = None
        if form is not None:
            body = urllib.parse.urlencode(form)
            headers["Content-Type"] = "application/x-www-form-urlencoded"
        for attempt in (1, 2):
            try:
                started = time.perf_counter()
                self.conn.request(method, path, body, headers)
                resp = self.conn.getresponse()
                data = resp.read()
                client_ms = (time.perf_counter() - started) * 1000
                break
            except (http.client.HTTPException, ConnectionError):
                self.conn.close()
                self.conn = http.client.HTTPConnection("127.0.0.1", self.port, timeout=300)
                if attempt == 2:
                    raise
        for value in resp.headers.get_all("Set-Cookie") or []:
            jar: SimpleCookie = SimpleCookie()
            jar.load(value)
            for k, morsel in jar.items():
                if morsel.value == "" or morsel["max-age"] == "0":
                    self.cookies.pop(k, None)
                else:
                    self.cookies[k] = morsel.value
        return Response(
            resp.status,
            {k.lower(): v for k, v in resp.getheaders()},
            data.decode("utf-8", "replace"),
            client_ms,
        )

    def log_in(self, email: str, password: str) -> None:
        page = self.request("GET", "/login")
        form = forms_of(page.body)[0]
        form.update(email=email, password=password)
        r = self.request("POST", "/login", form)
        if r.status != 302:
            raise RuntimeError(f"could not log in as {email}: HTTP {r.status}")


class _Forms(HTMLParser):
    """The fields of every POST form of a page, as a browser would send them."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.forms: list[dict[str, str]] = []
        self._form: dict[str, str] | None = None
        self._select: str | None = None
        self._first_option: str | None = None
        self._textarea: str | None = None

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {k: v or "" for k, v in attrs}
        if tag == "form" and a.get("method", "").lower() == "post":
            self._form = {}
            self.forms.append(self._form)
        if self._form is None:
            return
        name = a.get("name")
        if tag == "input" and name:
            kind = a.get("type", "text").lower()
            if kind in ("submit", "button", "file", "image", "reset"):
                return
            if kind in ("radio", "checkbox") and "checked" not in a:
                return
            self._form[name] = a.get("value", "on" if kind == "checkbox" else "")
        elif tag == "select" and name:
            self._select, self._first_option = name, None
        elif tag == "option" and self._select:
            value = a.get("value", "")
            if self._first_option is None:
                self._first_option = value
                self._form.setdefault(self._select, value)
            if "selected" in a:
                self._form[self._select] = value
        elif tag == "textarea" and name:
            self._textarea = name
            self._form[name] = ""

    def handle_data(self, data: str) -> None:
        if self._form is not None and self._textarea:
            self._form[self._textarea] += data

    def handle_endtag(self, tag: str) -> None:
        if tag == "select":
            self._select = None
        elif tag == "textarea":
            self._textarea = None
        elif tag == "form":
            self._form = None


def forms_of(html: str) -> list[dict[str, str]]:
    p = _Forms()
    p.feed(html)
    return p.forms


class _Boxes(HTMLParser):
    """The values of the checkboxes of one name (checked or not)."""

    def __init__(self, name: str) -> None:
        super().__init__(convert_charrefs=True)
        self.name = name
        self.values: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {k: v or "" for k, v in attrs}
        if tag == "input" and a.get("type") == "checkbox" and a.get("name") == self.name:
            self.values.append(a.get("value", "on"))


def checkbox_values(html: str, name: str) -> list[str]:
    p = _Boxes(name)
    p.feed(html)
    return p.values


# --- measuring ---------------------------------------------------------------------------------


@dataclass
class Sample:
    server_ms: float
    client_ms: float
    statements: int
    status: int


@dataclass
class Series:
    samples: list[Sample] = field(default_factory=list)
    errors: list[str] = field(default_factory=list)

    def summary(self) -> dict[str, Any]:
        ok = [s for s in self.samples if s.status < 400]
        if not ok:
            return {"n": 0, "errors": self.errors[:5]}
        server = [s.server_ms for s in ok]
        client = [s.client_ms for s in ok]
        stmts = [s.statements for s in ok]
        return {
            "n": len(ok),
            "p50_ms": round(statistics.median(server), 1),
            "p95_ms": round(p95(server), 1),
            "max_ms": round(max(server), 1),
            "client_p50_ms": round(statistics.median(client), 1),
            "client_p95_ms": round(p95(client), 1),
            "statements_min": min(stmts),
            "statements_max": max(stmts),
            "errors": self.errors[:5],
        }


def p95(xs: list[float]) -> float:
    if len(xs) < 2:
        return xs[0]
    return statistics.quantiles(xs, n=20, method="inclusive")[-1]


Task = Callable[["Client"], list[tuple[str, Response]]]


def run_series(clients: list[Client], tasks: list[Task], cap_s: float) -> dict[str, Series]:
    """Run the tasks on the clients' threads; each task returns (page, response) pairs."""
    todo: queue.Queue[Task] = queue.Queue()
    for t in tasks:
        todo.put(t)
    out: dict[str, Series] = {}
    lock = threading.Lock()
    started = time.monotonic()

    def worker(c: Client) -> None:
        while True:
            with lock:
                done = sum(len(s.samples) for s in out.values())
            if time.monotonic() - started > cap_s and done >= 10:
                return
            try:
                task = todo.get_nowait()
            except queue.Empty:
                return
            try:
                results = task(c)
            except Exception as exc:  # noqa: BLE001  (reported, not hidden)
                with lock:
                    out.setdefault("errors", Series()).errors.append(repr(exc))
                continue
            with lock:
                for page, r in results:
                    s = out.setdefault(page, Series())
                    if r.status >= 400 or r.server_ms is None:
                        s.errors.append(f"HTTP {r.status}")
                    s.samples.append(
                        Sample(r.server_ms or 0.0, r.client_ms, r.statements or 0, r.status)
                    )

    threads = [threading.Thread(target=worker, args=(c,)) for c in clients]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return out


def sample_ids(url: str) -> dict[str, Any]:
    """What the requests ask for: the site, machines spread over the register,
    hazards of draft assessments (the ones that can be edited) and machines whose
    start-of-shift check of today is still to be recorded."""
    engine = make_engine(url)
    with engine.connect() as conn:
        site_id = conn.execute(text("SELECT min(id) FROM site")).scalar_one()
        machines = [r[0] for r in conn.execute(text("SELECT id FROM machine ORDER BY id"))]
        hazards = [
            r[0]
            for r in conn.execute(
                text(
                    "SELECT h.id FROM hazard h JOIN assessment a ON a.id = h.assessment_id "
                    "WHERE a.status = 'draft' AND h.archived = :f ORDER BY h.id"
                ),
                {"f": False},
            )
        ]
        # machines with a start-of-shift checklist and no check recorded today
        checked = [
            r[0]
            for r in conn.execute(
                text(
                    "SELECT c.machine_id FROM shift_checklist c JOIN machine m "
                    "ON m.id = c.machine_id WHERE m.active = :t AND NOT EXISTS (SELECT 1 FROM "
                    "shift_check s WHERE s.machine_id = c.machine_id AND s.shift_date = :d) "
                    "ORDER BY c.machine_id"
                ),
                {"t": True, "d": dt.date.today()},
            )
        ]
    engine.dispose()
    step = max(1, len(machines) // 20)
    hstep = max(1, len(hazards) // 400)
    cstep = max(1, len(checked) // 400)
    return {
        "site": site_id,
        "machines": machines[::step][:20],
        "hazards": hazards[::hstep],
        "checklists": checked[::cstep],
    }


def set_due_day(url: str, day: dt.date | None) -> None:
    """Set the day the stored due items were worked out for: yesterday makes the next
    read the first of a day, none the first after a site-wide change."""
    engine = make_engine(url)
    with engine.begin() as conn:
        conn.execute(text("UPDATE due_refresh SET computed_for = :d"), {"d": day})
    engine.dispose()


def measure_pages(
    server: Server, ids: dict[str, Any], meta: dict[str, Any], url: str
) -> dict[str, Any]:
    n = int(env("BENCH_REQUESTS", "40"))
    cap = float(env("BENCH_PAGE_SECONDS", "90"))
    clients = []
    for _ in range(int(env("BENCH_CLIENTS", "3"))):
        c = Client(server.port)
        c.log_in(meta["people"]["assessor"], meta["password"])
        clients.append(c)
    site = ids["site"]
    machines = ids["machines"]

    def get(page: str, path: str) -> Task:
        return lambda c: [(page, c.request("GET", path))]

    counter = iter(range(10**9))

    def save(hazard_id: int) -> Task:
        def task(c: Client) -> list[tuple[str, Response]]:
            page = c.request("GET", f"/hazards/{hazard_id}/edit")
            form = next((f for f in forms_of(page.body) if "hazard_group" in f), None)
            if form is None:
                raise RuntimeError(f"no hazard form on /hazards/{hazard_id}/edit ({page.status})")
            form["danger_zone"] = form.get("danger_zone", "")[:150] + f" · bench {next(counter)}"
            posted = c.request("POST", f"/hazards/{hazard_id}/edit", form)
            if posted.status != 302:
                posted.status = max(posted.status, 400)  # a save that did not go through
            return [("hazard edit", page), ("hazard save", posted)]

        return task

    def shift_check(machine_id: int) -> Task:
        """A start-of-shift check with every item ticked: the commonest write that
        changes a machine's due items (they are worked out again as it commits)."""

        def task(c: Client) -> list[tuple[str, Response]]:
            path = f"/machines/{machine_id}/shift-check"
            page = c.request("GET", path)
            form = next((f for f in forms_of(page.body) if "shift_date" in f), None)
            if form is None:
                raise RuntimeError(f"no shift-check form on {path} ({page.status})")
            body = list(form.items()) + [
                ("ok_items", v) for v in checkbox_values(page.body, "ok_items")
            ]
            posted = c.request("POST", path, body)
            if posted.status != 302:
                posted.status = max(posted.status, 400)
            return [("shift check save", posted)]

        return task

    plan: dict[str, list[Task]] = {
        "overview": [get("overview", f"/sites/{site}") for _ in range(n)],
        "machine": [get("machine", f"/machines/{machines[i % len(machines)]}") for i in range(n)],
        "due board": [get("due board", f"/sites/{site}/due") for _ in range(n)],
        "hazard save": [save(h) for h in ids["hazards"][:n]],
        "shift check save": [shift_check(m) for m in ids["checklists"][:n]],
    }
    results: dict[str, Any] = {}
    for name, tasks in plan.items():
        # warm-up: one request per client, not counted
        run_series(clients, tasks[: len(clients)], cap) if not name.endswith("save") else None
        t = time.monotonic()
        series = run_series(clients, tasks, cap)
        for page, s in series.items():
            results[page] = s.summary()
            log(f"    {page:12s} {fmt_summary(results[page])}")
        log(f"    ({name}: {time.monotonic() - t:.0f} s)")
    # The first read of a day works out the site's items that depend on the day; the
    # first read after a site-wide change (or ever) works out all of them. Each timed on
    # its own, 3 times, the stored day set before each request; after the other pages,
    # so that the rows these passes rewrite do not weigh on them (on PostgreSQL a
    # rewritten table reads slower until autovacuum has been through it).
    for page, day in (
        ("first read of the day", dt.date.today() - dt.timedelta(days=1)),
        ("first read after a site-wide change", None),
    ):
        first: list[Sample] = []
        for _ in range(3):
            set_due_day(url, day)
            r = clients[0].request("GET", f"/sites/{site}")
            first.append(Sample(r.server_ms or 0.0, r.client_ms, r.statements or 0, r.status))
        results[page] = Series(first).summary()
        log(f"    {page:12s} {fmt_summary(results[page])}")

    return results


def fmt_summary(s: dict[str, Any]) -> str:
    if not s.get("n"):
        return f"no answer: {s.get('errors')}"
    st = (
        str(s["statements_min"])
        if s["statements_min"] == s["statements_max"]
        else f"{s['statements_min']}–{s['statements_max']}"
    )
    extra = f", {len(s['errors'])} errors" if s["errors"] else ""
    return (
        f"n={s['n']:3d}  p50 {s['p50_ms']:8.1f} ms  p95 {s['p95_ms']:8.1f} ms  "
        f"(client p50 {s['client_p50_ms']:.1f})  statements {st}{extra}"
    )


def time_cli(args: list[str], runs: int, environ: dict[str, str] | None = None) -> dict[str, Any]:
    times = []
    status = 0
    for _ in range(runs):
        t = time.perf_counter()
        proc = subprocess.run(
            [str(Path(sys.executable).parent / "riskreg"), *args],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.PIPE,
            env=environ,
            check=False,
        )
        times.append(time.perf_counter() - t)
        status = status or proc.returncode
        if proc.returncode:
            return {"error": proc.stderr.decode()[-500:], "status": proc.returncode}
    return {"median_s": round(statistics.median(times), 2), "all_s": [round(x, 2) for x in times]}


# --- the PDF reports and the import -------------------------------------------------------------


def bench_reports_module() -> Any:
    """The reports benchmark (bench/reports.py), reused for its ``time_report``."""
    spec = importlib.util.spec_from_file_location("bench_reports", BENCH / "reports.py")
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def measure_pdf(register: Path) -> dict[str, Any]:
    from sqlalchemy import select
    from sqlalchemy.orm import Session

    from riskreg import reports
    from riskreg.model import Machine, Site

    br = bench_reports_module()
    runs = int(env("BENCH_PDF_RUNS", "5"))
    out: dict[str, Any] = {}
    with database("sqlite", register, "pdf") as url:
        engine = make_engine(url)
        with Session(engine) as session:
            m = session.scalar(
                select(Machine).where(Machine.kind == "mechanical_press").order_by(Machine.id)
            )
            site = session.scalar(select(Site).order_by(Site.id))
            assert m is not None and site is not None
            # once first, not counted: fonts, templates and the session's records warm
            reports.build_machine_report(session, m, generated_at=WHEN)
            reports.build_due_report(session, site, generated_at=WHEN)
            out["machine"] = dict(
                br.time_report(
                    lambda: reports.build_machine_report(session, m, generated_at=WHEN), runs
                ),
                what=f"machine report of {m.asset_tag}",
            )
            log(f"    machine report: {out['machine']}")
            out["due"] = dict(
                br.time_report(
                    lambda: reports.build_due_report(session, site, generated_at=WHEN), runs
                ),
                what=f"due report of {site.name}",
            )
            log(f"    due report: {out['due']}")
        engine.dispose()
    return out


def count_rows(url: str) -> int:
    engine = make_engine(url)
    with engine.connect() as conn:
        n = sum(
            conn.execute(text(f'SELECT count(*) FROM "{t.name}"')).scalar_one()
            for t in Base.metadata.sorted_tables
        )
    engine.dispose()
    return int(n)


def measure_import(register: Path, size: int, backends: list[str]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    export = OUT / f"export-{size}.json"
    with database("sqlite", register, f"export-{size}") as url:
        out["export"] = time_cli(["export", "--db", url, "-o", str(export)], 1)
    out["file_mb"] = round(export.stat().st_size / 1048576, 1)
    empty = OUT / "empty.sqlite"
    for backend in backends:
        Path(empty).unlink(missing_ok=True)
        engine = make_engine(f"sqlite:///{empty}")
        migrate.upgrade(engine)
        engine.dispose()
        with database(backend, empty, f"import-{size}") as url:
            instance = OUT / f"instance-import-{size}"
            before = count_rows(url)
            r = time_cli(["import", "--db", url, str(export), "--instance", str(instance)], 1)
            rows = count_rows(url) - before
            shutil.rmtree(instance, ignore_errors=True)
        if "median_s" in r:
            r["rows"] = rows
            r["rows_per_s"] = round(rows / r["median_s"])
        out[backend] = r
        log(f"    import of {size} machines on {backend}: {r}")
    Path(empty).unlink(missing_ok=True)
    export.unlink(missing_ok=True)
    return out


# --- the host ----------------------------------------------------------------------------------


def host_info(pg_url: str | None) -> dict[str, str]:
    info = bench_reports_module().machine_info()
    info["sqlite"] = sqlite3.sqlite_version
    if pg_url:
        engine = make_engine(pg_url)
        with engine.connect() as conn:
            info["postgresql"] = conn.execute(text("SHOW server_version")).scalar_one()
        engine.dispose()
    from importlib.metadata import version

    import sqlalchemy
    import waitress  # noqa: F401

    info["sqlalchemy"] = sqlalchemy.__version__
    info["waitress"] = version("waitress")
    info["weasyprint"] = version("weasyprint")
    try:
        info["load"] = " ".join(Path("/proc/loadavg").read_text().split()[:3])
    except OSError:
        pass
    return info


# --- the report ----------------------------------------------------------------------------------


def verdicts(results: dict[str, Any]) -> list[tuple[str, str, str]]:
    """(goal, figure, met?) for every project goal that this run measured."""
    rows: list[tuple[str, str, str]] = []
    for backend, sizes in results.get("pages", {}).items():
        for size, r in sizes.items():
            n = int(size)
            for page in ("overview", "due board"):
                s = r["pages"].get(page, {})
                if n in TARGET_P95_MS and s.get("n"):
                    goal = f"{page} p95 ≤ {TARGET_P95_MS[n]:.0f} ms at {n} ({backend})"
                    rows.append((goal, f"{s['p95_ms']} ms", yes(s["p95_ms"] <= TARGET_P95_MS[n])))
            worst = max(
                (
                    s["statements_max"]
                    for page, s in r["pages"].items()
                    if s.get("n") and not page.startswith("first read")  # once a day
                ),
                default=0,
            )
            rows.append(
                (
                    f"statements per page ≤ {TARGET_STATEMENTS} at {n} ({backend})",
                    str(worst),
                    yes(worst <= TARGET_STATEMENTS),
                )
            )
            if n == 5000 and r.get("peak_rss_mb") is not None:
                rows.append(
                    (
                        f"server peak RSS ≤ {TARGET_RSS_MB} MB at 5000 ({backend})",
                        f"{r['peak_rss_mb']} MB",
                        yes(r["peak_rss_mb"] <= TARGET_RSS_MB),
                    )
                )
    for p in results.get("pdf", {}).values():
        if "ratio" in p:
            rows.append(
                (
                    f"{p['what']}: time ≤ {TARGET_PDF_RATIO}× the WeasyPrint floor",
                    f"{p['ratio']}×",
                    yes(p["ratio"] <= TARGET_PDF_RATIO),
                )
            )
    for size, imp in results.get("import", {}).items():
        for backend in ("sqlite", "postgresql"):
            r = imp.get(backend)
            if r and "rows_per_s" in r:
                rows.append(
                    (
                        f"import ≥ {TARGET_IMPORT_ROWS_S} rows/s ({size} machines, {backend})",
                        f"{r['rows_per_s']} rows/s",
                        yes(r["rows_per_s"] >= TARGET_IMPORT_ROWS_S),
                    )
                )
    return rows


def yes(ok: bool) -> str:
    return "met" if ok else "MISSED"


def markdown(results: dict[str, Any], baseline: dict[str, Any] | None) -> str:
    h = results["host"]
    cfg = results["config"]
    lines = [
        "# Benchmarks at plant and enterprise scale",
        "",
        f"Measured {h['date']} by `bench/run.py` (`make bench`) on {h['cpu']} "
        f"({h['cores']} cores, shared with other work; load average {h.get('load', '?')} at "
        f"the end), {h['memory']} RAM; Python {h['python']}, SQLite {h['sqlite']}, "
        f"PostgreSQL {h.get('postgresql', '— (not measured)')}, SQLAlchemy {h['sqlalchemy']}, "
        f"waitress {h['waitress']}, WeasyPrint {h['weasyprint']}. Raw figures: RESULTS.json.",
        "",
        "**How.** Each register is served by waitress (8 threads, as `riskreg serve`) in a "
        "subprocess on loopback; "
        f"{cfg['clients']} client threads, each logged in as an assessor, send at most "
        f"{cfg['requests']} requests per page. **Server time** is measured inside the server "
        "by a bench-only WSGI middleware (`X-Bench-Server-Ms`: from the request entering the "
        "app to `start_response`, the body rendered by then); the client's time on loopback "
        "is shown beside it. **Statements** are counted per request with an engine event "
        "(`X-Bench-Statements`); they include the login session's user lookup. The machine "
        "page is asked for 20 machines spread over the register (the range covers their kinds); "
        "a hazard save is the POST of the hazard form with its CSRF token (a new danger-zone "
        "text, so the audit trail records it), each on a different hazard, after the GET of "
        "the edit page; a shift check save is the POST of a machine's start-of-shift check "
        "with every item ticked (a write after which that machine's due items are worked out "
        "again), each on a different machine; the first read of the day is the overview "
        "asked for when the stored due items are of yesterday (the kinds that depend on the "
        "day are worked out again), the first read after a site-wide change the same when "
        "they are marked to be worked out in full (3 times each, one client). Percentiles "
        "over few requests on a shared machine are noisy: read "
        "them as a level, not a precise value. On PostgreSQL each register is loaded with "
        "COPY, then `VACUUM ANALYZE` (as autovacuum leaves a database in use).",
        "",
        "**Data.** `bench/generate.py`: one site, areas of 25 machines; per machine 4 tasks, "
        "20 hazards (every one rated, half with a residual rating, some re-rated), 3 "
        "safeguards with their measures, a safety function with its parts, a stopping-time "
        "measurement with distance checks, a start-of-shift checklist with a year of checks on "
        "every working day and shift, functional tests every ~90 days, a yearly inspection, "
        "weekly press inspections where required, failures with corrective actions; 60 % "
        "drafts, 25 % approved, 15 % approved and reopened by a modification. Fixed seed; "
        "dates count back from the anchor day.",
        "",
    ]
    for size, meta in results["registers"].items():
        r = meta["rows"]
        lines.append(
            f"- {size} machines (anchor {meta['anchor']}): {r.get('hazard', 0):,} hazards, "
            f"{r.get('risk_rating', 0):,} ratings, {r.get('safeguard', 0):,} safeguards, "
            f"{r.get('verification', 0):,} verifications, {r.get('shift_check', 0):,} "
            f"start-of-shift checks, {sum(r.values()):,} rows in all."
        )
    lines.append("")
    for backend, sizes in results.get("pages", {}).items():
        lines += [
            f"## Pages on {backend}",
            "",
            "| machines | page | n | server p50 (ms) | server p95 (ms) | client p50 (ms) "
            "| statements |",
            "|---:|---|---:|---:|---:|---:|---:|",
        ]
        for size, r in sizes.items():
            for page in PAGES:
                s = r["pages"].get(page)
                if not s or not s.get("n"):
                    lines.append(f"| {size} | {page} | 0 | — | — | — | — |")
                    continue
                st = (
                    str(s["statements_min"])
                    if s["statements_min"] == s["statements_max"]
                    else f"{s['statements_min']}–{s['statements_max']}"
                )
                lines.append(
                    f"| {size} | {page} | {s['n']} | {s['p50_ms']} | {s['p95_ms']} | "
                    f"{s['client_p50_ms']} | {st} |"
                )
        lines += [
            "",
            "| machines | `riskreg due` (s, median) | server peak RSS (MB, VmHWM) |",
            "|---:|---:|---:|",
        ]
        for size, r in sizes.items():
            due = r.get("due_cli", {})
            lines.append(
                f"| {size} | {due.get('median_s', due.get('error', '—'))} | "
                f"{r.get('peak_rss_mb', '—')} |"
            )
        lines.append("")
    if results.get("pdf"):
        lines += [
            "## PDF reports",
            "",
            "`time_report` of `bench/reports.py`: the whole report against WeasyPrint laying out "
            "the report's own HTML with the same options (medians, after one build not counted); "
            "on the 50-machine register. Both halves are mostly WeasyPrint, so on a shared "
            "machine the ratio moves by ±0.2 from run to run.",
            "",
            "| report | pages | seconds | s/page | floor (s) | ratio | runs |",
            "|---|---:|---:|---:|---:|---:|---:|",
        ]
        for p in results["pdf"].values():
            lines.append(
                f"| {p['what']} | {p['pages']} | {p['seconds']} | {p['seconds_per_page']} | "
                f"{p['floor_seconds']} | {p['ratio']} | {p['runs']} |"
            )
        lines.append("")
    if results.get("import"):
        lines += [
            "## Import",
            "",
            "`riskreg export` of the site to JSON, then `riskreg import` of that file into an "
            "empty register (the CLI's wall time, process start included); rows are those the "
            "import wrote, counted in the database afterwards.",
            "",
            "| machines | file (MB) | backend | rows | seconds | rows/s |",
            "|---:|---:|---|---:|---:|---:|",
        ]
        for size, imp in results["import"].items():
            for backend in ("sqlite", "postgresql"):
                r = imp.get(backend)
                if not r:
                    continue
                if "rows" not in r:
                    lines.append(
                        f"| {size} | {imp['file_mb']} | {backend} | — | — | {r.get('error')} |"
                    )
                    continue
                lines.append(
                    f"| {size} | {imp['file_mb']} | {backend} | {r['rows']:,} | "
                    f"{r['median_s']} | {r['rows_per_s']:,} |"
                )
        lines.append("")
    lines += ["## What was changed to meet the goals", ""] + [f"- {c}" for c in CHANGES]
    lines.append("")
    lines += ["## Goals", "", "| goal | measured | |", "|---|---:|---|"]
    for goal, figure, ok in verdicts(results):
        lines.append(f"| {goal} | {figure} | {ok} |")
    lines.append("")
    if baseline:
        lines += [
            "## Before and after",
            "",
            f"The same benchmark in an earlier run (`BENCH_BASELINE`, measured "
            f"{baseline['host']['date']}); server p95 in ms and statements, then → now.",
            "",
            "| backend | machines | page | p95 before → now (ms) | statements before → now |",
            "|---|---:|---|---:|---:|",
        ]
        for backend, sizes in baseline.get("pages", {}).items():
            for size, r in sizes.items():
                now = results.get("pages", {}).get(backend, {}).get(size, {}).get("pages", {})
                for page in PAGES:
                    b = r["pages"].get(page)
                    a = now.get(page)
                    if not b or not b.get("n"):
                        continue
                    after = f"{a['p95_ms']}" if a and a.get("n") else "—"
                    st_after = f"{a['statements_max']}" if a and a.get("n") else "—"
                    lines.append(
                        f"| {backend} | {size} | {page} | {b['p95_ms']} → {after} | "
                        f"{b['statements_max']} → {st_after} |"
                    )
        lines.append("")
    if results.get("notes"):
        lines += ["## Notes", ""] + [f"- {n}" for n in results["notes"]] + [""]
    return "\n".join(lines)


# --- the run -----------------------------------------------------------------------------------


def main() -> None:
    started = time.monotonic()
    OUT.mkdir(parents=True, exist_ok=True)
    sizes = [int(x) for x in env("BENCH_SIZES", "50,500,5000").split(",") if x.strip()]
    backends = [x.strip() for x in env("BENCH_BACKENDS", "sqlite,postgresql").split(",")]
    parts = {x.strip() for x in env("BENCH_PARTS", "pages,cli,pdf,import").split(",")}
    pg_url = _pg_admin_url()
    notes: list[str] = []
    if "postgresql" in backends and not pg_url:
        backends.remove("postgresql")
        notes.append("PostgreSQL left out: set BENCH_POSTGRES_URL to include it.")
        log(notes[-1])
    results: dict[str, Any] = {
        "config": {
            "sizes": sizes,
            "backends": backends,
            "clients": int(env("BENCH_CLIENTS", "3")),
            "requests": int(env("BENCH_REQUESTS", "40")),
        },
        "registers": {},
        "pages": {},
        "notes": notes,
    }
    registers = {}
    for size in sizes:
        path, meta = ensure_register(size)
        registers[size] = (path, meta)
        results["registers"][str(size)] = meta
    if parts & {"pages", "cli"}:
        for backend in backends:
            for size in sizes:
                path, meta = registers[size]
                label = f"{backend}-{size}"
                log(f"== {size} machines on {backend}")
                entry: dict[str, Any] = {}
                with database(backend, path, label) as url:
                    if "pages" in parts:
                        ids = sample_ids(url)
                        with serve(url, label) as server:
                            entry["pages"] = measure_pages(server, ids, meta, url)
                            entry["peak_rss_mb"] = server.peak_rss_mb()
                            log(f"    server peak RSS {entry['peak_rss_mb']} MB")
                    if "cli" in parts:
                        entry["due_cli"] = time_cli(["due", "--db", url], 3)
                        log(f"    riskreg due: {entry['due_cli']}")
                entry.setdefault("pages", {})
                results["pages"].setdefault(backend, {})[str(size)] = entry
    if "pdf" in parts:
        log("== PDF reports")
        small = min(registers)
        results["pdf"] = measure_pdf(registers[small][0])
    if "import" in parts:
        results["import"] = {}
        for size in [int(x) for x in env("BENCH_IMPORT_SIZES", "50").split(",") if x]:
            path = registers[size][0] if size in registers else ensure_register(size)[0]
            log(f"== import of {size} machines")
            results["import"][str(size)] = measure_import(path, size, backends)
    results["host"] = host_info(pg_url if "postgresql" in backends else None)
    results["seconds"] = round(time.monotonic() - started)
    baseline = None
    if os.environ.get("BENCH_BASELINE"):
        baseline = json.loads(Path(os.environ["BENCH_BASELINE"]).read_text())
    out = Path(env("BENCH_OUT", str(BENCH / "RESULTS.md")))
    out.with_suffix(".json").write_text(json.dumps(results, indent=2) + "\n")
    report = markdown(results, baseline)
    out.write_text(report)
    print(report)
    log(f"done in {results['seconds']} s; written to {out}")


if __name__ == "__main__":
    main()
