"""The week over the API on a real SQLite file: solve, caps, pins, gaps, quotes, moves, the map.

Outside references:
- geographiclib (Karney 2013) for each straight-line km, times the app's default detour factor
  1.3, at its default 50 km/h (the app's documented defaults);
- a brute force written here: every assignment of the clients to their open working days, each
  day's order by trying every permutation, timed by this file's own reading of the rule (a
  visit must *start* inside one of its windows, waiting is allowed, home by the day's end);
- the Gregorian calendar (Python's datetime, ISO 8601: weeks start on Monday);
- CSP Level 3 §2.3.1 hash-source: 'sha256-' + base64 of the SHA-256 of each inline script.
"""

from __future__ import annotations

import base64
import datetime as dt
import functools
import hashlib
import itertools
import re

import pytest
from geographiclib.geodesic import Geodesic

from .helpers import HOME_LAT, HOME_LON, add_client, dump, set_home, wait_job

MONDAY = "2026-03-02"
WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
DETOUR = 1.3
SPEED_KMH = 50.0
DAY_START, DAY_END = 8 * 60, 17 * 60
KM_ROUNDING = 6 * 5e-4  # each day's km is stated to 3 decimals; a week sums up to six of them

# Invented clients around Tours: (name, position, visit minutes, windows by weekday).
PLACES = [
    ("Hillside Seeds", (47.41050, 0.79850), 30, {"mon": "09:00-12:00", "tue": "closed"}),
    ("River Tools", (47.41200, 0.98100), 20, {d: "13:30-17:00" for d in WEEKDAYS}),
    ("Meadow Florist", (47.28500, 0.78600), 15, {"mon": "closed"}),
    ("Orchard West", (47.38500, 0.55600), 40, {"tue": "14:00-16:00", "mon": "08:00-12:00",
                                              "wed": "08:00-12:00"}),
    ("Market Kiosk", (47.39400, 0.68800), 20, {}),
    ("Valley Bulbs", (47.26800, 0.83500), 30, {"wed": "closed"}),
]


def test_the_week_starts_on_the_monday_it_claims():
    assert dt.date.fromisoformat(MONDAY).isoweekday() == 1  # ISO 8601: Monday is day 1


# ---------------------------------------------------------------------------- the oracle


def _km(a, b) -> float:
    return Geodesic.WGS84.Inverse(a[0], a[1], b[0], b[1])["s12"] / 1000.0 * DETOUR


def _clock(text: str) -> int:
    hours, minutes = text.split(":")
    return int(hours) * 60 + int(minutes)


def _windows(text: str | None):
    """None closed, [] any time, else [(start, end)] in time order."""
    if text is None or not text.strip():
        return []
    if text.strip() == "closed":
        return None
    return sorted(tuple(map(_clock, part.strip().split("-"))) for part in text.split(","))


HOME = (HOME_LAT, HOME_LON)


@functools.cache
def _day_best(weekday: str, members: frozenset, home_by: int = DAY_END
              ) -> tuple[float, float] | None:
    """(least km, return minute) over every order of ``members`` home by ``home_by``.

    Ties in km go to the earlier return (the app's documented tie rule); None if none fits.
    """
    best = None
    for order in itertools.permutations(sorted(members)):
        here, t, total, ok = HOME, DAY_START, 0.0, True
        for k in order:
            _, pos, service, hours = PLACES[k]
            spans = _windows(hours.get(weekday))
            leg = _km(here, pos)
            t += leg / SPEED_KMH * 60
            if spans:
                fitting = [s for s in spans if t <= s[1]]
                if not fitting:
                    ok = False
                    break
                t = max(t, fitting[0][0])
            t += service
            total += leg
            here = pos
        back = _km(here, HOME)
        t += back / SPEED_KMH * 60
        if ok and t <= home_by and (best is None or (total + back, t) < best):
            best = (total + back, t)
    return best


