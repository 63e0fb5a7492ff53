"""Long reports rendered in the background, to files, for the web to offer when ready.

A site report can take minutes; no request should wait for it. A job renders the
report (one document or volumes) in a thread, one job at a time, into its own
folder; ``status.json`` beside the files says how far it is, so any request can
look. A job that was running when the process stopped is reported as
interrupted. Finished jobs are removed after a day.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import re
import secrets
import shutil
import tempfile
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from sqlalchemy.orm import Session

from riskreg.model import Site

KEEP_SECONDS = 24 * 3600
_ID = re.compile(r"^[A-Za-z0-9_-]{8,64}$")


@dataclass
class JobFile:
    name: str
    filename: str
    pages: int
    size: int


@dataclass
class JobStatus:
    job_id: str
    site_id: int
    site_name: str
    state: str  # queued, running, done, failed, interrupted
    stage: str = ""
    done: int = 0
    total: int | None = None
    message: str = ""
    started_at: str = ""
    finished_at: str = ""
    files: list[JobFile] = field(default_factory=list)

    @property
    def finished(self) -> bool:
        return self.state in ("done", "failed", "interrupted")


def _now() -> str:
    return dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


class SiteReportJobs:
    """Background site reports under ``folder`` (one sub-folder per job)."""

    def __init__(self, folder: Path, sessions: Callable[[], Session]) -> None:
        self.folder = Path(folder)
        self.sessions = sessions
        self._lock = threading.Lock()
        self._one_at_a_time = threading.Lock()
        self._active: set[str] = set()

    # --- state on disk ---------------------------------------------------------------

    def _dir(self, job_id: str) -> Path:
        if not _ID.match(job_id):
            raise KeyError(job_id)
        return self.folder / job_id

    def _save(self, st: JobStatus) -> None:
        d = self._dir(st.job_id)
        d.mkdir(parents=True, exist_ok=True)
        data = json.dumps(
            {**st.__dict__, "files": [f.__dict__ for f in st.files]}, ensure_ascii=False
        )
        fd, tmp = tempfile.mkstemp(dir=d, prefix=".status.", suffix=".part")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(data)
        os.replace(tmp, d / "status.json")

    def status(self, job_id: str) -> JobStatus | None:
        try:
            path = self._dir(job_id) / "status.json"
        except KeyError:
            return None
        try:
            raw = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        files = [JobFile(**f) for f in raw.pop("files", [])]
        st = JobStatus(**raw, files=files)
        if not st.finished and job_id not in self._active:
            st.state = "interrupted"
            st.message = "The report stopped before it was finished (the server restarted)."
        return st

    def file_path(self, job_id: str, index: int) -> tuple[Path, JobFile] | None:
        st = self.status(job_id)
        if st is None or st.state != "done" or not 0 <= index < len(st.files):
            return None
        f = st.files[index]
        return self._dir(job_id) / f.name, f

    # --- starting and running ---------------------------------------------------------

    def running_for(self, site_id: int) -> str | None:
        with self._lock:
            for job_id in sorted(self._active):
                st = self.status(job_id)
                if st is not None and st.site_id == site_id and not st.finished:
                    return job_id
        return None

    def start(self, site: Site, *, base_url: str | None = None) -> str:
        """Start a report of ``site`` (or return the one already under way)."""
        existing = self.running_for(site.id)
        if existing:
            return existing
        self._clean()
        job_id = secrets.token_urlsafe(12)
        st = JobStatus(job_id, site.id, site.name, "queued", started_at=_now())
        with self._lock:
            self._active.add(job_id)
        self._save(st)
        thread = threading.Thread(
            target=self._run,
            args=(st, base_url),
            name=f"site-report-{job_id}",
            daemon=True,
        )
        thread.start()
        return job_id

    def _run(self, st: JobStatus, base_url: str | None) -> None:
        from riskreg import reports

        last = [0.0]

        def progress(stage: str, done: int, total: int | None) -> None:
            st.stage, st.done, st.total = stage, done, total
            if time.monotonic() - last[0] > 0.5:
                last[0] = time.monotonic()
                self._save(st)

        try:
            with self._one_at_a_time:
                st.state = "running"
                self._save(st)
                with self.sessions() as session:
                    site = session.get(Site, st.site_id)
                    if site is None:
                        raise LookupError(f"No site number {st.site_id}.")
                    made = reports.build_site(session, site, base_url=base_url, progress=progress)
                d = self._dir(st.job_id)
                for i, r in enumerate(made):
                    name = f"{i:02d}.pdf"
                    (d / name).write_bytes(r.pdf)
                    st.files.append(JobFile(name, r.filename, r.pages, len(r.pdf)))
            st.state = "done"
            st.message = ""
        except Exception as exc:  # the job reports any failure on its status page
            st.state = "failed"
            st.message = " ".join(str(exc).split())[:500] or exc.__class__.__name__
        finally:
            st.finished_at = _now()
            self._save(st)
            with self._lock:
                self._active.discard(st.job_id)

    def _clean(self) -> None:
        if not self.folder.is_dir():
            return
        cutoff = time.time() - KEEP_SECONDS
        for d in self.folder.iterdir():
            if not d.is_dir() or d.name in self._active or not _ID.match(d.name):
                continue
            try:
                if (d / "status.json").stat().st_mtime < cutoff:
                    shutil.rmtree(d, ignore_errors=True)
            except OSError:
                continue
