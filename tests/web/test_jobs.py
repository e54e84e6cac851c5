"""The solve job registry on real threads: progress, cancel = discard, supersede, failures.

The jobs here wait on events the test controls, so each state is reached for certain;
common practice, no source.
"""

from __future__ import annotations

import threading
import time

import numpy as np

from solver.errors import InvalidInput
from solver.loop import solve_loop
from webapp.jobs import Job, JobRegistry


def _job(registry_db, *, key="day:x", compute=None, stored=None):
    def commit(conn, answer):
        conn.execute("SELECT 1")  # a real connection to the registry's database
        if stored is not None:
            stored.append(answer)
        return {"answer": answer}

    return Job(kind="day", key=key, time_limit_s=5.0, compute=compute or (lambda: 42),
               commit=commit)


def test_a_job_runs_off_the_calling_thread_and_reports_its_result(tmp_path):
    registry = JobRegistry(str(tmp_path / "jobs.sqlite"))
    seen = []
    job = registry.submit(_job(registry, compute=lambda: seen.append(
        threading.current_thread().name) or 7))
    assert registry.join(5)
    assert job.state == "done" and job.result == {"answer": 7}
    assert seen and seen[0] != threading.current_thread().name
    assert registry.get(job.id).as_json()["progress"] == 1.0


def test_cancel_discards_the_answer_when_it_comes(tmp_path):
    registry = JobRegistry(str(tmp_path / "jobs.sqlite"))
    release, started, stored = threading.Event(), threading.Event(), []

    def slow():
        started.set()
        release.wait(5)
        return "late"

    job = registry.submit(_job(registry, compute=slow, stored=stored))
    assert started.wait(5)
    assert registry.get(job.id).as_json()["state"] == "running"
    registry.cancel(job.id)
    release.set()
    assert registry.join(5)
    assert job.state == "cancelled" and job.result is None and stored == []


def test_a_newer_job_for_the_same_day_supersedes_the_older(tmp_path):
    registry = JobRegistry(str(tmp_path / "jobs.sqlite"))
    release, stored = threading.Event(), []
    old = registry.submit(_job(registry, compute=lambda: release.wait(5) and "old",
                               stored=stored))
    new = registry.submit(_job(registry, compute=lambda: "new", stored=stored))
    other = registry.submit(_job(registry, key="day:y", compute=lambda: "other", stored=stored))
    release.set()
    assert registry.join(5)
    assert (old.state, new.state, other.state) == ("cancelled", "done", "done")
    assert sorted(stored) == ["new", "other"]


def _long_loop():
    """A real 250-stop loop solve with a 60 s limit: it runs to that limit when left alone."""
    rng = np.random.default_rng(11)
    p = rng.uniform(0, 100, (250, 2))
    return solve_loop(np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1)), time_limit_s=60)


def test_cancelled_and_superseded_solves_free_their_workers_at_once(tmp_path):
    # Both workers busy with real long solves; one cancelled, the other superseded: both
    # stop within moments (5 s here, common practice, no source), and the newer job runs.
    registry = JobRegistry(str(tmp_path / "jobs.sqlite"))
    stored = []
    first = registry.submit(_job(registry, key="week:a", compute=_long_loop, stored=stored))
    second = registry.submit(_job(registry, key="week:b", compute=_long_loop, stored=stored))
    time.sleep(0.5)
    assert (first.state, second.state) == ("running", "running")
    started = time.monotonic()
    registry.cancel(first.id)
    newer = registry.submit(_job(registry, key="week:b", compute=lambda: "newer",
                                 stored=stored))
    assert registry.join(5), "a called-off solve kept its worker"
    assert time.monotonic() - started < 5
    assert (first.state, second.state, newer.state) == ("cancelled", "cancelled", "done")
    assert stored == ["newer"]


def test_a_failing_solve_becomes_the_jobs_error_with_its_field(tmp_path):
    registry = JobRegistry(str(tmp_path / "jobs.sqlite"))

    def bad():
        raise InvalidInput("visit lasts -1 min", field="visits[0].service_min", value=-1)

    job = registry.submit(_job(registry, compute=bad))
    assert registry.join(5)
    assert job.state == "failed"
    assert job.error["status"] == 422
    assert job.error["fields"][0]["field"] == "visits[0].service_min"


def test_an_unexpected_failure_reports_no_internals(tmp_path):
    registry = JobRegistry(str(tmp_path / "jobs.sqlite"))
    job = registry.submit(_job(registry, compute=lambda: 1 / 0))
    assert registry.join(5)
    assert job.state == "failed" and job.error["status"] == 500
    assert "ZeroDivision" not in str(job.error) and "Traceback" not in str(job.error)


def test_unknown_jobs_are_404(client):
    assert client.get("/api/jobs/nope").status_code == 404
    assert client.delete("/api/jobs/nope").status_code == 404
