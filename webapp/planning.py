"""Turns what is stored into the solver's day problem, and the solver's answer into records."""

from __future__ import annotations

import datetime as dt
import time
import zoneinfo
from dataclasses import dataclass

from solver.clock import format_clock, format_windows
from solver.day import BreakRule, DayProblem, DayRules, Visit
from solver.day_exact import plan_day, quote_extra_visit
from solver.distances import build_travel_matrix
from solver.errors import Infeasible

from . import clients, drives, plans, settings
from .errors import FieldErrors
from .fields import Checker, is_id
from .locations import read_location

__all__ = ["SolveInput", "gather", "read_start", "solve", "quote", "now_min"]


@dataclass(frozen=True)
class SolveInput:
    """A day problem for the solver, and the same facts as JSON to keep beside the result."""

    problem: DayProblem
    inputs: dict
    time_limit_s: float
    candidate_node: int | None = None


@dataclass(frozen=True)
class Start:
    """Where the plan begins: home, a client, or a position the rep gave."""

    label: str
    client_id: int | None = None
    lat: float | None = None
    lon: float | None = None
    at_home: bool = False


def now_min(conn) -> int:
    """The laptop's clock in the rep's time zone, minutes after midnight."""
    zone = zoneinfo.ZoneInfo(settings.load(conn)["time_zone"])
    now = dt.datetime.now(zone)
    return now.hour * 60 + now.minute


def read_start(conn, body: dict) -> tuple[Start, int | None, bool]:
    """The re-plan fields: ``from`` (home, a client id, or a position), ``now``, ``break_taken``."""
    check = Checker(body)
    where = body.get("from", "home")
    start = None
    if where == "home":
        start = Start(label=settings.load(conn)["home_label"], at_home=True)
    elif is_id(where):
        client = clients.get(conn, where, field="from")
        start = Start(label=client["name"], client_id=where, lat=client["location"]["lat"],
                      lon=client["location"]["lon"])
    else:
        pos = read_location(check, "from", where)
        if pos is not None:
            start = Start(label="where you are", lat=pos.lat, lon=pos.lon)
    minute = check.clock("now") if "now" in body else None
    taken = check.boolean("break_taken") if "break_taken" in body else False
    check.done()
    return start, minute, bool(taken)


