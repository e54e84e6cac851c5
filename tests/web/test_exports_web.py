"""Day and week files from the stored plans, read back with reference parsers.

Outside references named beside each check: RFC 5545 (iCalendar) §3.1 content lines (CRLF,
folding at 75 octets), §3.6.1 VEVENT (UID, DTSTAMP), §3.8.1.6 GEO, §3.8.1.11 STATUS,
§3.8.4.7 UID (persistent across revisions), §3.8.7.4 SEQUENCE; the parsers icalendar and
vobject from the package index; GPX 1.1 (topografix.com/GPX/1/1) read with gpxpy; RFC 4180
CSV read with the standard csv module; RFC 5870 §3.3 geo: URI ABNF, written out as a regular
expression below; RFC 6266 §4.1 Content-Disposition.
"""

from __future__ import annotations

import csv
import io
import re
import subprocess
import sys
from pathlib import Path

import gpxpy
import icalendar
import pytest
import vobject

from .helpers import HOME_LAT, HOME_LON, WEDNESDAY, add_client, dump, set_home, wait_job

ROOT = Path(__file__).resolve().parents[2]
THURSDAY = "2026-03-05"
MONDAY = "2026-03-02"  # the Monday of WEDNESDAY's ISO week (2026-03-04 is a Wednesday)
HOSTILE = "<img src=x onerror=alert(1)>"
# Longer than 75 octets in UTF-8 on its own, with multi-byte letters: forces folding (§3.1).
LONG_NAME = "Épicerie fine « Les Quatre Saisons » du Vieux-Tours, entrée par la cour arrière"
# Invented clients a few km around the test home near Tours; open all day.
PLACES = [
    ("Quincaillerie Martel", "47.38000, 0.70000"),
    ("Cave Coopérative du Lys", "47.40000, 0.75000"),
    ("Atelier Vélo Ruelle", "47.35000, 0.80000"),
    ("Fleurs de Saint-Cyr", "47.39500, 0.66500"),
    ("Boulangerie du Pont", "47.33500, 0.72000"),
]
# RFC 5870 §3.3: geo-URI = "geo:" coord-a "," coord-b [ "," coord-c ] *( ";" parameter ),
# num = [ "-" ] 1*DIGIT [ "." 1*DIGIT ]; labels and values per the pnum / paramchar rules.
_NUM = r"-?\d+(?:\.\d+)?"
GEO_URI = re.compile(rf"geo:{_NUM},{_NUM}(?:,{_NUM})?(?:;crs=[A-Za-z0-9-]+)?"
                     rf"(?:;u=\d+(?:\.\d+)?)?(?:;[A-Za-z0-9-]+(?:=[^;]+)?)*")


def _solve(client, date: str) -> dict:
    job = wait_job(client, client.post(f"/api/days/{date}/solve"))
    assert job["state"] == "done", job
    plan = client.get(f"/api/days/{date}").json["plan"]
    assert plan["feasible"], plan
    return plan


def _day(client, names, date: str = WEDNESDAY, *, notes: str = "") -> dict[str, dict]:
    """Clients by name, chosen for ``date``."""
    made = {}
    for name, where in names:
        made[name] = add_client(client, name, where, notes=notes)
    response = client.put(f"/api/days/{date}/visits",
                          json={"client_ids": [c["id"] for c in made.values()]})
    assert response.status_code == 200, response.json
    return made


def _unfold(data: bytes) -> list[str]:
    """RFC 5545 §3.1: a CRLF followed by one space or tab is removed."""
    return re.sub(r"\r\n[ \t]", "", data.decode("utf-8")).split("\r\n")


def _events(data: bytes) -> list:
    return [c for c in icalendar.Calendar.from_ical(data).walk("VEVENT")]


def _visits(events) -> dict[str, dict]:
    """Visit events by SUMMARY: uid, sequence, status, start."""
    out = {}
    for event in events:
        if "VISIT" not in [str(c) for c in event.get("categories").cats]:
            continue
        out[str(event["summary"])] = {"uid": str(event["uid"]), "seq": int(event["sequence"]),
                                      "status": str(event["status"]),
                                      "start": event.decoded("dtstart")}
    return out