def _brute_week(days, members, *, max_visits=None, max_work_min=None, pins=None,
                visits=None, gaps=None):
    """Least total km over every assignment; visits/gaps: extra visits of some clients."""
    pins, visits, gaps = pins or {}, visits or {}, gaps or {}
    choices = []
    for k in members:
        open_days = [d for d, w in enumerate(days)
                     if _windows(PLACES[k][3].get(w)) is not None]
        if k in pins:
            open_days = [days.index(pins[k])]
        n = visits.get(k, 1)
        sets = [c for c in itertools.combinations(open_days, n)
                if all(b - a >= gaps.get(k, 1) for a, b in itertools.pairwise(c))]
        choices.append(sets)
    best = None
    for pick in itertools.product(*choices):
        total, ok = 0.0, True
        for d, w in enumerate(days):
            on = frozenset(k for k, chosen in zip(members, pick, strict=True) if d in chosen)
            if not on:
                continue
            if max_visits is not None and len(on) > max_visits:
                ok = False
                break
            home_by = DAY_END if max_work_min is None else min(DAY_END, DAY_START + max_work_min)
            day = _day_best(w, on, home_by)
            if day is None:
                ok = False
                break
            total += day[0]
        if ok and (best is None or total < best):
            best = total
    return best


# ---------------------------------------------------------------------------- fixtures


@pytest.fixture
def book(client):
    set_home(client, day_start="08:00", day_end="17:00")
    ids = []
    for name, (lat, lon), minutes, hours in PLACES:
        ids.append(add_client(client, name, f"{lat:.5f}, {lon:.5f}", visit_min=minutes,
                              windows=hours)["id"])
    return ids


def _solve(client, body=None, monday=MONDAY):
    response = client.post(f"/api/weeks/{monday}/solve", json=body) if body is not None \
        else client.post(f"/api/weeks/{monday}/solve")
    job = wait_job(client, response)
    assert job["state"] == "done", job
    return job["result"]


def _week(client, monday=MONDAY):
    response = client.get(f"/api/weeks/{monday}")
    assert response.status_code == 200, response.json
    return response.json


def _on(view) -> dict[str, set[str]]:
    return {d["weekday"]: {c["name"] for c in d["clients"]} for d in view["days"]}


# ---------------------------------------------------------------------------- solving


def test_a_small_week_is_the_brute_force_optimum_and_fills_each_day(client, book):
    days = ["mon", "tue", "wed"]
    view = _solve(client, {"clients": book, "days": days})
    truth = _brute_week(days, list(range(len(PLACES))))
    assert truth is not None
    assert view["totals"]["km"] == pytest.approx(truth, abs=KM_ROUNDING)
    assert view["proof"]["proven_optimal"] is True
    assert view["proof"]["text"].startswith("Proven best week")
    assert [d["weekday"] for d in view["days"]] == days
    seen = []
    for day in view["days"]:
        names = {c["name"] for c in day["clients"]}
        seen += names
        for name in names:  # every visit on a day its client is open
            hours = dict((p[0], p[3]) for p in PLACES)[name]
            assert _windows(hours.get(day["weekday"])) is not None
        # The day screen holds the same visits with a plan that is not stale.
        stored = client.get(f"/api/days/{day['date']}").json
        assert {c["name"] for c in stored["choices"]} == names
        if names:
            plan = stored["plan"]
            assert plan["feasible"] and not plan["stale"]
            assert plan["totals"]["km"] == pytest.approx(day["km"], abs=1e-9)
            assert {v["name"] for v in plan["visits"]} == names
            # Each day's own km is the best order of its clients (brute force).
            members = frozenset(k for k, p in enumerate(PLACES) if p[0] in names)
            assert day["km"] == pytest.approx(_day_best(day["weekday"], members)[0], abs=6e-4)
    assert sorted(seen) == sorted(p[0] for p in PLACES)
    assert _week(client)["totals"] == view["totals"]


