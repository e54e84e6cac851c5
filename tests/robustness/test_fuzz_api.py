"""Thousands of malformed and hostile requests to every endpoint: 4xx naming the field, never
a 5xx, and the database exactly as before (every row compared via ``iterdump``).

Generated with Hypothesis (derandomized, so CI sees the same cases every run) and with
schemathesis from the app's own OpenAPI description. Sources of the odd values: JSON allows
any number, lone surrogates and, in Python's reader, NaN/Infinity (RFC 8259 §6, §8.2; Python
``json`` docs); SQLite INTEGER is signed 64-bit (sqlite.org/datatype3.html); latitude is
-90..90 and longitude -180..180 degrees (WGS 84; RFC 5870 §3.4.2 for geo: URIs); clock times
are 00:00..24:00 (ISO 8601 §4.2.2, 24:00 as the end of the day).
"""

from __future__ import annotations

import json
import math
import string
from collections import Counter

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

pytestmark = pytest.mark.slow

WEDNESDAY = "2026-03-04"  # a Wednesday (ISO 8601 calendar)
HUGE = 10**30
TEN_MIB = 10 * 1024 * 1024
FULL_DUMP_EVERY = 5
FUZZ = settings(max_examples=120, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.function_scoped_fixture,
                                       HealthCheck.too_slow, HealthCheck.filter_too_much])
_TALLY = Counter()  # requests sent, server errors, refused requests that changed something


@pytest.fixture(scope="module", autouse=True)
def _figures(report):
    yield
    changed = "database unchanged" if not _TALLY["changed"] else (
        f"database CHANGED by {_TALLY['changed']} refused requests")
    report("fuzz", f"fuzz: {_TALLY['sent']} requests, {_TALLY['5xx']} server errors, "
                   f"{_TALLY['refused']} refused with 4xx, {changed} (every refusal: no "
                   f"commit; {_TALLY['dumps']} also compared row by row)")


class Door:
    """Sends one request through the real app and checks the answer and the database."""

    def __init__(self, world):
        self.world = world
        self.ids = _seed(world.client)

    def send(self, method: str, path: str, *, body=None, raw: bytes | None = None,
             content_type: str = "application/json", field: str | None = None,
             status: int | tuple[int, ...] | None = None):
        """``field``: the offending field the refusal must name; ``status``: what must come.

        After a refusal nothing may have been committed (PRAGMA data_version); every
        FULL_DUMP_EVERY-th request also compares every row before and after.
        """
        full = _TALLY["sent"] % FULL_DUMP_EVERY == 0
        before = self.world.dump() if full else None
        version = self.world.data_version()
        if raw is not None:
            response = self.world.client.open(path, method=method, data=raw,
                                              content_type=content_type)
        elif body is not None:
            response = self.world.client.open(path, method=method, data=_json(body),
                                              content_type=content_type)
        else:
            response = self.world.client.open(path, method=method)
        code = response.status_code
        _TALLY["sent"] += 1
        if code >= 500:
            _TALLY["5xx"] += 1
        assert code < 500, (method, path, body, raw and raw[:200], response.get_data()[:400])
        if status is not None:
            allowed = status if isinstance(status, tuple) else (status,)
            assert code in allowed, (method, path, body, code, response.json)
        if 400 <= code < 500:
            _TALLY["refused"] += 1
            assert response.is_json, (path, response.get_data()[:200])
            answer = response.json
            assert answer["error"] and answer["message"], answer
            if code in (400, 413, 422):
                named = [f["field"] for f in answer.get("fields", [])]
                assert named and all(f["message"] for f in answer["fields"]), answer
                if field is not None:
                    assert any(n == field or n.startswith(field + ".") or
                               n.startswith(field + "[") for n in named), (field, answer)
            changed = self.world.data_version() != version or (
                full and self.world.dump() != before)
            _TALLY["changed"] += changed
            _TALLY["dumps"] += full
            assert not changed, f"a refused {method} {path} changed the database"
        return response


