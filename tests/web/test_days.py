"""A day over the API: choose visits, solve off the request thread, mark done, re-plan, quote.

Outside references:
- geographiclib (Karney 2013) for every leg's straight-line km, times the detour factor;
- exhaustive enumeration of every visiting order with a time simulation written here from
  the stated rule (a visit must *start* inside a window; waiting allowed; home by the end of
  the day): the shortest feasible order must match the reported total;
- the Gregorian calendar (Python's datetime, ISO 8601) for the weekday of a date.
"""

from __future__ import annotations

import datetime as dt
import itertools

import pytest
from geographiclib.geodesic import Geodesic

from .helpers import HOME_LAT, HOME_LON, SUNDAY, WEDNESDAY, add_client, dump, set_home, wait_job

DETOUR = 1.3  # the app's default road km per straight km (its documented default)
KM_ROUNDING = 6e-4  # the plan states km to 3 decimals
SPEED_KMH = 50.0  # the app's default average speed

# Invented clients around Tours with windows that make the order matter.
PLACES = [
    ("North Nursery", "47.41050, 0.79850", 30, "09:00-12:00"),
    ("East Hardware", "47.41200, 0.98100", 20, "13:30-17:00"),
    ("South Florist", "47.28500, 0.78600", 15, "08:00-10:00"),
    ("West Orchard", "47.38500, 0.55600", 40, "14:00-16:00"),
    ("Centre Shop", "47.39400, 0.68800", 20, ""),
]


def test_the_test_dates_fall_on_the_weekdays_they_claim():
    assert dt.date.fromisoformat(WEDNESDAY).weekday() == 2
    assert dt.date.fromisoformat(SUNDAY).weekday() == 6


@pytest.fixture
def day(client):
    set_home(client, day_start="08:00", day_end="18:00")
    ids = [add_client(client, name, loc, visit_min=m, windows={"wed": w, "sun": "closed"})["id"]
           for name, loc, m, w in PLACES]
    response = client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": ids})
    assert response.status_code == 200
    return ids


def _km(a, b) -> float:
    return Geodesic.WGS84.Inverse(a[0], a[1], b[0], b[1])["s12"] / 1000.0 * DETOUR


def _clock(text: str) -> int:
    hours, minutes = text.split(":")
    return int(hours) * 60 + int(minutes)


def _best_by_enumeration(places, start_min, end_min):
    """Shortest feasible order over all orders, simulated from the rule itself."""
    home = (HOME_LAT, HOME_LON)
    best = None
    for order in itertools.permutations(range(len(places))):
        here, t, total, ok = home, start_min, 0.0, True
        for k in order:
            _, pos, service, window = places[k]
            leg = _km(here, pos)
            t += leg / SPEED_KMH * 60
            if window:
                opens, closes = map(_clock, window.split("-"))
                if t > closes:
                    ok = False
                    break
                t = max(t, opens)
            t += service
            total += leg
            here = pos
        back = _km(here, home)
        if ok and t + back / SPEED_KMH * 60 <= end_min and (best is None or total + back < best):
            best = total + back
    return best


def _pos(text):
    lat, lon = text.split(",")
    return float(lat), float(lon)


