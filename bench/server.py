"""The app under waitress for the benchmark, with a bench-only WSGI middleware.

    .venv/bin/python bench/server.py --db URL --port 8765 [--threads 8]

The middleware adds two response headers to every response:

- ``X-Bench-Server-Ms``: milliseconds from the request entering the app to the
  app calling ``start_response`` (the page is rendered by then: views return the
  whole body), measured with ``time.perf_counter`` inside the server process;
- ``X-Bench-Statements``: SQL statements the request ran, counted with a
  ``before_cursor_execute`` event on the app's engine, per thread (waitress runs
  each request on one thread of its pool).

It is only in this script: the app itself is built by the ordinary factory.
"""

from __future__ import annotations

import argparse
import sys
import threading
import time
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from sqlalchemy import event  # noqa: E402

_local = threading.local()


def _count(*_args: Any, **_kwargs: Any) -> None:
    _local.statements = getattr(_local, "statements", 0) + 1


class BenchMiddleware:
    """Times each request and counts its statements; reports both as headers."""

    def __init__(self, app: Callable[..., Iterable[bytes]]) -> None:
        self.app = app

    def __call__(self, environ: dict[str, Any], start_response: Callable[..., Any]) -> Any:
        _local.statements = 0
        started = time.perf_counter()

        def timed_start(status: str, headers: list[tuple[str, str]], exc_info: Any = None) -> Any:
            ms = (time.perf_counter() - started) * 1000
            headers = list(headers) + [
                ("X-Bench-Server-Ms", f"{ms:.2f}"),
                ("X-Bench-Statements", str(_local.statements)),
            ]
            return start_response(status, headers, exc_info)

        return self.app(environ, timed_start)


def make_app(db_url: str) -> Any:
    from riskreg.web import create_app

    app = create_app({"DATABASE_URL": db_url, "SECRET_KEY": "bench-secret-not-for-production"})
    event.listen(app.extensions["riskreg.engine"], "before_cursor_execute", _count)
    app.wsgi_app = BenchMiddleware(app.wsgi_app)  # type: ignore[method-assign]
    return app


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--db", required=True)
    ap.add_argument("--host", default="127.0.0.1")
    ap.add_argument("--port", type=int, required=True)
    ap.add_argument("--threads", type=int, default=8)
    args = ap.parse_args()
    from riskreg.web import serve  # as `riskreg serve` does

    app = make_app(args.db)
    print(f"serving on {args.host}:{args.port}", flush=True)
    serve(app, host=args.host, port=args.port, threads=args.threads, _quiet=True)


if __name__ == "__main__":
    main()