def _json(body) -> bytes:
    """JSON text as a phone or a script could send it, NaN and Infinity tokens included."""
    return json.dumps(body, allow_nan=True).encode("utf-8", "surrogatepass")


def _seed(client) -> dict:
    """Home, two clients, a chosen day and one drive: something for bad requests to spoil."""
    assert client.put("/api/settings", json={"home": "47.36300, 0.73900", "break_min": 0,
                                             "time_limit_s": 5}).status_code == 200
    ids = []
    for name, where in (("Fuzz Mill", "47.40000, 0.70000"), ("Fuzz Ferry", "47.39000, 0.68000")):
        made = client.post("/api/clients", json={"name": name, "location": where,
                                                 "visit_min": 20,
                                                 "windows": {"wed": "08:00-17:00"}})
        assert made.status_code == 201, made.json
        ids.append(made.json["id"])
    assert client.put(f"/api/days/{WEDNESDAY}/visits",
                      json={"client_ids": ids}).status_code == 200
    assert client.put("/api/drives", json={"from": "home", "to": ids[0], "km": 5,
                                           "minutes": 9}).status_code == 200
    return {"clients": ids}


@pytest.fixture
def door(world):
    return Door(world)


# ---- values that are wrong for a field, by construction -----------------------------------

_ANY_JSON = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=30),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner,
                                                                max_size=4),
    max_leaves=10)
_NOT_TEXT = _ANY_JSON.filter(lambda v: not isinstance(v, str) and v is not None)
_NOT_NUMBER = _ANY_JSON.filter(lambda v: isinstance(v, bool) or not isinstance(v, int | float))
_NOT_BOOL = _ANY_JSON.filter(lambda v: not isinstance(v, bool))
_NON_FINITE = st.sampled_from([math.nan, math.inf, -math.inf])
# Control characters the text fields refuse; inside a word, so no strip() removes them.
_CONTROL = st.sampled_from(["\x00", "\x07", "\x08", "\x1b", "\r", "\x0b", "\x1f"])
_LONE_SURROGATE = st.sampled_from(["\ud800", "\udfff", "\udbff"])


def _number_outside(low: float, high: float, *, integer: bool = False):
    """Numbers a field with bounds low..high must refuse (non-whole ones too if ``integer``)."""
    beyond = (st.floats(max_value=low, exclude_max=True, allow_nan=False)
              | st.floats(min_value=high, exclude_min=True, allow_nan=False)
              | st.integers(max_value=math.floor(low) - 1)
              | st.integers(min_value=math.ceil(high) + 1)
              | st.sampled_from([HUGE, -HUGE, 2**63, -(2**63) - 1]) | _NON_FINITE | _NOT_NUMBER)
    if integer:
        whole = st.floats(min_value=low, max_value=high).filter(lambda v: v != int(v))
        beyond = beyond | whole
    return beyond


def _bad_text(max_len: int, *, required: bool):
    too_long = st.integers(max_len + 1, max_len + 400).map(lambda n: "x" * n)
    with_control = _CONTROL.map(lambda c: f"a{c}b")
    with_surrogate = st.tuples(st.text(max_size=5), _LONE_SURROGATE).map("".join)
    bad = _NOT_TEXT | too_long | with_control | with_surrogate
    if required:
        bad = bad | st.none() | st.sampled_from(["", " ", "\t\n", "\u3000"]).filter(
            lambda s: not s.strip())
    return bad


_DIGITLESS = st.text(alphabet=st.characters(blacklist_categories=("Nd", "No", "Nl", "Cs")),
                     max_size=40)


def _deg(lo: float, hi: float):
    return st.floats(min_value=lo, max_value=hi, allow_nan=False).map(lambda v: f"{v:.6f}")


_LAT_OUT = (st.floats(min_value=90.001, max_value=1e6) | st.floats(min_value=-1e6,
                                                                     max_value=-90.001))
