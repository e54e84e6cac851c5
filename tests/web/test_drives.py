"""Measured drives: entered one way or both ways, corrected, forgotten, and checked.

The validation table is common practice, no source.
"""

from __future__ import annotations

import pytest

from .helpers import add_client, dump, set_home


@pytest.fixture
def places(client):
    set_home(client)
    return (add_client(client, "Mill", "47.4, 0.7")["id"],
            add_client(client, "Ferry Stop", "47.5, 0.9")["id"])


def test_both_ways_stores_two_directions(client, places):
    mill, ferry = places
    saved = client.put("/api/drives", json={"from": mill, "to": ferry, "km": 12.5,
                                            "minutes": 25, "both_ways": True}).json
    assert [(d["from"], d["to"]) for d in saved] == [(mill, ferry), (ferry, mill)]
    assert {d["from_name"] for d in saved} == {"Mill", "Ferry Stop"}
    assert len(client.get("/api/drives").json) == 2


def test_a_correction_replaces_the_earlier_entry(client, places):
    mill, _ = places
    client.put("/api/drives", json={"from": "home", "to": mill, "km": 10})
    client.put("/api/drives", json={"from": "home", "to": mill, "minutes": 14})
    (only,) = client.get("/api/drives").json
    assert (only["from"], only["to"], only["km"], only["minutes"]) == ("home", mill, None, 14.0)
    assert only["from_name"] == "Home"


def test_forget_a_drive(client, places):
    mill, _ = places
    (entry,) = client.put("/api/drives", json={"from": mill, "to": "home", "km": 3}).json
    assert client.delete(f"/api/drives/{entry['id']}").status_code == 204
    assert client.get("/api/drives").json == []
    assert client.delete(f"/api/drives/{entry['id']}").status_code == 404


@pytest.mark.parametrize(("body", "status", "field", "message"), [
    ({"from": "home", "to": "home", "km": 1}, 422, "to", "the same place"),
    ({"from": "home", "to": "Mill", "km": 1}, 422, "to", "\"home\" or a client id"),
    ({"from": "home", "to": 999, "km": 1}, 404, "to", "does not exist"),
    ({"from": "home", "to": "MILL"}, 422, "km", "neither km nor minutes"),
    ({"from": "home", "to": "MILL", "km": -2}, 422, "km", "0..5000 km"),
    ({"from": "home", "to": "MILL", "minutes": float("inf")}, 422, "minutes", "0..1440 min"),
    ({"from": "home", "to": "MILL", "minutes": 1441}, 422, "minutes", "0..1440 min"),
    ({"from": "home", "to": "MILL", "km": "5"}, 422, "km", "km is text '5'"),
    ({"from": "home", "to": "MILL", "km": 1, "both_ways": 1}, 422, "both_ways", "true or false"),
    ({"from": "home", "to": "MILL", "km": 1, "via": "x"}, 400, "via", "unknown field"),
])
def test_bad_drives_are_refused(client, conn, places, body, status, field, message):
    mill, _ = places
    body = {k: (mill if v == "MILL" else v) for k, v in body.items()}
    before = dump(conn)
    response = client.put("/api/drives", json=body)
    assert response.status_code == status, response.json
    fields = {f["field"]: f["message"] for f in response.json["fields"]}
    assert field in fields and message in fields[field], response.json
    assert dump(conn) == before
