"""Small helpers the web tests share: set home, add clients, wait for jobs, dump tables."""

from __future__ import annotations

import json
import time
import urllib.request

# Home and clients of the tests: invented places around Tours, France.
HOME = "47.36300, 0.73900"
HOME_LAT, HOME_LON = 47.363, 0.739
WEDNESDAY = "2026-03-04"  # a Wednesday (ISO 8601 calendar; checked in test_days)
SUNDAY = "2026-03-08"


def set_home(client, **extra) -> dict:
    body = {"home": HOME, "break_min": 0, **extra}
    response = client.put("/api/settings", json=body)
    assert response.status_code == 200, response.json
    return response.json


def add_client(client, name: str, location: str, *, visit_min: int = 30, windows=None,
               **extra) -> dict:
    body = {"name": name, "location": location, "visit_min": visit_min,
            "windows": windows or {}, **extra}
    response = client.post("/api/clients", json=body)
    assert response.status_code == 201, response.json
    return response.json


def wait_job(client, response, *, timeout_s: float = 60.0) -> dict:
    """Poll the job a 202 answer started until it ends; return its last state."""
    assert response.status_code == 202, response.json
    return wait_job_id(client, response.json["id"], timeout_s=timeout_s)


def wait_job_id(client, job_id: str, *, timeout_s: float = 60.0) -> dict:
    """Poll job ``job_id`` until it ends; return its last state."""
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        job = client.get(f"/api/jobs/{job_id}").json
        if job["state"] not in ("queued", "running"):
            return job
        time.sleep(0.05)
    raise AssertionError(f"job {job_id} still running after {timeout_s} s: it hangs")


def live_api(base: str, method: str, path: str, body=None):
    """One JSON request to a running server (``base`` like http://127.0.0.1:PORT)."""
    data = json.dumps(body).encode() if body is not None else None
    request = urllib.request.Request(base + path, method=method, data=data,
                                     headers={"Content-Type": "application/json"})
    with urllib.request.urlopen(request, timeout=10) as response:
        text = response.read()
    return json.loads(text) if text else None


def dump(conn) -> list[str]:
    """Every row of every table as SQL text, to compare before and after a request."""
    return list(conn.iterdump())