_LON_OUT = (st.floats(min_value=180.001, max_value=1e6) | st.floats(min_value=-1e6,
                                                                      max_value=-180.001))
# Positions no reader may accept: out of range, non-finite, one number, no digits at all.
_BAD_LOCATION = st.one_of(
    st.tuples(_LAT_OUT, _deg(-180, 180)).map(lambda p: f"{p[0]:.6f}, {p[1]}"),
    st.tuples(_deg(-90, 90), _LON_OUT).map(lambda p: f"{p[0]}, {p[1]:.6f}"),
    st.tuples(_LAT_OUT, _deg(-180, 180)).map(lambda p: f"geo:{p[0]:.6f},{p[1]}"),
    st.tuples(_deg(-90, 90), _LON_OUT).map(lambda p: f"geo:{p[0]},{p[1]:.6f}"),
    st.sampled_from(["nan, 0", "0, nan", "inf, 0", "-inf, 1", "1e999, 0", "geo:", "geo:47.1",
                     "geo:nan,nan", ",", "47.1,", ", 0.7", "47.1", "91 N, 0 E", "0 N, 181 E",
                     "47°61' N, 0° E", "47° 10' 61\" N, 0° E", "", "   "]),
    _deg(-90, 90),
    _DIGITLESS,
    _NOT_TEXT.filter(lambda v: not isinstance(v, dict)),
    st.fixed_dictionaries({"lat": _LAT_OUT | _NON_FINITE | _NOT_NUMBER,
                           "lon": st.floats(-180, 180)}),
    st.fixed_dictionaries({"lat": st.floats(-90, 90),
                           "lon": _LON_OUT | _NON_FINITE | _NOT_NUMBER}),
    st.fixed_dictionaries({"lat": st.floats(-90, 90), "lon": st.floats(-180, 180),
                           "alt": st.integers()}),
)
_CLOCK_OK = st.tuples(st.integers(0, 23), st.integers(0, 59)).map(
    lambda hm: f"{hm[0]:02d}:{hm[1]:02d}")
# Clock times that are not 00:00..24:00 HH:MM.
_BAD_CLOCK = st.one_of(
    st.tuples(st.integers(25, 99), st.integers(0, 59)).map(lambda hm: f"{hm[0]}:{hm[1]:02d}"),
    st.tuples(st.integers(0, 23), st.integers(60, 99)).map(lambda hm: f"{hm[0]:02d}:{hm[1]}"),
    st.integers(1, 59).map(lambda m: f"24:{m:02d}"),
    st.sampled_from(["", "8", "8h30", "08-30", "-1:00", "08:3", "008:30", "noon", "08:30 PM",
                     "08:30:00"]),
    _DIGITLESS, _NOT_TEXT,
)
_BACKWARDS_WINDOW = st.tuples(_CLOCK_OK, _CLOCK_OK).filter(lambda w: w[1] < w[0]).map(
    lambda w: f"{w[0]}-{w[1]}")
_BAD_WINDOW_TEXT = st.one_of(
    _BACKWARDS_WINDOW,
    st.tuples(_BAD_CLOCK.filter(lambda v: isinstance(v, str) and v.strip()), _CLOCK_OK).map(
        lambda w: f"{w[0]}-{w[1]}"),
    st.sampled_from(["09:00", "09:00-", "-17:00", "09:00-10:00-11:00", "09:00-12:00, 11:00-13:00",
                     "open", "always", "23:00-01:00"]),
)
_WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
_BAD_WINDOWS = st.one_of(
    st.tuples(st.sampled_from(_WEEKDAYS), _BAD_WINDOW_TEXT).map(lambda p: {p[0]: p[1]}),
    st.tuples(st.sampled_from(_WEEKDAYS), _NOT_TEXT).map(lambda p: {p[0]: p[1]}),
    st.text(min_size=1, max_size=10).filter(lambda k: k not in _WEEKDAYS).map(
        lambda k: {k: "09:00-12:00"}),
    _NOT_TEXT.filter(lambda v: not isinstance(v, dict)),
    st.text(min_size=1, max_size=20),
)
# A version names a stored row's change count: a whole number 1..2^63-1 (SQLite INTEGER).
_BAD_VERSION = st.one_of(st.integers(max_value=0), st.integers(min_value=2**63),
                         st.floats(0.5, 1e6).filter(lambda v: v != int(v)), _NON_FINITE,
                         _NOT_NUMBER)
