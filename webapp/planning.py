"""Turns what is stored into the solver's day problem, and the solver's answer into records."""

from __future__ import annotations

import datetime as dt
import time
import zoneinfo
from dataclasses import dataclass

import numpy as np

from solver.clock import format_clock, format_windows
from solver.day import BreakRule, DayPlan, DayProblem, DayRules, Visit
from solver.day_exact import plan_day, quote_extra_visit
from solver.distances import build_travel_matrix
from solver.errors import Infeasible
from solver.week import WeekClient, WeekPlan, WeekProblem, WorkDay, plan_week

from . import clients, drives, plans, settings
from .errors import FieldErrors
from .fields import Checker, is_id
from .locations import read_location

__all__ = ["SolveInput", "gather", "read_start", "solve", "quote", "now_min", "WEEKDAY_NAMES",
           "MAX_VISITS_PER_SOLVE",
           "WeekInput", "gather_week", "solve_week", "week_day_ids", "plan_week_day", "quote_week",
           "week_day_inputs"]

# Measured here (2 cores): with 60 visits a solve stays near its time limit; with 80 it ran
# 60 % over a 5 s limit and the travel matrix alone, built on the request thread, grows as n².
MAX_VISITS_PER_SOLVE = 60


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
    if len(chosen) > MAX_VISITS_PER_SOLVE:
        check.fail("client_ids", f"this day has {len(chosen)} visits; at most "
                   f"{MAX_VISITS_PER_SOLVE} can be planned in one solve; move some to another "
                   "day", len(chosen))
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


# ---- the week ---------------------------------------------------------------------------

WEEKDAY_NAMES = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
_QUOTE_LIMIT_S = 10.0  # one day of a handful of visits is proven in well under a second


@dataclass(frozen=True)
class WeekInput:
    """A week problem for the solver, the same facts as JSON, and which row is which client."""

    problem: WeekProblem
    inputs: dict
    time_limit_s: float
    dates: tuple[dt.date, ...]
    weekdays: tuple[int, ...]
    node_of: dict[int, int]
    client_of: dict[str, int]
    names: dict[int, str]
    windows: dict[int, dict[int, tuple | None]]
    visit_min: dict[int, int]


def _rules(row: dict) -> tuple[DayRules, dict]:
    brk = None
    if row["break_min"]:
        brk = BreakRule(row["break_min"], row["break_from_min"], row["break_until_min"])
    rules = DayRules(start_min=row["day_start_min"], end_min=row["day_end_min"],
                     objective=row["objective"], break_rule=brk)
    return rules, {"start": format_clock(rules.start_min), "end": format_clock(rules.end_min),
                   "objective": rules.objective,
                   "break": None if brk is None else {"min": brk.duration_min,
                                                      "from": format_clock(brk.earliest_min),
                                                      "until": format_clock(brk.latest_min)}}