def test_solve_runs_as_a_job_and_the_plan_checks_out(client, day):
    response = client.post(f"/api/days/{WEDNESDAY}/solve")
    assert response.status_code == 202 and response.headers["Location"].startswith("/api/jobs/")
    job = wait_job(client, response)
    assert job["state"] == "done", job
    plan = job["result"]["plan"]
    assert plan["feasible"] and plan["proof"]["proven_optimal"]
    assert plan["proof"]["text"].startswith("Proven best")
    visits = plan["visits"]
    assert sorted(v["client_id"] for v in visits) == sorted(day)

    places = {name: (_pos(loc), m, w) for name, loc, m, w in PLACES}
    here, t = (HOME_LAT, HOME_LON), _clock(plan["start"]["clock"])
    for v in visits:
        pos, service, window = places[v["name"]]
        assert v["leg_km"] == pytest.approx(_km(here, pos), abs=KM_ROUNDING)
        assert v["leg_min"] == pytest.approx(_km(here, pos) / SPEED_KMH * 60, abs=KM_ROUNDING)
        assert v["arrive_min"] == pytest.approx(t + v["leg_min"], abs=0.01)
        assert v["start_min"] >= v["arrive_min"] - 1e-6
        assert v["wait_min"] == pytest.approx(v["start_min"] - v["arrive_min"], abs=0.01)
        if window:
            opens, closes = map(_clock, window.split("-"))
            assert opens - 1e-6 <= v["start_min"] <= closes + 1e-6
        assert v["depart_min"] == pytest.approx(v["start_min"] + service, abs=1e-6)
        here, t = pos, v["depart_min"]
    assert plan["return_leg_km"] == pytest.approx(_km(here, (HOME_LAT, HOME_LON)),
                                                  abs=KM_ROUNDING)
    assert plan["return_min"] <= _clock("18:00")
    totals = plan["totals"]
    assert totals["km"] == pytest.approx(sum(v["leg_km"] for v in visits)
                                         + plan["return_leg_km"], abs=KM_ROUNDING * 7)
    assert totals["visit_min"] == sum(m for _, _, m, _ in PLACES)
    best = _best_by_enumeration([(n, _pos(loc), m, w) for n, loc, m, w in PLACES], 480, 1080)
    assert totals["km"] == pytest.approx(best, abs=KM_ROUNDING)
    assert client.get(f"/api/days/{WEDNESDAY}").json["plan"] == plan


def test_the_solve_and_its_inputs_are_stored_to_explain_later(client, conn, day):
    wait_job(client, client.post(f"/api/days/{WEDNESDAY}/solve"))
    plan = client.get(f"/api/days/{WEDNESDAY}").json["plan"]
    record = client.get(f"/api/solves/{plan['solve_id']}").json
    inputs = record["inputs"]
    assert inputs["date"] == WEDNESDAY and inputs["rules"]["end"] == "18:00"
    assert [v["name"] for v in inputs["visits"]] == sorted(n for n, *_ in PLACES)
    assert inputs["settings"]["detour_factor"] == DETOUR
    assert len(inputs["matrix"]["km"]) == len(PLACES) + 1
    rows = conn.execute("SELECT client_id FROM planned_visits WHERE solve_id = ? ORDER BY seq",
                        (plan["solve_id"],)).fetchall()
    assert [r[0] for r in rows] == [v["client_id"] for v in plan["visits"]]
    assert client.get("/api/solves/999").status_code == 404


def test_a_measured_drive_replaces_the_estimate_one_way_only(client, day):
    first = day[0]
    client.put("/api/drives", json={"from": "home", "to": first, "km": 99.0, "minutes": 5})
    wait_job(client, client.post(f"/api/days/{WEDNESDAY}/solve"))
    plan = client.get(f"/api/days/{WEDNESDAY}").json["plan"]
    inputs = client.get(f"/api/solves/{plan['solve_id']}").json["inputs"]
    node = next(v["node"] for v in inputs["visits"] if v["client_id"] == first)
    matrix = inputs["matrix"]
    assert matrix["km"][0][node] == 99.0 and matrix["minutes"][0][node] == 5.0
    assert matrix["user_entered_km"][0][node] and not matrix["user_entered_km"][node][0]
    assert matrix["km"][node][0] == pytest.approx(_km(_pos(PLACES[0][1]), (HOME_LAT, HOME_LON)),
                                                  rel=1e-9)


def test_an_impossible_day_is_explained_and_kept(client, conn):
    set_home(client)
    far = add_client(client, "Far Away Early", "47.16700, 0.24200", windows={"wed": "08:00-08:05"})
    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": [far["id"]]})
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/solve"))
    plan = job["result"]["plan"]
    assert plan["feasible"] is False
    assert "Far Away Early" in plan["explanation"]["summary"]
    assert conn.execute("SELECT feasible FROM plan_solves").fetchall()[0][0] == 0


def test_solving_needs_a_home(client):
    made = add_client(client, "Lonely", "47.4, 0.7")
    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": [made["id"]]})
    response = client.post(f"/api/days/{WEDNESDAY}/solve")
    assert response.status_code == 422 and response.json["fields"][0]["field"] == "home"