_NOT_AN_ID = st.one_of(st.integers(max_value=0), st.integers(min_value=2**63),
                       st.floats(), st.booleans(), st.text(max_size=10).filter(
                           lambda s: s != "home"), st.lists(st.integers(1, 3), max_size=2),
                       st.none())

_CLIENT_FIELDS = {
    "name": _bad_text(120, required=True),
    "location": _BAD_LOCATION,
    "visit_min": _number_outside(1, 720, integer=True),
    "windows": _BAD_WINDOWS,
    "notes": _bad_text(2000, required=False),
    "active": _NOT_BOOL,
}
_GOOD_CLIENT = {"name": "Fresh One", "location": "47.41, 0.71", "visit_min": 15,
                "windows": {"mon": "09:00-12:00"}, "notes": "", "active": True}


@st.composite
def _client_with_one_wrong_field(draw):
    field = draw(st.sampled_from(sorted(_CLIENT_FIELDS)))
    body = dict(_GOOD_CLIENT)
    body[field] = draw(_CLIENT_FIELDS[field])
    return field, body


@FUZZ
@given(case=_client_with_one_wrong_field())
def test_a_new_client_with_one_wrong_field_is_refused_naming_it(door, case):
    field, body = case
    door.send("POST", "/api/clients", body=body, field=field, status=(400, 422))


@FUZZ
@given(case=_client_with_one_wrong_field(), version=st.none() | _BAD_VERSION)
def test_a_client_change_with_one_wrong_field_is_refused_naming_it(door, case, version):
    field, body = case
    change = {field: body[field]}
    if version is not None:
        change["version"] = version
    door.send("PUT", f"/api/clients/{door.ids['clients'][0]}", body=change, field=field,
              status=(400, 422))


_SETTINGS_FIELDS = {
    "rep_name": _bad_text(80, required=False),
    "home_label": _bad_text(80, required=True),
    "home": _BAD_LOCATION,
    "day_start": _BAD_CLOCK, "day_end": _BAD_CLOCK,
    "break_from": _BAD_CLOCK, "break_until": _BAD_CLOCK,
    "break_min": _number_outside(0, 480, integer=True),
    "speed_kmh": _number_outside(0, 200) | st.just(0),
    "detour_factor": _number_outside(1, 3),
    "distance_mode": _ANY_JSON.filter(lambda v: v not in ("geodesic", "great-circle")),
    "objective": _ANY_JSON.filter(lambda v: v not in ("km", "return")),
    "time_zone": _NOT_TEXT | _DIGITLESS.filter(lambda s: "/" not in s and s.strip() != "UTC"
                                               and s.strip().upper() not in ("GMT", "UCT",
                                                                             "ZULU")),
    "time_limit_s": _number_outside(0, 300) | st.just(0),
    "version": _BAD_VERSION,
}


@FUZZ
@given(field=st.sampled_from(sorted(_SETTINGS_FIELDS)), data=st.data())
def test_a_settings_change_with_one_wrong_field_is_refused_naming_it(door, field, data):
    value = data.draw(_SETTINGS_FIELDS[field])
    if field == "time_zone" and isinstance(value, str):
        import zoneinfo

        if value.strip() in zoneinfo.available_timezones():
            return  # a real zone name drawn by chance is not wrong
    if field == "home" and value is None:
        return  # null clears home: allowed
    door.send("PUT", "/api/settings", body={field: value}, field=field, status=(400, 422))