def test_caps_pins_and_allowed_days_hold_and_still_match_the_brute_force(client, book):
    days = ["mon", "tue", "wed"]
    kiosk = book[4]
    view = _solve(client, {"clients": book, "days": days, "max_visits": 2,
                           "max_work_min": 420, "pins": {str(kiosk): "tue"}})
    truth = _brute_week(days, list(range(len(PLACES))), max_visits=2, max_work_min=420,
                        pins={4: "tue"})
    assert truth is not None
    assert view["totals"]["km"] == pytest.approx(truth, abs=KM_ROUNDING)
    on = _on(view)
    assert "Market Kiosk" in on["tue"]
    assert "Hillside Seeds" not in on["tue"]  # closed on Tuesdays
    assert "Meadow Florist" not in on["mon"] and "Valley Bulbs" not in on["wed"]
    for day in view["days"]:
        assert day["visits"] <= 2
        if day["visits"]:
            assert _clock(day["return"]) - DAY_START <= 420
    pinned = [c for d in view["days"] for c in d["clients"] if c["pinned"]]
    assert [c["name"] for c in pinned] == ["Market Kiosk"]


def test_repeated_visits_keep_their_gap(client, book):
    days = ["mon", "tue", "wed"]
    body = {"clients": [{"client_id": book[4], "visits": 2, "min_gap_days": 2}, book[1]],
            "days": days}
    view = _solve(client, body)
    on = _on(view)
    assert "Market Kiosk" in on["mon"] and "Market Kiosk" in on["wed"]
    assert "Market Kiosk" not in on["tue"]
    truth = _brute_week(days, [4, 1], visits={4: 2}, gaps={4: 2})
    assert view["totals"]["km"] == pytest.approx(truth, abs=KM_ROUNDING)


def test_one_visit_of_a_twice_weekly_client_moves_unpinned(client, book):
    body = {"clients": [{"client_id": book[4], "visits": 2}, book[1]],
            "days": ["mon", "tue", "wed"]}
    view = _solve(client, body)
    on = [d["weekday"] for d in view["days"] if "Market Kiosk" in {c["name"] for c in d["clients"]}]
    assert len(on) == 2
    free = next(w for w in ("mon", "tue", "wed") if w not in on)
    response = client.post(f"/api/weeks/{MONDAY}/move", json={"client_id": book[4]})
    assert response.status_code == 422  # on two days: which visit moves must be said
    assert [f["field"] for f in response.json["fields"]] == ["from", "to"]
    job = wait_job(client, client.post(f"/api/weeks/{MONDAY}/move",
                                       json={"client_id": book[4], "from": on[0], "to": free}))
    assert job["state"] == "done", job
    moved = _on(job["result"])
    assert "Market Kiosk" in moved[free] and "Market Kiosk" in moved[on[1]]
    assert not any(c["pinned"] for d in job["result"]["days"] for c in d["clients"])


def test_an_empty_body_works_the_stored_week_out_again(client, book):
    first = _solve(client, {"clients": book[:4], "days": ["mon", "tue"]})
    again = _solve(client)
    assert again["spec"] == first["spec"]
    assert again["totals"]["km"] == pytest.approx(first["totals"]["km"], abs=1e-9)


# ---------------------------------------------------------------------------- bad input


def _bad_bodies(ids):
    return [
        ("unknown client", {"clients": [ids[0], 999_999]}, 404, "clients[1]"),
        ("pin to a non-working day", {"clients": ids[:3], "days": ["mon", "tue"],
                                      "pins": {str(ids[1]): "sat"}}, 422, f"pins.{ids[1]}"),
        ("pin to a closed day", {"clients": ids[:3], "pins": {str(ids[0]): "tue"}}, 422,
         f"pins.{ids[0]}"),
        ("negative cap", {"clients": ids, "max_visits": -1}, 422, "max_visits"),
        ("zero work cap", {"clients": ids, "max_work_min": 0}, 422, "max_work_min"),
        ("gap longer than the week", {"clients": [{"client_id": ids[4], "visits": 2,
                                                   "min_gap_days": 3}],
                                      "days": ["mon", "tue", "wed"]}, 422,
         "clients[0].min_gap_days"),
        ("gap of more than a week", {"clients": [{"client_id": ids[4], "min_gap_days": 9}]},
         422, "clients[0].min_gap_days"),
        ("more visits than days", {"clients": [{"client_id": ids[4], "visits": 3}],
                                   "days": ["mon", "tue"]}, 422, "clients[0].visits"),
        ("unknown weekday", {"clients": ids, "days": ["mon", "funday"]}, 422, "days[1]"),
        ("client listed twice", {"clients": [ids[0], ids[0]]}, 422, "clients[1]"),
        ("no clients", {"clients": []}, 422, "clients"),
        ("closed on every working day", {"clients": [ids[0]], "days": ["tue"]}, 422,
         "clients[0]"),
        ("unknown field", {"clients": ids, "speed": 3}, 400, "speed"),
    ]