@pytest.fixture
def planned(client):
    set_home(client, time_zone="Europe/Paris")
    made = _day(client, [*PLACES[:3], (HOSTILE, "47.37000, 0.68000"),
                         (LONG_NAME, "47.36000, 0.77000")],
                notes="Gate code 4711; ring twice,\nthen wait")
    return made, _solve(client, WEDNESDAY)


def test_the_calendar_file_follows_rfc_5545_and_two_parsers_read_it(client, planned):
    made, plan = planned
    response = client.get(f"/api/days/{WEDNESDAY}/export.ics?travel=1&alarm=15")
    assert response.status_code == 200
    assert response.headers["Content-Type"] == "text/calendar; charset=utf-8"  # RFC 5545 §8.1
    # RFC 6266 §4.1: attachment with a quoted file name.
    assert response.headers["Content-Disposition"] == \
        f'attachment; filename="rondo-{WEDNESDAY}.ics"'
    data = response.data
    # §3.1: every line ends in CRLF, no line is longer than 75 octets without its CRLF.
    assert data.endswith(b"\r\n") and b"\n" not in data.replace(b"\r\n", b"")
    lines = data.split(b"\r\n")[:-1]
    assert max(len(line) for line in lines) <= 75
    assert any(line.startswith(b" ") for line in lines), "the long name must have been folded"

    events = _events(data)
    visits = _visits(events)
    order = [v["name"] for v in plan["visits"]]
    # Visits in plan order, each at its planned local start (§3.3.5 form 3, TZID).
    assert sorted(visits, key=lambda name: visits[name]["start"]) == order
    for v in plan["visits"]:
        start = visits[v["name"]]["start"]
        assert start.strftime("%H:%M") == v["start"] and str(start.tzinfo) == "Europe/Paris"
    for event in events:
        assert event.get("uid") and event.get("dtstamp")  # §3.6.1: both REQUIRED
    unfolded = _unfold(data)
    geo_lines = [line for line in unfolded if line.startswith("GEO:")]
    assert len(geo_lines) == len(order)
    assert all(re.fullmatch(r"GEO:-?\d+(\.\d+)?;-?\d+(\.\d+)?", g) for g in geo_lines)  # §3.8.1.6
    for event in events:
        if "VISIT" in [str(c) for c in event["categories"].cats]:
            stored = made[str(event["summary"])]["location"]
            assert event["geo"].latitude == pytest.approx(stored["lat"], abs=1e-6)
            assert event["geo"].longitude == pytest.approx(stored["lon"], abs=1e-6)
            assert GEO_URI.fullmatch(str(event["url"])), event["url"]
    # The hostile name is text, exactly as typed; the notes keep their comma and line break.
    assert HOSTILE in visits and LONG_NAME in visits
    described = [str(e["description"]) for e in events if str(e["summary"]) == HOSTILE]
    assert "Gate code 4711; ring twice,\nthen wait" in described[0]
    assert any(len(e.walk("VALARM")) == 1 for e in events)
    assert any("TRAVEL" in [str(c) for c in e["categories"].cats] for e in events)

    # vobject, an independent parser, sees the same events and UIDs.
    parsed = vobject.readOne(data.decode("utf-8"))
    assert sorted(e.uid.value for e in parsed.vevent_list) == \
        sorted(str(e["uid"]) for e in events)
    assert {e.summary.value for e in parsed.vevent_list} >= set(order)