@FUZZ
@given(start=_CLOCK_OK, end=_CLOCK_OK)
def test_a_working_day_that_ends_before_it_starts_is_refused(door, start, end):
    if end > start:
        return
    door.send("PUT", "/api/settings", body={"day_start": start, "day_end": end},
              field="day_end", status=422)


_DRIVE_FIELDS = {
    "from": _NOT_AN_ID, "to": _NOT_AN_ID,
    "km": _number_outside(0, 5000).filter(lambda v: v is not None),
    "minutes": _number_outside(0, 1440).filter(lambda v: v is not None),
    "both_ways": _NOT_BOOL,
}


@FUZZ
@given(field=st.sampled_from(sorted(_DRIVE_FIELDS)), data=st.data())
def test_a_drive_with_one_wrong_field_is_refused_naming_it(door, field, data):
    body = {"from": "home", "to": door.ids["clients"][1], "km": 4.5, "minutes": 8}
    body[field] = data.draw(_DRIVE_FIELDS[field])
    door.send("PUT", "/api/drives", body=body, field=field, status=(400, 404, 422))


@FUZZ
@given(missing=st.integers(3, 2**63 - 1), end=st.sampled_from(["from", "to"]))
def test_a_drive_for_a_client_that_does_not_exist_is_404_naming_the_end(door, missing, end):
    body = {"from": door.ids["clients"][0], "to": "home", "km": 3}
    body[end] = missing
    answer = door.send("PUT", "/api/drives", body=body, status=404).json
    assert answer["fields"][0]["field"] == end and answer["fields"][0]["value"] == missing


@FUZZ
@given(arrived=_CLOCK_OK, departed=_CLOCK_OK)
def test_a_visit_done_that_ends_before_it_starts_is_refused(door, arrived, departed):
    if departed >= arrived:
        return
    client_id = door.ids["clients"][0]
    door.send("PUT", f"/api/days/{WEDNESDAY}/done/{client_id}",
              body={"arrived": arrived, "departed": departed}, field="departed", status=422)


@FUZZ
@given(which=st.sampled_from(["arrived", "departed"]), bad=_BAD_CLOCK)
def test_a_visit_done_with_a_wrong_time_is_refused_naming_it(door, which, bad):
    body = {"arrived": "09:00", "departed": "09:30", which: bad}
    door.send("PUT", f"/api/days/{WEDNESDAY}/done/{door.ids['clients'][1]}", body=body,
              field=which, status=(400, 422))


_DAY_BODIES = st.one_of(
    st.fixed_dictionaries({"client_ids": _NOT_TEXT.filter(lambda v: not isinstance(v, list))}),
    st.fixed_dictionaries({"client_ids": st.lists(_NOT_AN_ID, min_size=1, max_size=4)}),
    st.fixed_dictionaries({"client_ids": st.integers(61, 5000).map(lambda n: [1] * n)}),
    st.fixed_dictionaries({"client_ids": st.integers(1, 2).map(lambda k: [k, k])}),
)


@FUZZ
@given(body=_DAY_BODIES)
def test_a_wrong_choice_of_visits_is_refused(door, body):
    door.send("PUT", f"/api/days/{WEDNESDAY}/visits", body=body, field="client_ids",
              status=(404, 422))


_REPLAN_FIELDS = {"from": _BAD_LOCATION.filter(lambda v: v != "home"), "now": _BAD_CLOCK,
                  "break_taken": _NOT_BOOL}


@FUZZ
@given(field=st.sampled_from(sorted(_REPLAN_FIELDS)), data=st.data(),
       route=st.sampled_from(["replan", "quote"]))