@pytest.mark.parametrize("case", range(13))
def test_bad_week_input_names_the_field_and_changes_nothing(client, book, conn, case):
    _solve(client, {"clients": book[:3], "days": ["mon", "wed"]})
    label, body, status, field = _bad_bodies(book)[case]
    before = dump(conn)
    response = client.post(f"/api/weeks/{MONDAY}/solve", json=body)
    assert response.status_code == status, (label, response.json)
    assert field in [f["field"] for f in response.json["fields"]], (label, response.json)
    assert dump(conn) == before, label


def test_a_week_is_named_by_its_monday(client, book):
    response = client.get("/api/weeks/2026-03-04")
    assert response.status_code == 422
    assert response.json["fields"][0]["field"] == "monday"
    assert "2026-03-02" in response.json["message"]  # names the Monday to use
    assert client.post("/api/weeks/2026-02-30/solve", json={"clients": book}).status_code == 422


def test_a_day_with_visits_done_is_not_replanned(client, book, conn):
    _solve(client, {"clients": book[:4], "days": ["mon", "tue"]})
    monday = _week(client)["days"][0]
    assert monday["visits"]
    cid = monday["clients"][0]["client_id"]
    assert client.put(f"/api/days/{monday['date']}/done/{cid}",
                      json={"arrived": "09:00", "departed": "09:30"}).status_code == 200
    before = dump(conn)
    response = client.post(f"/api/weeks/{MONDAY}/solve")
    assert response.status_code == 409 and "2026-03-02" in response.json["message"]
    assert dump(conn) == before


# ---------------------------------------------------------------------------- moves and quotes


def _members(view, weekday):
    names = next({c["name"] for c in d["clients"]} for d in view["days"]
                 if d["weekday"] == weekday)
    return frozenset(k for k, p in enumerate(PLACES) if p[0] in names)


def test_a_client_who_calls_is_priced_on_each_day_cheapest_first(client, book):
    days = ["mon", "tue", "wed"]
    view = _solve(client, {"clients": book[:5], "days": days})
    caller = book[5]  # Valley Bulbs: not due this week, closed on Wednesdays
    job = wait_job(client, client.post(f"/api/weeks/{MONDAY}/quote", json={"client_id": caller}))
    assert job["state"] == "done", job
    quotes = job["result"]["quotes"]
    fitting = [q for q in quotes if q["fits"]]
    assert [q["weekday"] for q in quotes if not q["fits"]] == ["wed"]
    assert "closed" in quotes[-1]["reason"]
    assert [q["extra_km"] for q in fitting] == sorted(q["extra_km"] for q in fitting)
    for q in fitting:  # the difference of two brute-force day optima
        members = _members(view, q["weekday"])
        base = _day_best(q["weekday"], members)[0] if members else 0.0
        with_it = _day_best(q["weekday"], members | {5})[0]
        assert q["extra_km"] == pytest.approx(with_it - base, abs=2e-3)
    # "I can come on the cheapest day": book it there.
    best = fitting[0]
    job = wait_job(client, client.post(f"/api/weeks/{MONDAY}/move",
                                       json={"client_id": caller, "to": best["weekday"]}))
    assert job["state"] == "done", job
    after = job["result"]
    assert "Valley Bulbs" in _on(after)[best["weekday"]]
    assert after["totals"]["km"] == pytest.approx(view["totals"]["km"] + best["extra_km"],
                                                  abs=KM_ROUNDING)
    stored = client.get(f"/api/days/{best['date']}").json
    assert [c["added_late"] for c in stored["choices"] if c["client_id"] == caller] == [True]
    assert after["proof"]["changed_text"]


