"""Solves off the request thread: POST starts a job, GET polls it, DELETE stops waiting for it.

The solver's own time limit bounds the work; cancelling calls the solve off (it stops within
a fraction of a second, see :mod:`solver.stopping`) and discards whatever it returns.
"""

from __future__ import annotations

import logging
import threading
import time
import uuid
from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass, field

from flask import current_app
from werkzeug.exceptions import TooManyRequests

from solver.stopping import stop_when

from .db import connect
from .errors import NotFound, error_body

__all__ = ["Job", "JobRegistry", "init_app", "registry"]

log = logging.getLogger(__name__)
MAX_KEPT = 200  # finished jobs remembered for late polls
WORKERS = 2  # one per core: each solve is single-threaded
# Solves running or waiting for a worker, superseded ones included (they stop within moments).
# Beyond this a new one would wait many time limits; it is refused with 429 (RFC 6585 §4).
MAX_WAITING = 16


@dataclass
class Job:
    """One solve: ``compute`` runs the solver; ``commit`` stores the answer, returns the reply."""

    kind: str
    key: str
    time_limit_s: float
    compute: Callable[[], object]
    commit: Callable[[object, object], dict]
    id: str = field(default_factory=lambda: uuid.uuid4().hex)
    state: str = "queued"
    created: float = field(default_factory=time.monotonic)
    started: float | None = None
    finished: float | None = None
    result: dict | None = None
    error: dict | None = None

    def as_json(self) -> dict:
        now = time.monotonic()
        elapsed = ((self.finished or now) - self.started) if self.started else 0.0
        progress = 1.0 if self.finished else min(0.99, elapsed / self.time_limit_s)
        return {"id": self.id, "kind": self.kind, "key": self.key, "state": self.state,
                "elapsed_s": round(elapsed, 2), "time_limit_s": self.time_limit_s,
                "progress": round(progress, 3), "result": self.result, "error": self.error}


class JobRegistry:
    """Jobs of one app, run by at most WORKERS threads at once."""

    def __init__(self, database: str):
        self.database = database
        self.jobs: OrderedDict[str, Job] = OrderedDict()
        self.lock = threading.Lock()
        self.slots = threading.Semaphore(WORKERS)
        self.threads: list[threading.Thread] = []

    def submit(self, job: Job) -> Job:
        """Start ``job``; an older unfinished job with the same key is cancelled (superseded).

        Refused with 429, changing nothing, while MAX_WAITING solves are running or waiting.
        """
        with self.lock:
            self.threads = [t for t in self.threads if t.is_alive()]
            if len(self.threads) >= MAX_WAITING:
                raise TooManyRequests(
                    f"{len(self.threads)} solves are running or waiting for the laptop; try "
                    "again when one has finished", retry_after=max(1, round(job.time_limit_s)))
            for other in self.jobs.values():
                if other.key == job.key and other.state in ("queued", "running"):
                    other.state = "cancelled"
            self.jobs[job.id] = job
            while len(self.jobs) > MAX_KEPT:
                self.jobs.popitem(last=False)
            thread = threading.Thread(target=self._run, args=(job,), daemon=True,
                                      name=f"rondo-{job.kind}-{job.id[:6]}")
            self.threads.append(thread)
        thread.start()
        return job

    def get(self, job_id: str) -> Job:
        with self.lock:
            job = self.jobs.get(job_id)
        if job is None:
            raise NotFound("job", job_id)
        return job

    def cancel(self, job_id: str) -> Job:
        job = self.get(job_id)
        with self.lock:
            if job.state in ("queued", "running"):
                job.state = "cancelled"
                job.finished = time.monotonic()
        return job

    def active(self, key: str) -> Job | None:
        with self.lock:
            for job in reversed(self.jobs.values()):
                if job.key == key and job.state in ("queued", "running"):
                    return job
        return None

    def join(self, timeout_s: float) -> bool:
        """Wait for every thread to finish; True if all did (used at shutdown and by tests)."""
        deadline = time.monotonic() + timeout_s
        for thread in list(self.threads):
            thread.join(max(0.0, deadline - time.monotonic()))
        return not any(t.is_alive() for t in self.threads)

    def _run(self, job: Job) -> None:
        with self.slots:
            with self.lock:
                if job.state == "cancelled":
                    return
                job.state, job.started = "running", time.monotonic()
            try:
                # A cancelled or superseded solve winds down as at its time limit and frees
                # its worker at once, instead of holding it until that limit.
                with stop_when(lambda: job.state == "cancelled"):
                    answer = job.compute()
            except Exception as exc:  # noqa: BLE001 - every failure becomes the job's answer
                self._fail(job, exc)
                return
            # Under the lock, so a cancel either comes first (nothing stored) or not at all.
            with self.lock:
                if job.state == "cancelled":
                    return
                try:
                    conn = connect(self.database)
                    try:
                        job.result = job.commit(conn, answer)
                    finally:
                        conn.close()
                except Exception as exc:  # noqa: BLE001
                    self._record_failure(job, exc)
                    return
                job.state, job.finished = "done", time.monotonic()

    def _fail(self, job: Job, exc: Exception) -> None:
        with self.lock:
            if job.state != "cancelled":
                self._record_failure(job, exc)

    @staticmethod
    def _record_failure(job: Job, exc: Exception) -> None:
        body, status = error_body(exc)
        if status >= 500:
            log.error("job %s failed", job.id, exc_info=exc)
        job.state, job.error = "failed", {**body, "status": status}
        job.finished = time.monotonic()


def registry() -> JobRegistry:
    return current_app.extensions["rondo_jobs"]


def init_app(app) -> None:
    app.extensions["rondo_jobs"] = JobRegistry(app.config["DATABASE"])
