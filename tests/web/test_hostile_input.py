"""Odd input a phone, a script or a typo can send: always a 4xx naming the field, nothing lost.

Cases come from the limits of the formats involved: SQLite INTEGER is signed 64-bit
(sqlite.org/datatype3.html), JSON numbers are unbounded and its strings may hold lone
surrogates (RFC 8259 §6 and §8.2), Python's json stops at deep nesting with RecursionError.
"""

from __future__ import annotations

import pytest

from .helpers import WEDNESDAY, add_client, dump, set_home

HUGE = 10**30


@pytest.fixture
def stored(client):
    set_home(client)
    made = add_client(client, "Kept Safe", "47.4, 0.7")
    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": [made["id"]]})
    return made["id"]


def _raw(text: str) -> bytes:
    return text.encode("utf-8")


CASES = [
    # (method, path, JSON body or raw bytes, expected status)
    ("GET", f"/api/clients/{HUGE}", None, 404),
    ("PUT", f"/api/clients/{HUGE}", {"name": "x"}, 404),
    ("DELETE", f"/api/drives/{HUGE}", None, 404),
    ("PUT", "/api/clients/0", {"name": "x"}, 404),
    ("PUT", f"/api/days/{WEDNESDAY}/visits", {"client_ids": [HUGE]}, 422),
    ("PUT", f"/api/days/{WEDNESDAY}/visits", {"client_ids": [-1]}, 422),
    ("POST", f"/api/days/{WEDNESDAY}/visits", {"client_id": HUGE}, 422),
    ("POST", f"/api/days/{WEDNESDAY}/quote", {"client_id": HUGE}, 422),
    ("POST", f"/api/days/{WEDNESDAY}/replan", {"from": HUGE}, 422),
    ("PUT", "/api/drives", {"from": "home", "to": HUGE, "km": 1}, 422),
    ("PUT", "/api/drives", {"from": "home", "to": 1, "km": HUGE}, 422),
    ("PUT", "/api/settings", {"speed_kmh": HUGE}, 422),
    ("PUT", "/api/settings", {"detour_factor": HUGE}, 422),
    ("PUT", "/api/settings", {"break_min": HUGE}, 422),
    ("PUT", "/api/settings", {"home": {"lat": HUGE, "lon": 0}}, 422),
    ("PUT", "/api/settings", {"time_zone": "Europe/" + "x" * 5000}, 422),
    ("PUT", "/api/settings", {"time_zone": "Europe/Paris\x00"}, 422),
    ("POST", "/api/clients", {"name": "\ud800", "location": "47, 0", "visit_min": 10}, 422),
    ("POST", "/api/clients", {"name": "ok", "location": "47, 0", "visit_min": 1e308}, 422),
    ("POST", "/api/clients", {"name": "ok", "location": "4" * 5000, "visit_min": 10}, 422),
    ("POST", "/api/clients", {"name": "ok", "location": "47, 0", "visit_min": 10,
                              "windows": {"mon": "0" * 3000}}, 422),
    ("POST", "/api/parse-location", {"text": "\ud800, 0"}, 422),
    ("POST", "/api/parse-location", {"text": ["47", "0"]}, 422),
    ("PUT", "/api/settings", _raw("[" * 100_000), 400),
    ("PUT", "/api/settings", _raw('{"speed_kmh": Infinity}'), 422),
    ("PUT", "/api/settings", _raw('{"a": 1, "a": 2}'), 400),
    ("PUT", "/api/settings", b"\xff\xfe", 400),
    ("GET", "/api/clients?q=" + "x" * 500, None, 422),
    ("GET", "/api/days/9999-99-99", None, 422),
    ("GET", "/api/jobs/" + "x" * 300, None, 404),
]


@pytest.mark.parametrize(("method", "path", "body", "status"), CASES,
                         ids=[f"{m} {p[:40]} {str(b)[:30]}" for m, p, b, _ in CASES])
def test_hostile_input_is_refused_cleanly(client, conn, stored, method, path, body, status):
    before = dump(conn)
    if isinstance(body, bytes):
        response = client.open(path, method=method, data=body, content_type="application/json")
    else:
        response = client.open(path, method=method, json=body)
    assert response.status_code == status, response.json
    assert response.is_json
    if status in (400, 422):
        assert response.json["fields"], response.json
        assert all(f["field"] and f["message"] for f in response.json["fields"])
    assert dump(conn) == before