def test_quotes_start_from_the_given_date(client, book):
    _solve(client, {"clients": book[:5], "days": ["mon", "tue", "wed"]})
    job = wait_job(client, client.post(f"/api/weeks/{MONDAY}/quote",
                                       json={"client_id": book[5], "from_date": "2026-03-03"}))
    quotes = {q["weekday"]: q for q in job["result"]["quotes"]}
    assert quotes["mon"]["fits"] is False and quotes["mon"]["reason"] == "already past"
    assert quotes["tue"]["fits"] is True


def test_a_move_shows_its_cost_first_then_moves_pins_and_survives_a_resolve(client, book):
    days = ["mon", "tue", "wed"]
    view = _solve(client, {"clients": book, "days": days})
    source = next(d for d in view["days"] if d["visits"] >= 2)
    mover = source["clients"][0]
    k = next(i for i, p in enumerate(PLACES) if p[0] == mover["name"])
    job = wait_job(client, client.post(f"/api/weeks/{MONDAY}/quote",
                                       json={"client_id": mover["client_id"]}))
    result = job["result"]
    assert result["from"] == source["weekday"]
    members = _members(view, source["weekday"])
    saving = _day_best(source["weekday"], members)[0] - (
        _day_best(source["weekday"], members - {k})[0] if members - {k} else 0.0)
    targets = [q for q in result["quotes"] if q["fits"]]
    assert targets, result
    for q in targets:
        there = _members(view, q["weekday"])
        extra = _day_best(q["weekday"], there | {k})[0] - (
            _day_best(q["weekday"], there)[0] if there else 0.0)
        assert q["net_km"] == pytest.approx(extra - saving, abs=2e-3)
    target = targets[0]
    job = wait_job(client, client.post(f"/api/weeks/{MONDAY}/move", json={
        "client_id": mover["client_id"], "to": target["weekday"]}))
    assert job["state"] == "done", job
    moved = job["result"]
    assert moved["totals"]["km"] == pytest.approx(view["totals"]["km"] + target["net_km"],
                                                  abs=KM_ROUNDING)
    assert mover["name"] in _on(moved)[target["weekday"]]
    assert mover["name"] not in _on(moved)[source["weekday"]]
    assert any(c["pinned"] for d in moved["days"] for c in d["clients"]
               if c["client_id"] == mover["client_id"])
    # The best week was moved away from: the proof says by how much.
    assert moved["proof"]["proven_optimal"] is False
    assert moved["proof"]["changed_text"].startswith("Changed by hand")
    for weekday in (source["weekday"], target["weekday"]):
        date = dt.date.fromisoformat(MONDAY) + dt.timedelta(days=WEEKDAYS.index(weekday))
        stored = client.get(f"/api/days/{date.isoformat()}").json
        assert stored["plan"] is None or not stored["plan"]["stale"]
    # Working the week out again keeps the pin: the best week with that client fixed there.
    again = _solve(client)
    assert mover["name"] in _on(again)[target["weekday"]]
    truth = _brute_week(days, list(range(len(PLACES))), pins={k: target["weekday"]})
    assert again["totals"]["km"] == pytest.approx(truth, abs=KM_ROUNDING)