@pytest.mark.parametrize("date", ["2026-02-30", "20260304", "tomorrow", "2026-3-4"])
def test_a_bad_date_in_the_path_is_named(client, date):
    response = client.get(f"/api/days/{date}")
    assert response.status_code == 422 and response.json["fields"][0]["field"] == "date"


def test_choosing_visits_is_checked(client, conn):
    set_home(client)
    shut = add_client(client, "Shut Sundays", "47.4, 0.7", windows={"sun": "closed"})
    idle = add_client(client, "Idle", "47.4, 0.8", active=False)
    before = dump(conn)
    cases = [
        ({"client_ids": "1,2"}, 422, "client_ids", "must be a list"),
        ({"client_ids": [shut["id"], shut["id"]]}, 422, "client_ids", "twice"),
        ({"client_ids": [idle["id"]]}, 422, "client_ids[0]", "not active"),
        ({"client_ids": ["1"]}, 422, "client_ids[0]", "expected a client id"),
        ({"client_ids": [shut["id"], 999]}, 404, "client_ids[1]", "does not exist"),
        ({"visits": []}, 400, "visits", "unknown field"),
    ]
    for body, status, field, message in cases:
        response = client.put(f"/api/days/{WEDNESDAY}/visits", json=body)
        assert response.status_code == status, (body, response.json)
        fields = {f["field"]: f["message"] for f in response.json["fields"]}
        assert field in fields and message in fields[field], (body, response.json)
    response = client.put(f"/api/days/{SUNDAY}/visits", json={"client_ids": [shut["id"]]})
    assert response.status_code == 422 and "closed on Sundays" in response.json["message"]
    assert dump(conn) == before


def test_during_the_day_done_visits_stay_put_and_the_rest_is_replanned(client, day):
    wait_job(client, client.post(f"/api/days/{WEDNESDAY}/solve"))
    first = client.get(f"/api/days/{WEDNESDAY}").json["plan"]["visits"][0]
    view = client.put(f"/api/days/{WEDNESDAY}/done/{first['client_id']}",
                      json={"arrived": first["start"], "departed": "09:40"}).json
    assert view["done"] == [{"client_id": first["client_id"], "name": first["name"],
                             "arrived": first["start"], "departed": "09:40",
                             "arrived_min": _clock(first["start"]), "departed_min": 580}]
    assert client.post(f"/api/days/{WEDNESDAY}/solve").status_code == 409
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/replan",
                                       json={"from": first["client_id"], "now": "09:40"}))
    plan = job["result"]["plan"]
    assert plan["kind"] == "replan" and plan["start"]["label"] == first["name"]
    assert plan["start"]["clock"] == "09:40"
    assert first["client_id"] not in [v["client_id"] for v in plan["visits"]]
    assert len(plan["visits"]) == len(day) - 1
    assert plan["visits"][0]["arrive_min"] >= 580
    # A done visit cannot be dropped from the day, and undo is possible.
    response = client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": day[1:]}
                          if first["client_id"] == day[0] else {"client_ids": []})
    assert response.status_code == 422 and "already done" in response.json["message"]
    view = client.delete(f"/api/days/{WEDNESDAY}/done/{first['client_id']}").json
    assert view["done"] == []


def test_replan_from_a_typed_position(client, day):
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/replan",
                                       json={"from": "47.30000, 0.80000", "now": "08:30"}))
    plan = job["result"]["plan"]
    assert plan["start"]["label"] == "where you are" and plan["start"]["lat"] == 47.3
    assert plan["visits"][0]["leg_km"] == pytest.approx(
        _km((47.3, 0.8), _pos(next(p[1] for p in PLACES if p[0] == plan["visits"][0]["name"]))),
        abs=KM_ROUNDING)


@pytest.mark.parametrize(("body", "status", "field", "message"), [
    ({"from": "91, 0"}, 422, "from", "latitude 91"),
    ({"from": 999}, 404, "from", "does not exist"),
    ({"from": True}, 422, "from", "must be text"),
    ({"now": "25:00"}, 422, "now", "not a time of day"),
    ({"now": 900}, 422, "now", "not a clock time"),
    ({"break_taken": "no"}, 422, "break_taken", "true or false"),
    ({"here": "x"}, 400, "here", "unknown field"),
])
def test_bad_replan_requests_name_the_field(client, conn, day, body, status, field, message):
    before = dump(conn)
    response = client.post(f"/api/days/{WEDNESDAY}/replan", json=body)
    assert response.status_code == status, response.json
    fields = {f["field"]: f["message"] for f in response.json["fields"]}
    assert field in fields and message in fields[field]
    assert dump(conn) == before