def test_re_exports_keep_uids_raise_sequence_and_cancel_dropped_visits(client, conn):
    set_home(client)
    made = _day(client, PLACES[:4])
    _solve(client, WEDNESDAY)
    first = _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data))
    assert {v["seq"] for v in first.values()} == {0}
    assert {v["status"] for v in first.values()} == {"CONFIRMED"}
    assert len({v["uid"] for v in first.values()}) == 4  # §3.8.4.7: one UID per visit

    # The same plan exported again, even after solving it again: nothing changed, same SEQUENCE.
    _solve(client, WEDNESDAY)
    assert _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data)) == first

    # Drop the fourth client, add a fifth, re-plan: SEQUENCE + 1 (§3.8.7.4), kept UIDs stay,
    # the dropped visit comes back CANCELLED under its old UID and time (§3.8.1.11).
    dropped, kept = PLACES[3][0], [p[0] for p in PLACES[:3]]
    extra = add_client(client, *PLACES[4])
    ids = [made[name]["id"] for name in kept] + [extra["id"]]
    assert client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": ids}).status_code == 200
    before = [v["name"] for v in _solve(client, WEDNESDAY)["visits"]]
    second = _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data))
    assert {v["seq"] for v in second.values()} == {1}
    assert all(second[name]["uid"] == first[name]["uid"] for name in kept)
    assert second[dropped] == {**first[dropped], "seq": 1, "status": "CANCELLED"}
    assert second[PLACES[4][0]]["uid"] not in {v["uid"] for v in first.values()}
    assert _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data)) == second

    # Only times change (a later start of the day, same order): that is a change too.
    client.put("/api/settings", json={"day_start": "09:00"})
    plan = _solve(client, WEDNESDAY)
    assert [v["name"] for v in plan["visits"]] == before
    third = _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data))
    assert {v["seq"] for v in third.values()} == {2}
    assert third[dropped]["status"] == "CANCELLED"

    # On the road: the first visit done, re-plan from there. The done visit is neither
    # cancelled nor re-sent; the rest keep their UIDs; the earlier cancellation stays.
    done = plan["visits"][0]
    client.put(f"/api/days/{WEDNESDAY}/done/{done['client_id']}",
               json={"arrived": done["start"], "departed": done["depart"]})
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/replan",
                                       json={"from": done["client_id"], "now": done["depart"]}))
    assert job["state"] == "done" and job["result"]["plan"]["feasible"]
    fourth = _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data))
    assert done["name"] not in fourth
    assert {v["seq"] for v in fourth.values()} == {3}
    assert all(fourth[v["name"]]["uid"] == third[v["name"]]["uid"] for v in plan["visits"][1:])
    assert fourth[dropped]["status"] == "CANCELLED"
    row = conn.execute("SELECT sequence FROM day_exports WHERE plan_date = ?",
                       (WEDNESDAY,)).fetchone()
    assert row[0] == 3


def _drives(events) -> dict[str, dict]:
    """Drive events by UID: sequence and status."""
    return {str(e["uid"]): {"seq": int(e["sequence"]), "status": str(e["status"])}
            for e in events if "TRAVEL" in [str(c) for c in e.get("categories").cats]}


def test_exporting_without_drives_after_with_them_cancels_the_old_drive_events(client):
    # RFC 5545 §3.8.1.11 and §3.8.7.4: the calendar drops an event when a later SEQUENCE of
    # the same UID says CANCELLED; otherwise the first file's drives would stay for good.
    set_home(client)
    _day(client, PLACES[:3])
    _solve(client, WEDNESDAY)
    with_drives = _events(client.get(f"/api/days/{WEDNESDAY}/export.ics?travel=1").data)
    drives = _drives(with_drives)
    assert len(drives) == 4 and {d["status"] for d in drives.values()} == {"CONFIRMED"}
    without = _events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data)
    withdrawn = _drives(without)
    assert set(withdrawn) == set(drives)
    assert {d["status"] for d in withdrawn.values()} == {"CANCELLED"}
    assert {d["seq"] for d in withdrawn.values()} == {1}
    assert {v["seq"] for v in _visits(without).values()} == {1}
    assert {v["status"] for v in _visits(without).values()} == {"CONFIRMED"}
    # Once withdrawn, later exports without drives hold none, and change no SEQUENCE.
    again = _events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data)
    assert _drives(again) == {} and {v["seq"] for v in _visits(again).values()} == {1}


