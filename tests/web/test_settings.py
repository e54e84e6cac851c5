"""/api/settings: read, change, and refuse bad values naming the field, storing nothing."""

from __future__ import annotations

import zoneinfo

import pytest

from .helpers import HOME, dump


def test_defaults_before_anything_is_entered(client):
    s = client.get("/api/settings").json
    assert s["home"] is None
    assert (s["day_start"], s["day_end"]) == ("08:00", "18:00")
    assert s["distance_mode"] == "geodesic" and s["objective"] == "km"
    assert s["is_demo"] is False


def test_change_some_fields_and_keep_the_rest(client):
    before = client.get("/api/settings").json
    after = client.put("/api/settings", json={"home": HOME, "day_end": "17:30",
                                              "time_zone": "Europe/Paris"}).json
    assert after["home"]["lat"] == pytest.approx(47.363) and after["home"]["lon"] == 0.739
    assert after["home"]["geo_uri"] == "geo:47.363,0.739"  # RFC 5870 §3.3 form
    assert after["day_end"] == "17:30" and after["time_zone"] == "Europe/Paris"
    assert after["day_start"] == before["day_start"]
    assert client.get("/api/settings").json == after


def test_home_given_as_numbers_and_in_degrees_minutes_seconds(client):
    # 47° 21' 46.8" = 47 + 21/60 + 46.8/3600 = 47.363 (sexagesimal degrees, common practice)
    s = client.put("/api/settings", json={"home": "47°21'46.8\"N 0°44'20.4\"E"}).json
    assert s["home"]["lat"] == pytest.approx(47.363, abs=1e-9)
    assert s["home"]["lon"] == pytest.approx(0.739, abs=1e-9)
    s = client.put("/api/settings", json={"home": {"lat": 43.5, "lon": -1.25}}).json
    assert (s["home"]["lat"], s["home"]["lon"]) == (43.5, -1.25)


def test_every_iana_zone_name_is_accepted(client):
    # The IANA time zone database as shipped by the tzdata package is the reference.
    for name in ("America/Argentina/Buenos_Aires", "Asia/Kolkata", "UTC"):
        assert name in zoneinfo.available_timezones()
        assert client.put("/api/settings", json={"time_zone": name}).status_code == 200


BAD_SETTINGS = [
    # (body, status, field, part of the message); common practice, no source
    ({"home": "91, 0"}, 422, "home", "latitude 91"),
    ({"home": "41,40338, 2,17403"}, 422, "home", "decimal commas"),
    ({"home": {"lat": 1}}, 422, "home", "must be text"),
    ({"home": 47}, 422, "home", "must be text"),
    ({"day_start": "8h"}, 422, "day_start", "not a clock time"),
    ({"day_end": "24:30"}, 422, "day_end", "not a time of day"),
    ({"day_start": "18:00", "day_end": "09:00"}, 422, "day_end", "not after it starts"),
    ({"break_min": 45, "break_from": "12:00", "break_until": "12:30"}, 422, "break_until",
     "does not fit"),
    ({"break_min": -5}, 422, "break_min", "0..480"),
    ({"break_min": 12.5}, 422, "break_min", "whole number"),
    ({"speed_kmh": 0}, 422, "speed_kmh", "more than 0"),
    ({"speed_kmh": "fast"}, 422, "speed_kmh", "speed_kmh"),
    ({"speed_kmh": True}, 422, "speed_kmh", "speed_kmh"),
    ({"detour_factor": 0.8}, 422, "detour_factor", "1..3"),
    ({"distance_mode": "manhattan"}, 422, "distance_mode", "geodesic, great-circle"),
    ({"objective": "cheapest"}, 422, "objective", "km, return"),
    ({"time_zone": "Mars/Olympus"}, 422, "time_zone", "not a known IANA time zone"),
    ({"time_zone": "../../etc/passwd"}, 422, "time_zone", "not a known IANA time zone"),
    ({"time_zone": ""}, 422, "time_zone", "IANA name"),
    ({"time_limit_s": 0}, 422, "time_limit_s", "above 0"),
    ({"time_limit_s": 1e9}, 422, "time_limit_s", "at most 300"),
    ({"home_label": ""}, 422, "home_label", "must not be empty"),
    ({"rep_name": "x" * 81}, 422, "rep_name", "at most 80"),
    ({"rep_name": "a\x00b"}, 422, "rep_name", "control characters"),
    ({"colour": "red"}, 400, "colour", "unknown field"),
]


@pytest.mark.parametrize(("body", "status", "field", "message"), BAD_SETTINGS)
def test_bad_settings_are_refused_and_nothing_changes(client, conn, body, status, field,
                                                      message):
    client.put("/api/settings", json={"home": HOME})
    before = dump(conn)
    response = client.put("/api/settings", json=body)
    assert response.status_code == status
    fields = {f["field"]: f["message"] for f in response.json["fields"]}
    assert field in fields, response.json
    assert message in fields[field]
    assert dump(conn) == before


def test_every_wrong_field_is_named_at_once(client):
    response = client.put("/api/settings", json={"speed_kmh": -1, "objective": "x",
                                                 "home": "abc"})
    assert response.status_code == 422
    assert {f["field"] for f in response.json["fields"]} == {"speed_kmh", "objective", "home"}


@pytest.mark.parametrize("raw", [b"", b"not json", b"[1, 2]", b"null", b'"text"'])
def test_a_body_that_is_not_an_object_is_a_400(client, conn, raw):
    before = dump(conn)
    response = client.put("/api/settings", data=raw, content_type="application/json")
    assert response.status_code == 400
    assert response.json["fields"][0]["field"] == "body"
    assert dump(conn) == before


def test_not_a_number_in_json_is_refused(client):
    # Python's json module reads the non-standard NaN literal (RFC 8259 has none).
    response = client.put("/api/settings", data=b'{"speed_kmh": NaN}',
                          content_type="application/json")
    assert response.status_code == 422
    assert response.json["fields"][0]["field"] == "speed_kmh"