def test_replanning_from_a_visit_not_yet_done_is_refused(client, day):
    response = client.post(f"/api/days/{WEDNESDAY}/replan", json={"from": day[0], "now": "09:00"})
    assert response.status_code == 422 and "not marked done" in response.json["message"]


def test_a_last_minute_visit_is_priced_then_added(client, conn, day):
    extra = add_client(client, "Late Caller", "47.35200, 0.66300", visit_min=20)
    before = dump(conn)
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/quote",
                                       json={"client_id": extra["id"], "from": "home",
                                             "now": "08:00"}))
    assert job["state"] == "done", job
    quote = job["result"]
    assert quote["fits_now"] and quote["exact"]["fits"] and quote["name"] == "Late Caller"
    assert quote["estimate"]["extra_km"] >= quote["exact"]["extra_km"] - 1e-6
    assert dump(conn) == before, "a quote must store nothing"
    # Adding it and re-planning from the same place and time costs what was quoted.
    view = client.post(f"/api/days/{WEDNESDAY}/visits", json={"client_id": extra["id"]}).json
    assert next(c for c in view["choices"] if c["client_id"] == extra["id"])["added_late"]
    job = wait_job(client, client.post(f"/api/days/{WEDNESDAY}/replan",
                                       json={"from": "home", "now": "08:00"}))
    plan = job["result"]["plan"]
    assert plan["totals"]["km"] == pytest.approx(quote["base"]["total_km"]
                                                 + quote["exact"]["extra_km"], abs=KM_ROUNDING)
    assert plan["return"] == quote["exact"]["return"]
    assert not plan["stale"]


@pytest.mark.parametrize(("body", "status", "field"), [
    ({"from": "home"}, 422, "client_id"),
    ({"client_id": "3"}, 422, "client_id"),
    ({"client_id": 999}, 404, "client_id"),
])
def test_bad_quotes_name_the_field(client, day, body, status, field):
    response = client.post(f"/api/days/{WEDNESDAY}/quote", json=body)
    assert response.status_code == status
    assert response.json["fields"][0]["field"] == field


def test_quoting_a_client_already_in_the_day_is_refused(client, day):
    response = client.post(f"/api/days/{WEDNESDAY}/quote", json={"client_id": day[0]})
    assert response.status_code == 422 and "already in the day" in response.json["message"]


def test_a_plan_is_marked_stale_when_the_visits_change(client, day):
    wait_job(client, client.post(f"/api/days/{WEDNESDAY}/solve"))
    client.put(f"/api/days/{WEDNESDAY}/visits", json={"client_ids": day[:3]})
    assert client.get(f"/api/days/{WEDNESDAY}").json["plan"]["stale"] is True


@pytest.mark.parametrize(("body", "field", "message"), [
    ({"arrived": "10:00", "departed": "09:00"}, "departed", "before arrived"),
    ({"arrived": "10h", "departed": "11:00"}, "arrived", "not a clock time"),
    ({"arrived": "10:00"}, "departed", "not a clock time"),
])
def test_bad_done_marks_are_refused(client, conn, day, body, field, message):
    before = dump(conn)
    response = client.put(f"/api/days/{WEDNESDAY}/done/{day[0]}", json=body)
    assert response.status_code == 422
    fields = {f["field"]: f["message"] for f in response.json["fields"]}
    assert field in fields and message in fields[field]
    assert dump(conn) == before


def test_done_marks_for_visits_not_in_the_day_are_404(client, day):
    other = add_client(client, "Not Today", "47.4, 0.7")
    body = {"arrived": "10:00", "departed": "10:30"}
    assert client.put(f"/api/days/{WEDNESDAY}/done/{other['id']}", json=body).status_code == 404
    assert client.delete(f"/api/days/{WEDNESDAY}/done/{day[0]}").status_code == 404


def test_days_are_listed(client, day):
    assert client.get("/api/days").json == [{"date": WEDNESDAY, "visits": len(day),
                                             "solved": False}]