def test_the_week_file_holds_every_planned_day_with_its_own_sequence(client):
    set_home(client)
    wed = _day(client, PLACES[:2])
    _solve(client, WEDNESDAY)
    client.get(f"/api/days/{WEDNESDAY}/export.ics")
    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": [wed[PLACES[0][0]]["id"]]})
    _solve(client, WEDNESDAY)
    thu = _day(client, PLACES[2:4], THURSDAY)
    _solve(client, THURSDAY)
    response = client.get(f"/api/weeks/{MONDAY}/export.ics")
    assert response.status_code == 200
    assert response.headers["Content-Disposition"] == \
        f'attachment; filename="rondo-week-{MONDAY}.ics"'
    visits = _visits(_events(response.data))
    assert visits[PLACES[0][0]]["seq"] == 1 and visits[PLACES[0][0]]["status"] == "CONFIRMED"
    assert visits[PLACES[1][0]]["status"] == "CANCELLED"
    assert {visits[name]["seq"] for name in thu} == {0}
    assert {visits[name]["start"].date().isoformat() for name in thu} == {THURSDAY}
    # The week's export is remembered per day: the day file continues from it.
    again = _visits(_events(client.get(f"/api/days/{THURSDAY}/export.ics").data))
    assert again == {name: visits[name] for name in thu}


def test_the_gpx_route_runs_home_visits_home_in_plan_order(client, planned):
    made, plan = planned
    response = client.get(f"/api/days/{WEDNESDAY}/export.gpx")
    assert response.status_code == 200
    assert response.headers["Content-Type"] == "application/gpx+xml"
    # GPX 1.1: the root element in the 1.1 namespace with version="1.1".
    assert b'xmlns="http://www.topografix.com/GPX/1/1"' in response.data
    assert b'version="1.1"' in response.data
    gpx = gpxpy.parse(response.data.decode("utf-8"))
    points = gpx.routes[0].points
    assert (points[0].latitude, points[0].longitude) == pytest.approx((HOME_LAT, HOME_LON))
    assert (points[-1].latitude, points[-1].longitude) == pytest.approx((HOME_LAT, HOME_LON))
    order = [v["name"] for v in plan["visits"]]
    assert [p.name for p in points[1:-1]] == order
    for point in points[1:-1]:
        stored = made[point.name]["location"]
        assert (point.latitude, point.longitude) == pytest.approx((stored["lat"], stored["lon"]))
    assert [w.name for w in gpx.waypoints] == order
    assert all(GEO_URI.fullmatch(w.link) for w in gpx.waypoints)
    # XML escaping keeps the hostile name text (XML 1.0 §2.4).
    assert b"&lt;img src=x onerror=alert(1)&gt;" in response.data and b"<img" not in response.data


def test_the_csv_table_lists_home_visits_home(client, planned):
    _, plan = planned
    response = client.get(f"/api/days/{WEDNESDAY}/export.csv")
    assert response.headers["Content-Type"] == "text/csv; charset=utf-8"
    assert b"\r\n" in response.data and b"\n" not in response.data.replace(b"\r\n", b"")
    rows = list(csv.reader(io.StringIO(response.data.decode("utf-8-sig"), newline="")))
    assert rows[0][:2] == ["order", "client"]
    home = client.get("/api/settings").json["home_label"]
    assert [r[1] for r in rows[1:]] == [home, *[v["name"] for v in plan["visits"]], home]
    assert all(GEO_URI.fullmatch(r[-1]) for r in rows[1:])