def gather(conn, date: dt.date, *, kind: str, start: Start | None = None,
           start_min: int | None = None, break_taken: bool = False,
           candidate_id: int | None = None) -> SolveInput:
    """Snapshot settings, the chosen clients, their hours that weekday and the rep's drives."""
    row = settings.load(conn)
    if row["home_lat"] is None:
        raise FieldErrors.one("home", "home is not set; enter it under Settings first")
    day_choices = plans.choices(conn, date)
    if kind == "day":
        plans.ensure_not_started(day_choices)
    check = Checker()
    for c in day_choices:
        if c["closed"]:
            check.fail("client_ids", f"{c['name']!r} is closed on {date.strftime('%A')}s; "
                       "take it off this day", c["client_id"])
        elif not c["active"]:
            check.fail("client_ids", f"{c['name']!r} is not active; take it off this day",
                       c["client_id"])
    done_ids = {c["client_id"] for c in day_choices if c["done"]}
    chosen = list(day_choices)
    if candidate_id is not None:
        if any(c["client_id"] == candidate_id for c in chosen):
            check.fail("client_id", "this client is already in the day", candidate_id)
        client = clients.get(conn, candidate_id, field="client_id")
        hours = clients.windows_on(conn, [candidate_id], date.weekday())[candidate_id]
        if not client["active"]:
            check.fail("client_id", f"client {client['name']!r} is not active", candidate_id)
        elif hours is None:
            check.fail("client_id", f"client {client['name']!r} is closed on "
                       f"{date.strftime('%A')}s", candidate_id)
        chosen.append({"client_id": candidate_id, "name": client["name"],
                       "visit_min": client["visit_min"], "lat": client["location"]["lat"],
                       "lon": client["location"]["lon"], "windows": hours or (), "done": None})
    start = start or Start(label=row["home_label"], at_home=True)
    chosen_ids = {c["client_id"] for c in chosen}
    if start.client_id in chosen_ids and start.client_id not in done_ids:
        check.fail("from", f"{start.label!r} is not marked done; mark it done first, or "
                   "re-plan from another place", start.client_id)
    check.done()

    # Node 0 is home, node k the k-th chosen client, and a start elsewhere gets the last row.
    places = [(None, row["home_lat"], row["home_lon"])]
    places += [(c["client_id"], c["lat"], c["lon"]) for c in chosen]
    node_of = {c["client_id"]: k for k, c in enumerate(chosen, start=1)}
    if start.at_home:
        start_node = 0
    elif start.client_id in node_of:
        start_node = node_of[start.client_id]
    else:
        # A typed position has no stored drives; "here" matches no drive entry.
        places.append((start.client_id or "here", start.lat, start.lon))
        start_node = len(places) - 1
    entered = drives.overrides_for(conn, [p[0] for p in places])
    matrix = build_travel_matrix([(p[1], p[2]) for p in places], mode=row["distance_mode"],
                                 detour_factor=row["detour_factor"],
                                 speed_kmh=row["speed_kmh"], overrides=entered)
    brk = None
    if row["break_min"]:
        brk = BreakRule(row["break_min"], row["break_from_min"], row["break_until_min"])
    rules = DayRules(start_min=row["day_start_min"], end_min=row["day_end_min"],
                     objective=row["objective"], break_rule=brk)
    visits = tuple(Visit(c["name"], float(c["visit_min"]), tuple(c["windows"])) for c in chosen)
    todo = tuple(node_of[c["client_id"]] for c in chosen
                 if c["client_id"] not in done_ids and c["client_id"] != candidate_id
                 and node_of[c["client_id"]] != start_node)
    begin = row["day_start_min"] if start_min is None else start_min
    problem = DayProblem(km=matrix.km, minutes=matrix.minutes, visits=visits, rules=rules,
                         start_node=start_node, start_min=begin, todo=todo,
                         break_taken=break_taken)
    inputs = {
        "kind": kind,
        "date": date.isoformat(),
        "settings": settings.as_json(row),
        "rules": {"start": format_clock(rules.start_min), "end": format_clock(rules.end_min),
                  "objective": rules.objective,
                  "break": None if brk is None else {"min": brk.duration_min,
                                                     "from": format_clock(brk.earliest_min),
                                                     "until": format_clock(brk.latest_min)}},
        "places": [{"node": k, "client_id": key if isinstance(key, int) else None,
                    "lat": lat, "lon": lon} for k, (key, lat, lon) in enumerate(places)],
        "visits": [{"node": node_of[c["client_id"]], "client_id": c["client_id"],
                    "name": c["name"], "service_min": c["visit_min"],
                    "windows": format_windows(c["windows"])} for c in chosen],
        "start": {"node": start_node, "label": start.label, "client_id": start.client_id,
                  "at_home": start.at_home, "min": begin, "clock": format_clock(begin),
                  "lat": places[start_node][1], "lon": places[start_node][2]},
        "todo": list(todo),
        "done": [{"client_id": c["client_id"], **c["done"]} for c in chosen if c["done"]],
        "break_taken": break_taken,
        "matrix": {"km": matrix.km.tolist(), "minutes": matrix.minutes.tolist(),
                   "user_entered_km": matrix.user_entered_km.tolist(),
                   "user_entered_minutes": matrix.user_entered_minutes.tolist()},
    }
    if candidate_id is not None:
        inputs["candidate"] = {"client_id": candidate_id, "node": node_of[candidate_id]}
    return SolveInput(problem=problem, inputs=inputs, time_limit_s=float(row["time_limit_s"]),
                      candidate_node=node_of.get(candidate_id))


def solve(job: SolveInput) -> dict:
    """Run the exact day solver; an infeasible day is an answer too, with its explanation."""
    started = time.perf_counter()
    try:
        plan = plan_day(job.problem, time_limit_s=job.time_limit_s)
    except Infeasible as why:
        return {"plan": None, "explanation": why.explanation or {"summary": str(why)},
                "seconds": time.perf_counter() - started}
    return {"plan": plan.as_dict(), "seconds": time.perf_counter() - started}


def quote(job: SolveInput) -> dict:
    """The cost of adding the candidate to the rest of the day: estimate, then proven figure."""
    started = time.perf_counter()
    try:
        base = plan_day(job.problem, time_limit_s=job.time_limit_s / 2)
    except Infeasible as why:
        return {"fits_now": False, "explanation": why.explanation,
                "seconds": time.perf_counter() - started}
    result = quote_extra_visit(job.problem, base, job.candidate_node,
                               time_limit_s=job.time_limit_s / 2)
    return {"fits_now": True, "base": {"return": format_clock(base.return_min),
                                       "total_km": base.total_km,
                                       "proven_optimal": base.proven_optimal},
            **result, "seconds": time.perf_counter() - started}