def gather_week(conn, spec, *, extra_ids=()) -> WeekInput:
    """Snapshot settings, the clients due (``spec``: a weeks.WeekSpec) and the rep's drives.

    ``extra_ids`` get matrix rows without being due: clients already on a day, or one calling.
    """
    row = settings.load(conn)
    if row["home_lat"] is None:
        raise FieldErrors.one("home", "home is not set; enter it under Settings first")
    due_ids = [c.client_id for c in spec.clients]
    due_set = set(due_ids)
    ids = due_ids + [cid for cid in dict.fromkeys(extra_ids) if cid not in due_set]
    book = {c["id"]: c for c in clients.list_clients(conn)}
    missing = [cid for cid in ids if cid not in book]
    if missing:
        raise FieldErrors.one("clients", f"client {missing[0]} does not exist", missing[0],
                              status=404)
    hours = {w: clients.windows_on(conn, ids, w) for w in spec.weekdays}
    windows = {cid: {d: hours[w][cid] for d, w in enumerate(spec.weekdays)} for cid in ids}
    places = [(None, row["home_lat"], row["home_lon"])]
    places += [(cid, book[cid]["location"]["lat"], book[cid]["location"]["lon"]) for cid in ids]
    node_of = {cid: k for k, cid in enumerate(ids, start=1)}
    entered = drives.overrides_for(conn, [p[0] for p in places])
    matrix = build_travel_matrix([(p[1], p[2]) for p in places], mode=row["distance_mode"],
                                 detour_factor=row["detour_factor"],
                                 speed_kmh=row["speed_kmh"], overrides=entered)
    rules, rules_json = _rules(row)
    days = tuple(WorkDay(WEEKDAY_NAMES[w], rules, spec.max_visits, spec.max_work_min)
                 for w in spec.weekdays)
    index_of = {w: d for d, w in enumerate(spec.weekdays)}
    due = []
    for c in spec.clients:
        open_days = {d: w for d, w in windows[c.client_id].items() if w is not None}
        due.append(WeekClient(
            book[c.client_id]["name"], node_of[c.client_id],
            float(book[c.client_id]["visit_min"]), (), open_days, tuple(sorted(open_days)),
            c.visits, c.min_gap_days, None if c.pin is None else index_of[c.pin]))
    dates = tuple(spec.monday + dt.timedelta(days=w) for w in spec.weekdays)
    inputs = {
        "kind": "week",
        "monday": spec.monday.isoformat(),
        "settings": settings.as_json(row),
        "rules": rules_json,
        "days": [{"index": d, "weekday": clients.WEEKDAYS[w], "name": WEEKDAY_NAMES[w],
                  "date": dates[d].isoformat()} for d, w in enumerate(spec.weekdays)],
        "caps": {"max_visits": spec.max_visits, "max_work_min": spec.max_work_min},
        "places": [{"node": k, "client_id": key, "lat": lat, "lon": lon}
                   for k, (key, lat, lon) in enumerate(places)],
        "clients": [{"client_id": cid, "node": node_of[cid], "name": book[cid]["name"],
                     "service_min": book[cid]["visit_min"],
                     "windows": {clients.WEEKDAYS[w]: clients.CLOSED if hours[w][cid] is None
                                 else format_windows(hours[w][cid]) for w in spec.weekdays},
                     "due": cid in due_set} for cid in ids],
        "due": [{"client_id": c.client_id, "visits": c.visits, "min_gap_days": c.min_gap_days,
                 "pin": None if c.pin is None else clients.WEEKDAYS[c.pin]}
                for c in spec.clients],
        "matrix": {"km": matrix.km.tolist(), "minutes": matrix.minutes.tolist(),
                   "user_entered_km": matrix.user_entered_km.tolist(),
                   "user_entered_minutes": matrix.user_entered_minutes.tolist()},
    }
    return WeekInput(problem=WeekProblem(matrix.km, matrix.minutes, tuple(due), days),
                     inputs=inputs, time_limit_s=float(row["time_limit_s"]), dates=dates,
                     weekdays=tuple(spec.weekdays), node_of=node_of,
                     client_of={book[cid]["name"]: cid for cid in ids},
                     names={cid: book[cid]["name"] for cid in ids}, windows=windows,
                     visit_min={cid: book[cid]["visit_min"] for cid in ids})


def solve_week(job: WeekInput) -> WeekPlan:
    """Spread the due visits over the working days, each day proven; the week proven or bounded."""
    return plan_week(job.problem, time_limit_s=job.time_limit_s)


def week_day_ids(job: WeekInput, plan: WeekPlan, day: int) -> list[int]:
    """The client ids of a solved day in the solver's row order (node k = the k-th id)."""
    return [job.client_of[name] for name in plan.assignment[day]]


def plan_week_day(job: WeekInput, day: int, client_ids) -> DayPlan | None:
    """The proven best order of exactly these clients on that working day (None: no visits).

    Raises Infeasible naming the day when they do not fit it or break the week's caps.
    """
    if not client_ids:
        return None
    name = job.problem.days[day].name
    problem_day = job.problem.days[day]
    if problem_day.max_visits is not None and len(client_ids) > problem_day.max_visits:
        raise Infeasible(f"{name} would have {len(client_ids)} visits, over the cap of "
                         f"{problem_day.max_visits} a day")
    rows = [0] + [job.node_of[cid] for cid in client_ids]
    km, minutes = np.asarray(job.problem.km), np.asarray(job.problem.minutes)
    visits = []
    for cid in client_ids:
        spans = job.windows[cid][day]
        if spans is None:
            raise Infeasible(f"{job.names[cid]} is closed on {name}s")
        visits.append(Visit(job.names[cid], float(job.visit_min[cid]), tuple(spans)))
    problem = DayProblem(km[np.ix_(rows, rows)], minutes[np.ix_(rows, rows)], tuple(visits),
                         job.problem.days[day].rules)
    try:
        plan = plan_day(problem, time_limit_s=min(_QUOTE_LIMIT_S, job.time_limit_s))
    except Infeasible as why:
        summary = (why.explanation or {}).get("summary") or str(why)
        raise Infeasible(f"{name} does not fit: {summary}",
                         explanation={"summary": f"{name}: {summary}", "day": name}) from None
    work = plan.return_min - problem_day.rules.start_min
    if problem_day.max_work_min is not None and work > problem_day.max_work_min + 1e-7:
        raise Infeasible(f"{name} would take {work:.0f} min from leaving to coming home; the cap "
                         f"is {problem_day.max_work_min:g} min")
    return plan