def test_a_wrong_replan_or_quote_is_refused_and_starts_no_solve(door, field, data, route):
    body = {field: data.draw(_REPLAN_FIELDS[field])}
    if route == "quote":
        body["client_id"] = door.ids["clients"][0]
    if field == "from" and isinstance(body["from"], int) and not isinstance(body["from"], bool):
        return  # a whole number is a client id: that is a 404, tested with ids below
    door.send("POST", f"/api/days/{WEDNESDAY}/{route}", body=body, field=field,
              status=(400, 404, 422))


@FUZZ
@given(client_id=_NOT_AN_ID | st.integers(3, 2**63 - 1), route=st.sampled_from(
    ["visits", "quote"]))
def test_a_visit_or_quote_for_no_client_is_refused(door, client_id, route):
    door.send("POST", f"/api/days/{WEDNESDAY}/{route}", body={"client_id": client_id},
              status=(404, 422), field="client_id")


_PATH_TEXT = st.text(alphabet=st.characters(blacklist_categories=("Cs",)), min_size=1,
                     max_size=30).filter(lambda s: "/" not in s and s not in (".", ".."))


@FUZZ
@given(date=_PATH_TEXT, tail=st.sampled_from(["", "/visits", "/solve", "/replan"]))
def test_odd_dates_in_the_path_are_refused(door, date, tail):
    import datetime as dt

    try:
        dt.date.fromisoformat(date)
        return  # a real date drawn by chance
    except ValueError:
        pass
    from urllib.parse import quote

    method = "GET" if tail == "" else ("PUT" if tail == "/visits" else "POST")
    body = {"client_ids": []} if tail == "/visits" else ({} if tail else None)
    door.send(method, f"/api/days/{quote(date, safe='')}{tail}", body=body,
              status=(400, 404, 405, 422))


@FUZZ
@given(client_id=st.one_of(st.integers(max_value=0), st.integers(min_value=3),
                           _PATH_TEXT.filter(lambda s: not s.isdigit())))
def test_odd_ids_in_the_path_are_404(door, client_id):
    from urllib.parse import quote

    door.send("GET", f"/api/clients/{quote(str(client_id), safe='')}", status=(404, 405))
    door.send("PUT", f"/api/clients/{quote(str(client_id), safe='')}", body={"notes": "x"},
              status=(404, 405))


@FUZZ
@given(raw=st.one_of(
    st.binary(max_size=200),
    st.text(max_size=100).map(lambda s: s.encode("utf-8")),
    st.sampled_from([b"", b"null", b"[]", b"42", b'"text"', b"{", b'{"a":}', b"\xef\xbb\xbf{}",
                     b'{"name": NaN}', b"[" * 50_000, b'{"a": 1, "a": 2}']),
    _ANY_JSON.filter(lambda v: not isinstance(v, dict)).map(_json),
), target=st.sampled_from([("PUT", "/api/settings"), ("POST", "/api/clients"),
                           ("PUT", "/api/clients/1"), ("PUT", "/api/drives"),
                           ("PUT", f"/api/days/{WEDNESDAY}/visits"),
                           ("POST", f"/api/days/{WEDNESDAY}/visits"),
                           ("PUT", f"/api/days/{WEDNESDAY}/done/1"),
                           ("POST", f"/api/days/{WEDNESDAY}/replan"),
                           ("POST", "/api/parse-location")]),
   content_type=st.sampled_from(["application/json", "text/plain", "application/x-www-form"
                                 "-urlencoded", "application/json; charset=latin-1"]))
def test_bodies_that_are_not_a_json_object_are_400(door, raw, target, content_type):
    method, path = target
    try:
        parsed = json.loads(raw)
    except (ValueError, RecursionError):
        parsed = None
    if isinstance(parsed, dict) and content_type.startswith("application/json"):
        return  # an object by chance: checked field by field above
    door.send(method, path, raw=raw, content_type=content_type, status=(400, 422))


@FUZZ
@given(unknown=st.text(min_size=1, max_size=20), value=_ANY_JSON,
       target=st.sampled_from([("PUT", "/api/settings", set()), ("POST", "/api/clients", set()),
                               ("PUT", "/api/drives", set())]))
