"""Storage of the rep's settings: home, working day, break, driving model, objective."""

from __future__ import annotations

import functools
import zoneinfo

from solver.clock import format_clock
from solver.day import OBJECTIVES
from solver.distances import DISTANCE_MODES, build_travel_matrix

from . import versions
from .db import transaction
from .fields import SKIP, Checker
from .locations import position_json, read_location

__all__ = ["FIELDS", "load", "as_json", "update", "MAX_TIME_LIMIT_S"]

FIELDS = {"rep_name", "home_label", "home", "day_start", "day_end", "break_min", "break_from",
          "break_until", "speed_kmh", "detour_factor", "distance_mode", "objective",
          "time_zone", "time_limit_s", versions.FIELD}
MAX_TIME_LIMIT_S = 300.0  # the page keeps polling; five minutes is the most a rep will wait
MAX_BREAK_MIN = 480


def load(conn) -> dict:
    """The settings row as a plain dict (column names)."""
    return dict(conn.execute("SELECT * FROM settings WHERE id = 1").fetchone())


def as_json(row: dict) -> dict:
    """The settings as the API shows them: clock times as HH:MM, home with its texts."""
    home = None if row["home_lat"] is None else position_json(row["home_lat"], row["home_lon"])
    return {
        "rep_name": row["rep_name"],
        "home_label": row["home_label"],
        "home": home,
        "day_start": format_clock(row["day_start_min"]),
        "day_end": format_clock(row["day_end_min"]),
        "break_min": row["break_min"],
        "break_from": format_clock(row["break_from_min"]),
        "break_until": format_clock(row["break_until_min"]),
        "speed_kmh": row["speed_kmh"],
        "detour_factor": row["detour_factor"],
        "distance_mode": row["distance_mode"],
        "objective": row["objective"],
        "time_zone": row["time_zone"],
        "time_limit_s": row["time_limit_s"],
        "is_demo": bool(row["is_demo"]),
        "version": row["version"],
    }


def update(conn, body: dict) -> dict:
    """Change the fields given in ``body`` (others keep their value); all or nothing.

    With ``version`` the change applies only if the settings are still at that version (409).
    """
    check = Checker(body)
    expected = versions.read(check, body)
    # Read, merge and write under one lock: two devices changing different fields keep both.
    with transaction(conn):
        current = load(conn)
        new = _merged(check, body, current)
        versions.ensure_current(expected, "the settings", lambda: as_json(current))
        conn.execute(
            "UPDATE settings SET rep_name=?, home_label=?, home_lat=?, home_lon=?, "
            "day_start_min=?, day_end_min=?, break_min=?, break_from_min=?, break_until_min=?, "
            "speed_kmh=?, detour_factor=?, distance_mode=?, objective=?, time_zone=?, "
            "time_limit_s=?, version = version + 1 WHERE id = 1",
            (new["rep_name"], new["home_label"], new["home_lat"], new["home_lon"],
             new["day_start_min"], new["day_end_min"], new["break_min"], new["break_from_min"],
             new["break_until_min"], new["speed_kmh"], new["detour_factor"],
             new["distance_mode"], new["objective"], new["time_zone"], new["time_limit_s"]),
        )
    return load(conn)


def _merged(check: Checker, body: dict, current: dict) -> dict:
    """The stored row with the fields of ``body`` put in; every mistake raises at once."""
    new = dict(current)
    if check.has("rep_name"):
        new["rep_name"] = check.text("rep_name", max_len=80)
    if check.has("home_label"):
        new["home_label"] = check.text("home_label", max_len=80, required=True)
    if check.has("home"):
        if body["home"] is None:
            new["home_lat"] = new["home_lon"] = None
        else:
            pos = read_location(check, "home", body["home"])
            if pos is not None:
                new["home_lat"], new["home_lon"] = pos.lat, pos.lon
    for name, column in (("day_start", "day_start_min"), ("day_end", "day_end_min"),
                         ("break_from", "break_from_min"), ("break_until", "break_until_min")):
        if check.has(name):
            new[column] = check.clock(name)
    if check.has("break_min"):
        new["break_min"] = check.number("break_min", low=0, high=MAX_BREAK_MIN, integer=True,
                                        unit="min")
    if check.has("speed_kmh"):
        speed = body["speed_kmh"]
        if check.run("speed_kmh", build_travel_matrix, [], speed_kmh=speed) is not SKIP:
            new["speed_kmh"] = float(speed)
    if check.has("detour_factor"):
        factor = body["detour_factor"]
        if check.run("detour_factor", build_travel_matrix, [], detour_factor=factor) is not SKIP:
            new["detour_factor"] = float(factor)
    if check.has("distance_mode"):
        new["distance_mode"] = check.choice("distance_mode", DISTANCE_MODES)
    if check.has("objective"):
        new["objective"] = check.choice("objective", OBJECTIVES)
    if check.has("time_zone"):
        new["time_zone"] = _time_zone(check, body["time_zone"])
    if check.has("time_limit_s"):
        new["time_limit_s"] = check.number("time_limit_s", low=0, low_open=True,
                                           high=MAX_TIME_LIMIT_S, unit="s")
    check.done()
    _check_day(check, new)
    check.done()
    return new


def _time_zone(check: Checker, value):
    if not isinstance(value, str) or not value.strip():
        check.fail("time_zone", f"time_zone is {value!r}; expected an IANA name such as "
                   "Europe/Paris", value if isinstance(value, str) else None)
        return None
    if value.strip() not in _zone_names():
        check.fail("time_zone", f"time_zone {value[:80]!r} is not a known IANA time zone; "
                   "expected e.g. Europe/Paris", value[:80])
        return None
    return value.strip()


@functools.cache
def _zone_names() -> frozenset[str]:
    """The IANA names this machine knows (system zoneinfo or the tzdata package)."""
    return frozenset(zoneinfo.available_timezones())


def _check_day(check: Checker, new: dict) -> None:
    if new["day_end_min"] <= new["day_start_min"]:
        check.fail("day_end", f"the day ends at {format_clock(new['day_end_min'])}, not after "
                   f"it starts at {format_clock(new['day_start_min'])}",
                   format_clock(new["day_end_min"]))
    if new["break_min"]:
        room = new["break_until_min"] - new["break_from_min"]
        if room < new["break_min"]:
            check.fail("break_until", f"a break of {new['break_min']} min does not fit between "
                       f"{format_clock(new['break_from_min'])} and "
                       f"{format_clock(new['break_until_min'])}",
                       format_clock(new["break_until_min"]))