def test_bad_requests_name_the_field_and_store_nothing(client, conn):
    set_home(client)
    far = add_client(client, "Far Away Early", "47.16700, 0.24200",
                     windows={"wed": "08:00-08:05"})
    before = dump(conn)
    cases = [
        (f"/api/days/{WEDNESDAY}/export.ics", 404, "date", WEDNESDAY),
        (f"/api/days/{WEDNESDAY}/export.gpx", 404, "date", WEDNESDAY),
        ("/api/days/2026-02-30/export.csv", 422, "date", "2026-02-30"),
        (f"/api/weeks/{WEDNESDAY}/export.ics", 422, "date", WEDNESDAY),
        (f"/api/weeks/{MONDAY}/export.ics", 404, "date", MONDAY),
    ]
    for path, status, field, value in cases:
        response = client.get(path)
        assert response.status_code == status, (path, response.json)
        assert response.json["fields"][0]["field"] == field
        assert response.json["fields"][0]["value"] == value
        assert value in response.json["message"]
    assert dump(conn) == before

    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": [far["id"]]})
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/solve"))
    assert job["result"]["plan"]["feasible"] is False
    response = client.get(f"/api/days/{WEDNESDAY}/export.ics")
    assert response.status_code == 404 and "no order" in response.json["message"]

    made = add_client(client, "Near By", "47.37, 0.74")
    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": [made["id"]]})
    _solve(client, WEDNESDAY)
    before = dump(conn)
    for query, status, field in [("alarm=soon", 422, "alarm"), ("alarm=1441", 422, "alarm"),
                                 ("alarm=-5", 422, "alarm"), ("travel=maybe", 422, "travel"),
                                 ("colour=red", 400, "colour")]:
        response = client.get(f"/api/days/{WEDNESDAY}/export.ics?{query}")
        assert response.status_code == status, (query, response.json)
        assert response.json["fields"][0]["field"] == field
    response = client.get(f"/api/days/{WEDNESDAY}/export.gpx?travel=1")
    assert response.status_code == 400 and response.json["fields"][0]["field"] == "travel"
    assert dump(conn) == before  # no calendar memory written by a refused export


def _rondo(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "webapp", *args], cwd=ROOT, capture_output=True,
                          timeout=120)


def test_the_command_exports_a_stored_day_and_continues_its_sequence(app, client, tmp_path):
    set_home(client)
    made = _day(client, PLACES[:3])
    _solve(client, WEDNESDAY)
    first = _visits(_events(client.get(f"/api/days/{WEDNESDAY}/export.ics").data))
    client.put(f"/api/days/{WEDNESDAY}/visits",
               json={"client_ids": [made[p[0]]["id"] for p in PLACES[:2]]})
    _solve(client, WEDNESDAY)
    assert app.extensions["rondo_jobs"].join(timeout_s=60)

    out = tmp_path / "day.ics"
    done = _rondo("export", "--date", WEDNESDAY, "--format", "ics", "--data", str(tmp_path),
                  "--output", str(out))
    assert done.returncode == 0, done.stderr
    visits = _visits(_events(out.read_bytes()))
    assert visits[PLACES[2][0]] == {**first[PLACES[2][0]], "seq": 1, "status": "CANCELLED"}
    assert visits[PLACES[0][0]]["uid"] == first[PLACES[0][0]]["uid"]
    gpx = _rondo("export", "--date", WEDNESDAY, "--format", "gpx", "--data", str(tmp_path))
    assert gpx.returncode == 0, gpx.stderr
    assert len(gpxpy.parse(gpx.stdout.decode("utf-8")).routes[0].points) == 2 + 2

    for args, words in [
        (("--format", "ics", "--data", str(tmp_path)), "--date"),
        (("stops.csv", "--format", "ics", "--data", str(tmp_path)), "not both"),
        (("--date", THURSDAY, "--format", "csv", "--data", str(tmp_path)), THURSDAY),
        (("--date", WEDNESDAY, "--format", "ics", "--data", str(tmp_path), "--tz", "UTC"),
         "--tz"),
        (("--date", WEDNESDAY, "--format", "ics", "--data", str(tmp_path / "nothing")),
         "no Rondo database"),
    ]:
        failed = _rondo("export", *args)
        assert failed.returncode == 2, (args, failed.stderr)
        message = failed.stderr.decode("utf-8")
        assert message.startswith("rondo: ") and words in message, (args, message)
        assert "Traceback" not in message