def test_unknown_fields_are_400_naming_them(door, unknown, value, target):
    method, path, _ = target
    from webapp import clients, drives, settings

    known = {"/api/settings": settings.FIELDS, "/api/clients": clients.FIELDS,
             "/api/drives": drives.FIELDS}[path]
    if unknown in known:
        return
    door.send(method, path, body={unknown: value}, field=unknown, status=400)


@FUZZ
@given(query=st.dictionaries(st.sampled_from(["q", "active"]), st.one_of(
    st.text(min_size=121, max_size=300), st.text(max_size=10).filter(
        lambda s: s not in ("true", "false")), _CONTROL), min_size=1))
def test_odd_client_searches_are_refused_or_answered(door, query):
    from urllib.parse import urlencode

    door.send("GET", "/api/clients?" + urlencode(query), status=(200, 422))


@FUZZ
@given(row=st.fixed_dictionaries({
    "name": st.sampled_from(["Ok Name", "", "x" * 121]),
    "lat": st.sampled_from(["47.1", "91", "abc", ""]),
    "lon": st.sampled_from(["0.7", "181", "-", ""]),
    "visit_min": st.sampled_from(["10", "0", "-5", "7.5", "x", "721", ""]),
    "wed": st.sampled_from(["", "closed", "12:00-09:00", "9-5", "09:00-10:00"]),
    "active": st.sampled_from(["yes", "no", "maybe", ""]),
}))
def test_a_csv_import_with_a_bad_cell_stores_nothing(door, row):
    good = ("Ok Name", "47.1", "0.7", "10", "", "yes")
    values = (row["name"], row["lat"], row["lon"], row["visit_min"], row["wed"], row["active"])
    if values[:4] == good[:4] and values[4] in ("", "closed", "09:00-10:00") and \
            values[5] in ("yes", "no", ""):
        return  # a good row: it would be imported
    text = ("name,lat,lon,visit_min,wed,active\r\nGood Row,47.2,0.6,15,,yes\r\n"
            + ",".join(values) + "\r\n")
    door.send("POST", "/api/clients/import", raw=text.encode("utf-8"), content_type="text/csv",
              status=422)


# ---- accepted odd input: stored exactly as it reads ---------------------------------------

_ODD_NAMES = st.one_of(
    st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc")), min_size=1,
            max_size=60),
    st.sampled_from(["\u202eevil", "e\u0301cole", "\U0001F69A Van", "\ufeffBOM", "名前",
                     "\u200bzero width", "Ω≈ç√", "ﷺ", "a\u0000b"]),
)


@FUZZ
@given(name=_ODD_NAMES)
def test_unicode_names_are_stored_exactly_or_refused_naming_the_field(door, name):
    response = door.send("POST", "/api/clients", body={
        "name": name, "location": "47.5, 0.5", "visit_min": 10}, field="name",
        status=(201, 422))
    if response.status_code == 201:
        stored = door.world.client.get(f"/api/clients/{response.json['id']}").json
        assert stored["name"] == name.strip()  # Python str.strip (Unicode White_Space)


_DECIMALS = st.integers(0, 8)
_PAIR = st.tuples(st.floats(-90, 90), st.floats(-180, 180), _DECIMALS).map(
    lambda p: (f"{p[0]:.{p[2]}f}", f"{p[1]:.{p[2]}f}"))
# (text, the position it must read as or None, whether it must be read at all)
_ODD_POSITIONS = st.one_of(
    _PAIR.map(lambda p: (f"{p[0]}, {p[1]}", (float(p[0]), float(p[1])), True)),
    _PAIR.map(lambda p: (f" \t{p[0]},  {p[1]}\n", (float(p[0]), float(p[1])), True)),
    # RFC 5870 §3.3: geo:lat,lon[,alt] with parameters after ';' (crs, u, others).
    st.tuples(_PAIR, st.sampled_from(["", ";u=12", ";crs=wgs84", ",120", ";u=0;foo=bar"])).map(
        lambda p: (f"geo:{p[0][0]},{p[0][1]}{p[1]}", (float(p[0][0]), float(p[0][1])), True)),
    st.text(alphabet=string.digits + " .,;:-+°'\"NSEWnsewgeo", max_size=30).map(
        lambda t: (t, None, False)),
)


