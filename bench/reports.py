"""Benchmark of the PDF reports (a script, not a test).

    .venv/bin/python bench/reports.py [--runs N] [--sizes 50,500] [--out bench/REPORTS.md]

Builds the demo plant, then synthetic sites of 50 and 500 machines by bulk-copying
the demo's machines (every table that hangs off a machine, with new ids), and
measures:

- the demo's largest machine report: seconds, pages, seconds per page;
- the site report of the 50-machine site;
- for both, the floor: WeasyPrint laying out the very HTML the report rendered
  (``HTML(string=...).write_pdf()`` with the same PDF options), and the ratio of
  the whole report's time to it (medians over ``--runs`` runs);
- the peak memory (``ru_maxrss``) of one site document per size, each in its own
  process, and of the volumes (summary plus one per area) for the large site.

Writes a Markdown summary (with this machine's CPU, memory and the date).
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import platform
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from sqlalchemy import Engine, Table, func, insert, select  # noqa: E402
from sqlalchemy.orm import Session  # noqa: E402

from riskreg import migrate  # noqa: E402
from riskreg.db import make_engine, session_factory  # noqa: E402
from riskreg.model import Base, Machine, Site  # noqa: E402
from riskreg.services import audit  # noqa: E402

WHEN = dt.datetime(2026, 12, 1, 9, 0, tzinfo=dt.UTC)
AREA_SIZE = 40  # machines per area of a synthetic site
SHARED = {"site", "area", "user_account", "component", "evidence_file", "instrument", "audit_entry"}


# --- a synthetic site by bulk copy ---------------------------------------------------------


def build_demo(path: Path) -> None:
    from seed_demo import build

    engine = make_engine(f"sqlite:///{path}")
    migrate.upgrade(engine)
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as session:
        build.build(session)
    engine.dispose()


def _owned_tables() -> list[Table]:
    """Tables whose rows belong to one machine (through any chain of foreign keys)."""
    owned = {"machine"}
    out = []
    for t in Base.metadata.sorted_tables:
        if t.name in SHARED or t.name == "machine":
            continue
        if any(fk.column.table.name in owned for fk in t.foreign_keys):
            owned.add(t.name)
            out.append(t)
    return out


def add_synthetic_site(engine: Engine, machines: int) -> int:
    """A new site with ``machines`` copies of the demo's machines, in areas of
    AREA_SIZE; returns its id. Copies run as bulk inserts, table by table."""
    tables = _owned_tables()
    mt = Base.metadata.tables["machine"]
    with engine.begin() as conn:
        demo_site = conn.execute(select(Base.metadata.tables["site"]).limit(1)).mappings().one()
        site_row = dict(demo_site)
        site_row.pop("id")
        site_row["name"] = f"Synthetic works, {machines} machines"
        site_id = conn.execute(
            insert(Base.metadata.tables["site"]).values(site_row)
        ).inserted_primary_key[0]
        n_areas = (machines + AREA_SIZE - 1) // AREA_SIZE
        area_ids = []
        for i in range(n_areas):
            area_ids.append(
                conn.execute(
                    insert(Base.metadata.tables["area"]).values(
                        site_id=site_id, name=f"Line {i + 1:02d}"
                    )
                ).inserted_primary_key[0]
            )
        templates = [
            dict(r)
            for r in conn.execute(
                select(mt).where(mt.c.site_id == demo_site["id"]).order_by(mt.c.id)
            ).mappings()
        ]
        next_id: dict[str, int] = {}

        def new_id(t: Table) -> int:
            if t.name not in next_id:
                next_id[t.name] = (conn.execute(select(func.max(t.c.id))).scalar() or 0) + 1
            v = next_id[t.name]
            next_id[t.name] = v + 1
            return v

        maps: dict[str, dict[int, list[int]]] = {"machine": {}}
        copies: list[tuple[int, dict[str, Any]]] = []
        rows = []
        for k in range(machines):
            tpl = templates[k % len(templates)]
            row = dict(tpl)
            row["id"] = new_id(mt)
            row["site_id"] = site_id
            row["area_id"] = area_ids[k // AREA_SIZE]
            row["asset_tag"] = f"{tpl['asset_tag']}-{k + 1:04d}"
            rows.append(row)
            copies.append((tpl["id"], row))
        conn.execute(insert(mt), rows)
        # per template id, the new ids made from it, for every owned table
        for tpl_id, row in copies:
            maps["machine"].setdefault(tpl_id, []).append(row["id"])
        for t in tables:
            fks = [
                (fk.parent.name, fk.column.table.name)
                for fk in t.foreign_keys
                if fk.column.table.name in maps
            ]
            src = [dict(r) for r in conn.execute(select(t)).mappings()]
            maps.setdefault(t.name, {})
            out = []
            for r in src:
                owners = [(col, parent) for col, parent in fks if r[col] is not None]
                if not owners or any(r[col] not in maps[parent] for col, parent in owners):
                    continue
                # the copy number i of this row follows copy i of its owners
                n = len(maps[owners[0][1]][r[owners[0][0]]])
                for i in range(n):
                    new = dict(r)
                    for col, parent in owners:
                        new[col] = maps[parent][r[col]][i]
                    if "id" in t.c:
                        new["id"] = new_id(t)
                        maps[t.name].setdefault(r["id"], []).append(new["id"])
                    out.append(new)
            if out:
                for i in range(0, len(out), 5000):
                    conn.execute(insert(t), out[i : i + 5000])
    return int(site_id)


# --- timing -----------------------------------------------------------------------------


def _median(xs: list[float]) -> float:
    return statistics.median(xs)


def time_report(build: Any, runs: int) -> dict[str, Any]:
    """Median seconds of the whole report and of the floor (WeasyPrint on its HTML)."""
    from weasyprint import HTML

    from riskreg.reports import render

    whole, floor = [], []
    report = None
    for _ in range(runs):
        t = time.perf_counter()
        report = build()
        whole.append(time.perf_counter() - t)
        options = render.pdf_options(
            report.report_id, report.generated_at, report.record_json, "benchmark"
        )
        t = time.perf_counter()
        HTML(string=report.html, base_url=str(render.STATIC) + "/").write_pdf(**options)
        floor.append(time.perf_counter() - t)
    assert report is not None
    # The report's own work: the same build with WeasyPrint's part taken out.
    own = []
    real = render.write_pdf
    render.write_pdf = lambda html, **kw: (b"", 1)
    try:
        for _ in range(runs):
            t = time.perf_counter()
            build()
            own.append(time.perf_counter() - t)
    finally:
        render.write_pdf = real
    w, f = _median(whole), _median(floor)
    return {
        "pages": report.pages,
        "seconds": round(w, 3),
        "seconds_per_page": round(w / report.pages, 4),
        "floor_seconds": round(f, 3),
        "ratio": round(w / f, 3),
        "own_seconds": round(_median(own), 3),
        "ratio_from_parts": round((f + _median(own)) / f, 3),
        "runs": runs,
        "all_seconds": [round(x, 3) for x in whole],
        "all_floor_seconds": [round(x, 3) for x in floor],
        "bytes": len(report.pdf),
    }


def child(db: Path, site_id: int, mode: str) -> None:
    """Run in a fresh process: one site document (or the volumes), then report peak RSS."""
    from riskreg import reports

    engine = make_engine(f"sqlite:///{db}")
    with Session(engine) as session:
        site = session.get(Site, site_id)
        assert site is not None
        t = time.perf_counter()
        if mode == "single":
            made = [reports.build_site_report(session, site, generated_at=WHEN)]
        else:
            made = reports.build_site_volumes(
                session, site, generated_at=WHEN, max_machines=AREA_SIZE
            )
        seconds = time.perf_counter() - t
    rss_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(
        json.dumps(
            {
                "mode": mode,
                "seconds": round(seconds, 2),
                "documents": len(made),
                "pages": [r.pages for r in made],
                "largest_pages": max(r.pages for r in made),
                "peak_rss_mib": round(rss_kib / 1024, 1),
                "bytes": sum(len(r.pdf) for r in made),
            }
        )
    )


def run_child(db: Path, site_id: int, mode: str) -> dict[str, Any]:
    proc = subprocess.run(
        [sys.executable, __file__, "--child", mode, "--db", str(db), "--site-id", str(site_id)],
        capture_output=True,
        text=True,
        check=False,
    )
    if proc.returncode != 0:
        return {"mode": mode, "error": proc.stderr.strip().splitlines()[-1:] or ["failed"]}
    result: dict[str, Any] = json.loads(proc.stdout.strip().splitlines()[-1])
    return result


def machine_info() -> dict[str, str]:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = ""
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal"):
                mem = f"{int(line.split()[1]) / 1048576:.1f} GiB"
    except OSError:
        pass
    return {
        "cpu": cpu,
        "cores": str(os.cpu_count()),
        "memory": mem,
        "python": platform.python_version(),
        "date": dt.date.today().isoformat(),
    }


def markdown(r: dict[str, Any]) -> str:
    h = r["host"]
    m = r["machine"]
    lines = [
        "# Report benchmark",
        "",
        f"Measured {h['date']} on {h['cpu']} ({h['cores']} cores, shared), {h['memory']} RAM, "
        f"Python {h['python']}, by `bench/reports.py`; the raw numbers are in REPORTS.json.",
        "Times are medians; the floor is WeasyPrint laying out the report's own HTML with the",
        "same PDF options (`HTML(string=html).write_pdf(...)`), so the ratio is the cost of",
        'gathering the record and rendering the templates on top of the layout. "Own work" is',
        "the same build with WeasyPrint's part taken out (record, templates, JSON, hash).",
        "",
        "| report | pages | seconds | s/page | floor (s) | ratio | own work (s) | "
        "(floor + own) / floor | runs |",
        "|---|---:|---:|---:|---:|---:|---:|---:|---:|",
        f"| machine {m['asset_tag']} (demo's largest) | {m['pages']} | {m['seconds']} | "
        f"{m['seconds_per_page']} | {m['floor_seconds']} | {m['ratio']} | "
        f"{m.get('own_seconds', '—')} | {m.get('ratio_from_parts', '—')} | {m['runs']} |",
    ]
    for n, e in r["sites"].items():
        if "timing" in e:
            t = e["timing"]
            lines.append(
                f"| site, {n} machines | {t['pages']} | {t['seconds']} | {t['seconds_per_page']} "
                f"| {t['floor_seconds']} | {t['ratio']} | {t.get('own_seconds', '—')} | "
                f"{t.get('ratio_from_parts', '—')} | {t['runs']} |"
            )
    lines += [
        "",
        "Peak memory (ru_maxrss of a fresh process that builds the report):",
        "",
        "| site | form | documents | pages (largest) | seconds | peak RSS (MiB) |",
        "|---|---|---:|---:|---:|---:|",
    ]
    for n, e in r["sites"].items():
        for key in ("single", "volumes"):
            x = e.get(key)
            if not x:
                continue
            if "error" in x:
                lines.append(f"| {n} machines | {key} | — | — | — | failed: {x['error']} |")
                continue
            lines.append(
                f"| {n} machines | {'one document' if key == 'single' else 'volumes'} | "
                f"{x['documents']} | {sum(x['pages'])} ({x['largest_pages']}) | {x['seconds']} "
                f"| {x['peak_rss_mib']} |"
            )
    return "\n".join(lines) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--site-runs", type=int, default=3)
    ap.add_argument("--sizes", default="50,500")
    ap.add_argument(
        "--memory-sizes",
        default="100",
        help="more site sizes measured for peak memory only (one document each)",
    )
    ap.add_argument("--out", default=str(ROOT / "bench" / "REPORTS.md"))
    ap.add_argument("--child", choices=["single", "volumes"])
    ap.add_argument("--db")
    ap.add_argument("--site-id", type=int)
    args = ap.parse_args()
    if args.child:
        child(Path(args.db), args.site_id, args.child)
        return

    from riskreg import reports

    work = Path(tempfile.mkdtemp(prefix="riskreg-bench-"))
    try:
        demo = work / "demo.sqlite"
        t = time.perf_counter()
        build_demo(demo)
        print(f"demo built in {time.perf_counter() - t:.1f} s", flush=True)
        engine = make_engine(f"sqlite:///{demo}")
        results: dict[str, Any] = {"machine": {}, "sites": {}}
        with Session(engine) as session:
            machines = list(session.scalars(select(Machine).order_by(Machine.id)))
            pages = {}
            for m in machines:
                pages[m.asset_tag] = reports.build_machine_report(
                    session, m, generated_at=WHEN
                ).pages
            largest = max(pages, key=lambda k: pages[k])
            m = next(x for x in machines if x.asset_tag == largest)
            print(f"largest machine report: {largest}, {pages[largest]} pages", flush=True)
            results["machine"] = {
                "asset_tag": largest,
                **time_report(
                    lambda: reports.build_machine_report(session, m, generated_at=WHEN), args.runs
                ),
            }
            print(json.dumps(results["machine"]), flush=True)
        sizes = [int(x) for x in args.sizes.split(",") if x]
        for n in sizes:
            db = work / f"site{n}.sqlite"
            shutil.copy(demo, db)
            e = make_engine(f"sqlite:///{db}")
            t = time.perf_counter()
            sid = add_synthetic_site(e, n)
            copy_s = time.perf_counter() - t
            e.dispose()
            entry: dict[str, Any] = {"copy_seconds": round(copy_s, 2)}
            print(f"site of {n} machines copied in {copy_s:.1f} s", flush=True)
            if n <= 100:
                e = make_engine(f"sqlite:///{db}")
                with Session(e) as session:
                    site = session.get(Site, sid)
                    entry["timing"] = time_report(
                        lambda site=site: reports.build_site_report(
                            session, site, generated_at=WHEN
                        ),
                        args.site_runs,
                    )
                e.dispose()
                print(json.dumps(entry["timing"]), flush=True)
            entry["single"] = run_child(db, sid, "single")
            print(json.dumps(entry["single"]), flush=True)
            if n > 100:
                entry["volumes"] = run_child(db, sid, "volumes")
                print(json.dumps(entry["volumes"]), flush=True)
            results["sites"][str(n)] = entry
        for n in [int(x) for x in args.memory_sizes.split(",") if x]:
            db = work / f"site{n}.sqlite"
            shutil.copy(demo, db)
            e = make_engine(f"sqlite:///{db}")
            sid = add_synthetic_site(e, n)
            e.dispose()
            results["sites"][str(n)] = {"single": run_child(db, sid, "single")}
            print(json.dumps(results["sites"][str(n)]["single"]), flush=True)
        results["sites"] = dict(sorted(results["sites"].items(), key=lambda kv: int(kv[0])))
        results["host"] = machine_info()
        Path(args.out).with_suffix(".json").write_text(json.dumps(results, indent=2) + "\n")
        Path(args.out).write_text(markdown(results))
        print(markdown(results))
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