def quote_week(job: WeekInput, current: dict[int, list[int]], client_id: int, *,
               days, source: int | None = None) -> list[dict]:
    """The added km of ``client_id`` on each of ``days`` (indices), cheapest first.

    Each figure is the difference of two proven day optima. With ``source`` (the day it is
    on now) ``net_km`` also counts what leaving that day saves. Days that cannot take it
    come last with ``fits`` false and the reason.
    """
    base: dict[int, DayPlan | None | str] = {}

    def best(day: int, ids: list[int]):
        try:
            return plan_week_day(job, day, ids)
        except Infeasible as why:
            text = str(why)
            own = f"{job.problem.days[day].name} "  # the quote list names the day already
            return text[len(own):] if text.startswith(own) else text

    saving = 0.0
    if source is not None:
        now_plan = best(source, current[source])
        rest = best(source, [c for c in current[source] if c != client_id])
        if not isinstance(now_plan, str) and not isinstance(rest, str):
            saving = (now_plan.total_km if now_plan else 0.0) - (rest.total_km if rest else 0.0)
    quotes = []
    for day in days:
        entry = {"day_index": day, "weekday": clients.WEEKDAYS[job.weekdays[day]],
                 "name": job.problem.days[day].name, "date": job.dates[day].isoformat(),
                 "fits": False, "extra_km": None, "net_km": None, "return": None,
                 "later_min": None, "proven_optimal": None, "reason": None}
        base[day] = best(day, current[day])
        if isinstance(base[day], str):
            entry["reason"] = f"the day does not fit as it stands: {base[day]}"
            quotes.append(entry)
            continue
        with_client = best(day, [*current[day], client_id])
        if isinstance(with_client, str):
            entry["reason"] = with_client
            quotes.append(entry)
            continue
        before = base[day]
        extra = with_client.total_km - (before.total_km if before else 0.0)
        back_before = before.return_min if before else job.problem.days[day].rules.start_min
        entry.update(fits=True, extra_km=round(extra, 3), net_km=round(extra - saving, 3),
                     **{"return": format_clock(with_client.return_min)},
                     later_min=round(with_client.return_min - back_before, 1),
                     proven_optimal=with_client.proven_optimal
                     and (before is None or before.proven_optimal))
        quotes.append(entry)
    quotes.sort(key=lambda q: (not q["fits"], q["net_km"] if q["fits"] else 0.0, q["day_index"]))
    return quotes


def week_day_inputs(job: WeekInput, day: int, client_ids) -> dict:
    """A day's inputs, as ``gather`` records them, cut from the week's snapshot (node k = id k)."""
    snap = job.inputs
    rows = [0] + [job.node_of[cid] for cid in client_ids]
    matrix = {key: [[snap["matrix"][key][a][b] for b in rows] for a in rows]
              for key in ("km", "minutes", "user_entered_km", "user_entered_minutes")}
    home = snap["places"][0]
    start = snap["settings"]["day_start"]
    start_min = job.problem.days[day].rules.start_min
    return {
        "kind": "day",
        "date": job.dates[day].isoformat(),
        "settings": snap["settings"],
        "rules": snap["rules"],
        "places": [{"node": k, "client_id": snap["places"][r]["client_id"],
                    "lat": snap["places"][r]["lat"], "lon": snap["places"][r]["lon"]}
                   for k, r in enumerate(rows)],
        "visits": [{"node": k, "client_id": cid, "name": job.names[cid],
                    "service_min": job.visit_min[cid],
                    "windows": format_windows(job.windows[cid][day] or ())}
                   for k, cid in enumerate(client_ids, start=1)],
        "start": {"node": 0, "label": snap["settings"]["home_label"], "client_id": None,
                  "at_home": True, "min": start_min, "clock": start,
                  "lat": home["lat"], "lon": home["lon"]},
        "todo": list(range(1, len(rows))),
        "done": [],
        "break_taken": False,
        "matrix": matrix,
        "week": {"monday": snap["monday"], "day": snap["days"][day]["weekday"]},
    }