def test_bad_moves_and_pins_name_the_field_and_change_nothing(client, book, conn):
    view = _solve(client, {"clients": book[:5], "days": ["mon", "tue", "wed"]})
    hillside = book[0]  # closed on Tuesdays
    on_day = next(d["weekday"] for d in view["days"]
                  if any(c["client_id"] == hillside for c in d["clients"]))
    before = dump(conn)
    cases = [
        ("move", {"client_id": hillside, "to": "tue"}, 422, "to"),
        ("move", {"client_id": hillside, "to": "sat"}, 422, "to"),
        ("move", {"client_id": hillside, "to": on_day}, 422, "to"),
        ("move", {"client_id": 999_999, "to": "mon"}, 404, "client_id"),
        ("move", {"client_id": hillside, "to": "mon", "pin": "yes"}, 422, "pin"),
        ("quote", {"client_id": "Hillside"}, 422, "client_id"),
        ("quote", {"client_id": hillside, "from_date": "2026-04-01"}, 422, "from_date"),
        ("pins", {"client_id": hillside, "day": "tue"}, 422, "day"),
        ("pins", {"client_id": hillside, "day": "sun"}, 422, "day"),
        ("pins", {"client_id": book[5], "day": "mon"}, 422, "client_id"),
    ]
    for route, body, status, field in cases:
        method = client.put if route == "pins" else client.post
        response = method(f"/api/weeks/{MONDAY}/{route}", json=body)
        assert response.status_code == status, (route, body, response.json)
        assert field in [f["field"] for f in response.json.get("fields", [])], response.json
        assert dump(conn) == before, (route, body)
    assert client.post("/api/weeks/2026-03-09/quote",
                       json={"client_id": hillside}).status_code == 404  # no such week


def test_pins_are_set_and_cleared(client, book):
    _solve(client, {"clients": book[:5], "days": ["mon", "tue", "wed"]})
    response = client.put(f"/api/weeks/{MONDAY}/pins", json={"client_id": book[4], "day": "wed"})
    assert response.status_code == 200
    assert {c["client_id"]: c["pin"] for c in response.json["spec"]["clients"]}[book[4]] == "wed"
    again = _solve(client)
    assert "Market Kiosk" in _on(again)["wed"]
    response = client.put(f"/api/weeks/{MONDAY}/pins", json={"client_id": book[4], "day": None})
    assert {c["client_id"]: c["pin"] for c in response.json["spec"]["clients"]}[book[4]] is None


# ---------------------------------------------------------------------------- the map


_INLINE = re.compile(r"<script(?![^>]*\bsrc\s*=)[^>]*>(.*?)</script>", re.S | re.I)


def test_the_week_map_lets_only_its_own_scripts_run(client, book):
    view = _solve(client, {"clients": book, "days": ["mon", "tue", "wed"]})
    response = client.get(view["map_url"])
    assert response.status_code == 200 and response.mimetype == "text/html"
    page = response.get_data(as_text=True)
    policy = response.headers["Content-Security-Policy"]
    inline = _INLINE.findall(page)
    assert inline
    for body in inline:  # CSP Level 3 §2.3.1 hash-source
        digest = base64.b64encode(hashlib.sha256(body.encode("utf-8")).digest()).decode()
        assert f"'sha256-{digest}'" in policy
    assert "'unsafe-inline'" not in policy.split("script-src")[1].split(";")[0]
    assert "default-src 'none'" in policy and "connect-src 'none'" in policy
    assert not re.search(r"(src|href)=[\"']?(https?:)?//", page)  # nothing from another host
    for day in view["days"]:
        if day["visits"]:
            assert day["name"] in page
    assert "never handle the phone while driving" in page.lower()
    assert client.get("/weeks/2026-03-03/map").status_code == 422


def test_the_week_page_and_its_tab(client, book):
    response = client.get("/week?week=2026-03-04")
    assert response.status_code == 200
    page = response.get_data(as_text=True)
    assert 'href="/week"' in page and "js/week.js" in page
    assert client.get("/week?week=2026-02-30").status_code == 422


@pytest.mark.parametrize(("name", "fields"), [
    ("WeekSolve", "FIELDS"), ("WeekQuote", "QUOTE_FIELDS"), ("WeekMove", "MOVE_FIELDS"),
    ("WeekPin", "PIN_FIELDS")])
def test_the_week_request_schemas_name_the_fields_the_handlers_accept(client, name, fields):
    # OpenAPI 3.1 Schema Object: additionalProperties false lists every accepted field.
    from webapp import weeks

    schema = client.get("/api/openapi.json").json["components"]["schemas"][name]
    assert set(schema["properties"]) == getattr(weeks, fields)
    assert schema["additionalProperties"] is False