@FUZZ
@given(case=_ODD_POSITIONS)
def test_coordinate_text_of_every_shape_reads_right_or_is_refused(door, case):
    text, expected, must_read = case
    response = door.send("POST", "/api/parse-location", body={"text": text}, field="text",
                         status=(200, 422))
    if response.status_code != 200:
        assert not must_read, (text, response.json)
        return
    got = response.json
    assert -90 <= got["lat"] <= 90 and -180 <= got["lon"] <= 180
    assert math.isfinite(got["lat"]) and math.isfinite(got["lon"])
    if expected is not None:  # RFC 5870 §3.4.2: latitude first, decimal degrees
        assert got["lat"] == pytest.approx(expected[0], abs=1e-9)
        assert got["lon"] == pytest.approx(expected[1], abs=1e-9)


# ---- size: 10 MiB bodies ------------------------------------------------------------------

_WRITES = [("PUT", "/api/settings"), ("POST", "/api/clients"), ("PUT", "/api/clients/1"),
           ("PUT", "/api/drives"), ("POST", "/api/clients/import"),
           ("PUT", f"/api/days/{WEDNESDAY}/visits"), ("POST", f"/api/days/{WEDNESDAY}/replan"),
           ("PUT", f"/api/days/{WEDNESDAY}/done/1"), ("POST", "/api/parse-location")]


@pytest.mark.parametrize(("method", "path"), _WRITES)
def test_ten_mib_bodies_are_413_with_the_limit_named(door, method, path):
    # RFC 9110 §15.5.14: 413 Content Too Large.
    body = b'{"notes": "' + b"x" * TEN_MIB + b'"}'
    answer = door.send(method, path, raw=body, field="body", status=413).json
    assert "2 MiB" in answer["message"]


# ---- schemathesis: requests made from the OpenAPI description itself ----------------------


def test_requests_made_from_the_openapi_description(door):
    """Both request kinds schemathesis makes: fitting the schema and breaking it."""
    schemathesis = pytest.importorskip("schemathesis")
    from schemathesis import GenerationMode

    schema = schemathesis.openapi.from_wsgi("/api/openapi.json", door.world.app)
    seen = Counter()

    def check_every(mode, examples):
        @settings(max_examples=examples, deadline=None, derandomize=True,
                  suppress_health_check=list(HealthCheck))
        @given(case=schema.as_strategy(generation_mode=mode))
        def run(case):
            full = _TALLY["sent"] % FULL_DUMP_EVERY == 0
            before = door.world.dump() if full else None
            version = door.world.data_version()
            response = case.call()
            _TALLY["sent"] += 1
            seen[(mode.value, response.status_code // 100)] += 1
            if response.status_code >= 500:
                _TALLY["5xx"] += 1
            assert response.status_code < 500, (case.method, case.formatted_path, case.body,
                                                response.text[:300])
            if 400 <= response.status_code < 500:
                _TALLY["refused"] += 1
                if case.path.startswith("/api/"):
                    answer = response.json()
                    assert answer["error"] and answer["message"], answer
                changed = door.world.data_version() != version or (
                    full and door.world.dump() != before)
                _TALLY["changed"] += changed
                _TALLY["dumps"] += full
                assert not changed, (case.method, case.formatted_path, case.body)

        return run

    for mode, examples in ((GenerationMode.NEGATIVE, 220), (GenerationMode.POSITIVE, 80)):
        check_every(mode, examples)()
    assert seen[("negative", 4)] > 0 and seen[("positive", 2)] > 0, seen
