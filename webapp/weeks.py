"""Storage of week plans: the clients due, working days, caps and pins, and every week solve.

The visits chosen for each date stay in the day storage (webapp.plans); a week solve or a
move writes them there, so each day opens in the day screen as it would after a day solve.
"""

from __future__ import annotations

import datetime as dt
import json
import zoneinfo
from dataclasses import dataclass, replace

from . import clients, plans, settings
from .db import transaction
from .errors import Conflict, FieldErrors, NotFound
from .fields import Checker, is_id, parse_date

__all__ = ["FIELDS", "MOVE_FIELDS", "QUOTE_FIELDS", "PIN_FIELDS", "DEFAULT_WEEKDAYS",
           "MAX_VISITS_PER_DAY", "MAX_DUE", "DueClient", "WeekSpec", "Move", "parse_monday",
           "read_spec", "load_spec", "save_spec", "current", "set_day", "ensure_not_started",
           "started_days", "read_move", "read_quote", "set_pin", "add_due", "store_solve",
           "week_view", "week_proof", "spec_body", "today", "DAY_NAMES"]

FIELDS = {"clients", "days", "max_visits", "max_work_min", "pins"}
MOVE_FIELDS = {"client_id", "to", "from", "pin"}
QUOTE_FIELDS = {"client_id", "from", "from_date"}
PIN_FIELDS = {"client_id", "day"}
DEFAULT_WEEKDAYS = (0, 1, 2, 3, 4)  # Monday to Friday
MAX_VISITS_PER_DAY = 40  # far beyond any working day; a larger figure is a typo
MAX_WORK_MIN = 1440.0
MAX_GAP_DAYS = 6  # a gap of a week or more leaves room for one visit only
MAX_DUE = 300  # a rep's book for one week; more would take the solver minutes
DAY_NAMES = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")


@dataclass(frozen=True)
class DueClient:
    """A client due this week: visits, gap in working days, and an optional pinned weekday."""

    client_id: int
    visits: int = 1
    min_gap_days: int = 1
    pin: int | None = None
    added_late: bool = False


@dataclass(frozen=True)
class WeekSpec:
    """What to plan: the week's Monday, its working weekdays (0 = Monday), clients and caps."""

    monday: dt.date
    weekdays: tuple[int, ...]
    clients: tuple[DueClient, ...]
    max_visits: int | None = None
    max_work_min: float | None = None

    def index_of(self, weekday: int) -> int:
        return self.weekdays.index(weekday)

    def due(self, client_id: int) -> DueClient | None:
        return next((c for c in self.clients if c.client_id == client_id), None)


@dataclass(frozen=True)
class Move:
    """One visit going to another working day (``source`` None: not on any day yet)."""

    client_id: int
    source: int | None
    target: int
    pin: bool
    new_to_week: bool


def parse_monday(text: str, *, field: str = "monday") -> dt.date:
    """The week's Monday from the URL; another weekday names the Monday to use instead."""
    date = parse_date(text, field=field)
    if date.weekday() != 0:
        monday = date - dt.timedelta(days=date.weekday())
        raise FieldErrors.one(field, f"{field} {text} is a {DAY_NAMES[date.weekday()]}; a week "
                              f"is named by its Monday, here {monday.isoformat()}", text)
    return date


def today(conn) -> dt.date:
    """The laptop's date in the rep's time zone."""
    return dt.datetime.now(zoneinfo.ZoneInfo(settings.load(conn)["time_zone"])).date()


def _weekday(check: Checker, field: str, value, weekdays=None) -> int | None:
    """A weekday key ("mon".."sun"), optionally one of ``weekdays``."""
    if not isinstance(value, str) or value.strip().lower() not in clients.WEEKDAYS:
        check.fail(field, f"{field} is {value!r}; expected a weekday such as "
                   f"{', '.join(clients.WEEKDAYS)}", value if isinstance(value, str) else None)
        return None
    day = clients.WEEKDAYS.index(value.strip().lower())
    if weekdays is not None and day not in weekdays:
        working = ", ".join(clients.WEEKDAYS[w] for w in weekdays)
        check.fail(field, f"{field} is {value!r}, not a working day of this week "
                   f"({working})", value)
        return None
    return day


def _read_days(check: Checker, value) -> tuple[int, ...] | None:
    if value is None:
        return DEFAULT_WEEKDAYS
    if not isinstance(value, list) or not value:
        check.fail("days", "days must be a list of weekdays such as [\"mon\", \"tue\"]",
                   repr(value)[:80])
        return None
    days = [_weekday(check, f"days[{k}]", v) for k, v in enumerate(value)]
    if None in days:
        return None
    if len(set(days)) != len(days):
        check.fail("days", "days lists a weekday twice", repr(value)[:80])
        return None
    return tuple(sorted(days))


def _cap(check: Checker, body: dict, field: str, **limits):
    if body.get(field) is None:
        return None
    return check.number(field, value=body[field], **limits)


def read_spec(conn, monday: dt.date, body: dict, *, late: frozenset[int] = frozenset()
              ) -> WeekSpec:
    """The week to plan from a request body; every wrong field named, nothing stored."""
    check = Checker(body)
    weekdays = _read_days(check, body.get("days"))
    max_visits = _cap(check, body, "max_visits", low=1, high=MAX_VISITS_PER_DAY, integer=True)
    max_work_min = _cap(check, body, "max_work_min", low=0, low_open=True, high=MAX_WORK_MIN,
                        unit="min")
    entries = body.get("clients")
    if not isinstance(entries, list) or not entries:
        check.fail("clients", "clients must list the clients due this week: ids, or objects "
                   '{"client_id": .., "visits": .., "min_gap_days": ..}', repr(entries)[:80])
        check.done()
    if len(entries) > MAX_DUE:
        check.fail("clients", f"clients lists {len(entries)}; at most {MAX_DUE} fit one week",
                   len(entries))
        check.done()
    check.done()  # the days must be known before visits and gaps can be judged
    n_days = len(weekdays)
    due: list[DueClient] = []
    seen: set[int] = set()
    for k, entry in enumerate(entries):
        field = f"clients[{k}]"
        item = entry if isinstance(entry, dict) else {"client_id": entry}
        unknown = sorted(set(item) - {"client_id", "visits", "min_gap_days"})
        if unknown:
            check.fail(f"{field}.{unknown[0]}", f"unknown field {unknown[0]!r}; expected "
                       "client_id, visits, min_gap_days")
            continue
        cid = item.get("client_id")
        if not is_id(cid):
            check.fail(field, f"{field} is {cid!r}; expected a client id", repr(cid)[:40])
            continue
        if cid in seen:
            check.fail(field, f"{field}: client {cid} is listed twice", cid)
            continue
        seen.add(cid)
        row = conn.execute("SELECT name, active FROM clients WHERE id = ?", (cid,)).fetchone()
        if row is None:
            raise NotFound("client", cid, field=field)
        if not row["active"]:
            check.fail(field, f"client {row['name']!r} is not active; reactivate it first", cid)
            continue
        visits = 1 if item.get("visits") is None else check.number(
            f"{field}.visits", value=item["visits"], low=1, high=n_days, integer=True)
        gap = 1 if item.get("min_gap_days") is None else check.number(
            f"{field}.min_gap_days", value=item["min_gap_days"], low=1, high=MAX_GAP_DAYS,
            integer=True, unit="working days")
        if visits is None or gap is None:
            continue
        if visits > 1 and (visits - 1) * gap > n_days - 1:
            check.fail(f"{field}.min_gap_days", f"{row['name']!r}: {visits} visits at least "
                       f"{gap} working days apart need {(visits - 1) * gap + 1} working days; "
                       f"this week has {n_days}", gap)
            continue
        open_days = [w for w in weekdays
                     if clients.windows_on(conn, [cid], w)[cid] is not None]
        if not open_days:
            check.fail(field, f"client {row['name']!r} is closed on every working day of this "
                       "week", cid)
            continue
        if len(open_days) < visits:
            check.fail(f"{field}.visits", f"{row['name']!r} is open on {len(open_days)} working "
                       f"day(s) this week, fewer than {visits} visits", visits)
            continue
        due.append(DueClient(cid, visits, gap, None, cid in late))
    pins = _read_pins(conn, check, body.get("pins"), due, weekdays)
    check.done()
    due = [replace(c, pin=pins.get(c.client_id)) for c in due]
    return WeekSpec(monday, weekdays, tuple(due), max_visits, max_work_min)


def _read_pins(conn, check: Checker, value, due: list[DueClient], weekdays) -> dict[int, int]:
    if value is None:
        return {}
    if not isinstance(value, dict):
        check.fail("pins", 'pins must be an object {"client id": "weekday"}, e.g. '
                   '{"12": "thu"}', repr(value)[:80])
        return {}
    by_id = {c.client_id: c for c in due}
    pins = {}
    for key, day_text in value.items():
        field = f"pins.{key}"
        cid = int(key) if isinstance(key, str) and key.isascii() and key.isdigit() else None
        if cid is None or cid not in by_id:
            check.fail(field, f"{field}: {key!r} is not the id of a client due this week",
                       str(key)[:40])
            continue
        if day_text is None:
            continue
        day = _weekday(check, field, day_text, weekdays)
        if day is None:
            continue
        pins[cid] = _check_pin(conn, check, field, by_id[cid], day)
    return {cid: day for cid, day in pins.items() if day is not None}


def _check_pin(conn, check: Checker, field: str, due: DueClient, day: int) -> int | None:
    name = clients.get(conn, due.client_id)["name"]
    if due.visits > 1:
        check.fail(field, f"{name!r} is due {due.visits} times this week; only a client "
                   "visited once can be pinned to a day", clients.WEEKDAYS[day])
        return None
    if clients.windows_on(conn, [due.client_id], day)[due.client_id] is None:
        check.fail(field, f"{name!r} is closed on {DAY_NAMES[day]}s", clients.WEEKDAYS[day])
        return None
    return day


def _week_row(conn, monday: dt.date):
    return conn.execute("SELECT * FROM week_plans WHERE monday = ?",
                        (monday.isoformat(),)).fetchone()


def load_spec(conn, monday: dt.date) -> WeekSpec | None:
    """The stored week, or None when it was never worked out."""
    row = _week_row(conn, monday)
    if row is None:
        return None
    weekdays = tuple(r[0] for r in conn.execute(
        "SELECT weekday FROM week_days WHERE week_id = ? ORDER BY weekday", (row["id"],)))
    due = tuple(DueClient(r["client_id"], r["visits"], r["min_gap_days"], r["pin_weekday"],
                          bool(r["added_late"]))
                for r in conn.execute(
                    "SELECT w.* FROM week_clients w JOIN clients c ON c.id = w.client_id "
                    "WHERE w.week_id = ? ORDER BY c.name COLLATE NOCASE", (row["id"],)))
    return WeekSpec(monday, weekdays, due, row["max_visits"], row["max_work_min"])


def spec_body(spec: WeekSpec) -> dict:
    """The stored week as a request body, to check it again before a re-solve."""
    return {"days": [clients.WEEKDAYS[w] for w in spec.weekdays],
            "max_visits": spec.max_visits, "max_work_min": spec.max_work_min,
            "clients": [{"client_id": c.client_id, "visits": c.visits,
                         "min_gap_days": c.min_gap_days} for c in spec.clients],
            "pins": {str(c.client_id): clients.WEEKDAYS[c.pin] for c in spec.clients
                     if c.pin is not None}}


def save_spec(conn, spec: WeekSpec) -> int:
    """Store (replace) the week's days, caps and clients; return the week's id."""
    with transaction(conn):
        row = _week_row(conn, spec.monday)
        if row is None:
            week_id = conn.execute("INSERT INTO week_plans (monday, max_visits, max_work_min) "
                                   "VALUES (?, ?, ?)", (spec.monday.isoformat(), spec.max_visits,
                                                        spec.max_work_min)).lastrowid
        else:
            week_id = row["id"]
            conn.execute("UPDATE week_plans SET max_visits = ?, max_work_min = ?, updated_at = "
                         "strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?",
                         (spec.max_visits, spec.max_work_min, week_id))
        conn.execute("DELETE FROM week_days WHERE week_id = ?", (week_id,))
        conn.execute("DELETE FROM week_clients WHERE week_id = ?", (week_id,))
        conn.executemany("INSERT INTO week_days (week_id, weekday) VALUES (?, ?)",
                         [(week_id, w) for w in spec.weekdays])
        conn.executemany(
            "INSERT INTO week_clients (week_id, client_id, visits, min_gap_days, pin_weekday, "
            "added_late) VALUES (?, ?, ?, ?, ?, ?)",
            [(week_id, c.client_id, c.visits, c.min_gap_days, c.pin, int(c.added_late))
             for c in spec.clients])
    return week_id


def _date(spec: WeekSpec, weekday: int) -> dt.date:
    return spec.monday + dt.timedelta(days=weekday)


def current(conn, spec: WeekSpec) -> dict[int, list[int]]:
    """Each working day's chosen client ids (by day index), in the order of its latest plan."""
    out = {}
    for d, w in enumerate(spec.weekdays):
        view = plans.day_view(conn, _date(spec, w))
        chosen = [c["client_id"] for c in view["choices"]]
        order = [v["client_id"] for v in ((view["plan"] or {}).get("visits") or [])]
        out[d] = [c for c in order if c in chosen] + [c for c in chosen if c not in order]
    return out


def set_day(conn, date: dt.date, client_ids: list[int]) -> None:
    """Make ``client_ids`` the visits of ``date`` through the day storage."""
    if client_ids:
        plans.set_choices(conn, date, {"client_ids": client_ids})
        return
    # plans.set_choices keeps every visit when given an empty list (its NOT IN (NULL) matches
    # no row), so a day the week leaves free is emptied here; done visits were refused before.
    pid = plans.plan_id(conn, date)
    if pid is not None:
        with transaction(conn):
            conn.execute("DELETE FROM plan_choices WHERE plan_id = ?", (pid,))


def started_days(conn, spec: WeekSpec) -> set[int]:
    """Indices of working days that already have a visit marked done."""
    return {d for d, w in enumerate(spec.weekdays)
            if any(c["done"] for c in plans.choices(conn, _date(spec, w)))}


def ensure_not_started(conn, spec: WeekSpec) -> None:
    """A week solve replaces each working day's visits: no day may have visits done."""
    started = sorted(started_days(conn, spec))
    if started:
        names = ", ".join(f"{DAY_NAMES[spec.weekdays[d]]} {_date(spec, spec.weekdays[d])}"
                          for d in started)
        raise Conflict(f"visits are already done on {names}; leave that day out of days, or "
                       "move single visits instead")


def _client_name(conn, client_id, field: str) -> str:
    if not is_id(client_id):
        raise FieldErrors.one(field, f"{field} is {client_id!r}; expected a client id",
                              repr(client_id)[:40])
    row = conn.execute("SELECT name, active FROM clients WHERE id = ?", (client_id,)).fetchone()
    if row is None:
        raise NotFound("client", client_id, field=field)
    if not row["active"]:
        raise FieldErrors.one(field, f"client {row['name']!r} is not active", client_id)
    return row["name"]


def _source(check: Checker, body: dict, spec: WeekSpec, now: dict[int, list[int]], cid: int,
            name: str) -> int | None:
    """The day the visit leaves: ``from`` when given, else the only day it is on."""
    on = [d for d, ids in now.items() if cid in ids]
    if body.get("from") is not None:
        day = _weekday(check, "from", body["from"], spec.weekdays)
        if day is None:
            return None
        index = spec.index_of(day)
        if index not in on:
            check.fail("from", f"{name!r} is not on {DAY_NAMES[day]} this week", body["from"])
            return None
        return index
    if len(on) > 1:
        check.fail("from", f"{name!r} is on {len(on)} days this week; say which visit moves "
                   "with from", None)
        return None
    return on[0] if on else None


def read_quote(conn, spec: WeekSpec, now: dict[int, list[int]], body: dict
               ) -> tuple[int, int | None, list[int], list[dict]]:
    """(client id, source day, days to price, days left out with why) for a quote."""
    check = Checker(body)
    cid = body.get("client_id")
    name = _client_name(conn, cid, "client_id")
    source = _source(check, body, spec, now, cid, name)
    first = spec.monday
    if body.get("from_date") is not None:
        first = check.run("from_date", parse_date, body["from_date"], field="from_date")
        if isinstance(first, dt.date) and not spec.monday <= first <= _date(spec, 6):
            check.fail("from_date", f"from_date {body['from_date']} is not in the week of "
                       f"{spec.monday.isoformat()}", body["from_date"])
    else:
        now_date = today(conn)
        if spec.monday <= now_date <= _date(spec, 6):
            first = now_date
    check.done()
    priced, left_out = _eligible(conn, spec, now, cid, source, first)
    return cid, source, priced, left_out


def _eligible(conn, spec: WeekSpec, now, cid: int, source: int | None, first: dt.date):
    due = spec.due(cid)
    started = started_days(conn, spec)
    others = [d for d, ids in now.items() if cid in ids and d != source]
    gap = due.min_gap_days if due else 1
    priced, left_out = [], []
    for d, w in enumerate(spec.weekdays):
        why = None
        if _date(spec, w) < first:
            why = "already past"
        elif d == source:
            why = "it is on this day now"
        elif cid in now[d]:
            why = "already on this day"
        elif d in started:
            why = "visits are done on this day; squeeze it in from the day screen"
        elif clients.windows_on(conn, [cid], w)[cid] is None:
            why = "closed on this day"
        elif any(abs(d - o) < gap for o in others):
            why = f"closer than {gap} working days to its other visit"
        if why is None:
            priced.append(d)
        else:
            left_out.append({"day_index": d, "weekday": clients.WEEKDAYS[w],
                             "name": DAY_NAMES[w], "date": _date(spec, w).isoformat(),
                             "fits": False, "reason": why})
    return priced, left_out


def read_move(conn, spec: WeekSpec, now: dict[int, list[int]], body: dict) -> Move:
    """Check a move (or the booking of a client not in the week) before any solving."""
    check = Checker(body)
    cid = body.get("client_id")
    name = _client_name(conn, cid, "client_id")
    source = _source(check, body, spec, now, cid, name)
    target = _weekday(check, "to", body.get("to"), spec.weekdays)
    pin = check.boolean("pin") if "pin" in body else None
    check.done()
    index = spec.index_of(target)
    priced, left_out = _eligible(conn, spec, now, cid, source, spec.monday)
    if source is not None and source in started_days(conn, spec):
        check.fail("from", f"visits are done on {DAY_NAMES[spec.weekdays[source]]}; "
                   "its visits stay", body.get("from"))
    if index not in priced:
        why = next(e["reason"] for e in left_out if e["day_index"] == index)
        check.fail("to", f"{name!r} cannot go to {DAY_NAMES[target]}: {why}", body["to"])
    due = spec.due(cid)
    if pin is None:  # by default a moved visit stays where the rep put it, if it can be pinned
        pin = due is None or due.visits == 1
    if pin and due is not None and due.visits > 1:
        check.fail("pin", f"{name!r} is due {due.visits} times this week; only a client "
                   "visited once can be pinned", True)
    if spec.max_visits is not None and len(now[index]) + 1 > spec.max_visits:
        check.fail("to", f"{DAY_NAMES[target]} already has {len(now[index])} visits, the "
                   f"week's cap of {spec.max_visits} a day", body["to"])
    check.done()
    return Move(cid, source, index, bool(pin), due is None)


def add_due(spec: WeekSpec, move: Move) -> WeekSpec:
    """The week after ``move``: a new client joins as a late visit; a pin follows the move."""
    due = list(spec.clients)
    if move.new_to_week:
        due.append(DueClient(move.client_id, 1, 1, None, True))
    if move.pin:
        due = [replace(c, pin=spec.weekdays[move.target]) if c.client_id == move.client_id
               else c for c in due]
    return replace(spec, clients=tuple(due))


def set_pin(conn, monday: dt.date, body: dict) -> None:
    """Pin a client due this week to a working day (``day`` null removes the pin)."""
    spec = load_spec(conn, monday)
    if spec is None:
        raise NotFound("week plan", monday.isoformat())
    check = Checker(body)
    cid = body.get("client_id")
    _client_name(conn, cid, "client_id")
    due = spec.due(cid)
    if due is None:
        raise FieldErrors.one("client_id", f"client {cid} is not due this week; book it on a "
                              "day first", cid)
    day = None
    if body.get("day") is not None:
        day = _weekday(check, "day", body["day"], spec.weekdays)
        check.done()
        day = _check_pin(conn, check, "day", due, day)
    elif "day" not in body:
        check.fail("day", "day is missing; give a weekday such as \"thu\", or null to unpin")
    check.done()
    with transaction(conn):
        conn.execute("UPDATE week_clients SET pin_weekday = ? WHERE client_id = ? AND week_id = "
                     "(SELECT id FROM week_plans WHERE monday = ?)",
                     (day, cid, monday.isoformat()))


def store_solve(conn, spec: WeekSpec, *, kind: str, inputs: dict, result: dict,
                assignment: dict[int, list[int]], totals: dict) -> int:
    """Keep one week solve (``kind`` 'week' or 'move') with what went in and what came out."""
    with transaction(conn):
        week_id = _week_row(conn, spec.monday)["id"]
        solve_id = conn.execute(
            "INSERT INTO week_solves (week_id, kind, proven_optimal, method, total_km, "
            "total_drive_min, lower_bound, gap, bound_note, seconds, inputs_json, result_json) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (week_id, kind, int(totals["proven_optimal"]), totals["method"], totals["km"],
             totals["drive_min"], totals.get("lower_bound"), totals.get("gap"),
             totals.get("bound_note", ""), totals["seconds"], json.dumps(inputs),
             json.dumps(result))).lastrowid
        conn.executemany("INSERT INTO week_solve_visits (solve_id, weekday, client_id) "
                         "VALUES (?, ?, ?)",
                         [(solve_id, spec.weekdays[d], cid)
                          for d, ids in assignment.items() for cid in ids])
    return solve_id


def _solved(conn, week_id: int):
    """The latest whole-week solve and what it put on each weekday."""
    row = conn.execute("SELECT * FROM week_solves WHERE week_id = ? AND kind = 'week' "
                       "ORDER BY id DESC LIMIT 1", (week_id,)).fetchone()
    if row is None:
        return None, {}
    placed: dict[int, set[int]] = {}
    for r in conn.execute("SELECT weekday, client_id FROM week_solve_visits WHERE solve_id = ?",
                          (row["id"],)):
        placed.setdefault(r["weekday"], set()).add(r["client_id"])
    return row, placed


def week_proof(solve, total_km: float, *, changed: bool, same_visits: bool) -> dict:
    """The week's proof in the rep's words: proven best, or at most X % above the best.

    After moves by hand the solve's lower bound still bounds every week of the same visits
    (moves keep every rule), so the claim is restated for the week as it is now.
    """
    if solve is None:
        return {"text": "", "proven_optimal": False, "over_pct": None, "changed_text": None}
    bound = solve["lower_bound"]
    km_now = total_km if changed else solve["total_km"]
    over = None
    if solve["proven_optimal"] and not changed:
        text = "Proven best week: no other spread of these visits over the days drives less."
        over = 0.0
    elif bound and bound > 0 and (same_visits or not changed):
        # No week with these visits drives less than the bound, so this one is at most
        # this much above the best possible.
        over = max(0.0, (km_now - bound) / bound * 100)
        text = (f"At most {over:.1f} % more driving than the best possible week "
                f"(no week of these visits drives less than {bound:.1f} km).")
    elif changed:
        text = "Visits were added since the week was worked out; work it out again for a proof."
    else:
        text = "Best week found, not proven best."
    hand = None
    if changed:
        delta = total_km - solve["total_km"]
        sign = "+" if delta >= 0.05 else ("\u2212" if delta <= -0.05 else "\u00b1")
        what = "proven best week" if solve["proven_optimal"] else "week as worked out"
        hand = (f"Changed by hand: {sign}{abs(delta):.1f} km against the {what} "
                f"({solve['total_km']:.1f} km).")
    return {"text": text, "proven_optimal": bool(solve["proven_optimal"]) and not changed,
            "over_pct": over, "lower_bound": bound, "gap": solve["gap"],
            "bound_note": solve["bound_note"], "solved_km": solve["total_km"],
            "method": solve["method"], "seconds": solve["seconds"],
            "solved_at": solve["solved_at"], "changed_text": hand}


def week_view(conn, monday: dt.date) -> dict:
    """Everything the week screen shows: the week's rules, each working day, the proof."""
    spec = load_spec(conn, monday)
    view = {"monday": monday.isoformat(), "planned": spec is not None, "spec": None,
            "days": [], "totals": None, "proof": None, "unplaced": []}
    if spec is None:
        return view
    names = {c["id"]: c["name"] for c in clients.list_clients(conn)}
    pins = {c.client_id: c.pin for c in spec.clients}
    view["spec"] = {
        "days": [clients.WEEKDAYS[w] for w in spec.weekdays],
        "max_visits": spec.max_visits, "max_work_min": spec.max_work_min,
        "clients": [{"client_id": c.client_id, "name": names.get(c.client_id, ""),
                     "visits": c.visits, "min_gap_days": c.min_gap_days,
                     "pin": None if c.pin is None else clients.WEEKDAYS[c.pin],
                     "added_late": c.added_late} for c in spec.clients]}
    row = _week_row(conn, monday)
    solve, placed = _solved(conn, row["id"])
    total_km = total_min = 0.0
    visits = 0
    changed = False
    counts: dict[int, int] = {}
    for d, w in enumerate(spec.weekdays):
        date = _date(spec, w)
        day = plans.day_view(conn, date)
        plan = day["plan"]
        chosen = {c["client_id"] for c in day["choices"]}
        changed |= chosen != placed.get(w, set())
        order = [v["client_id"] for v in (plan or {}).get("visits") or []]
        ids = [c for c in order if c in chosen] + sorted(chosen - set(order),
                                                         key=lambda c: names.get(c, ""))
        for cid in ids:
            counts[cid] = counts.get(cid, 0) + 1
        entry = {"index": d, "weekday": clients.WEEKDAYS[w], "name": DAY_NAMES[w],
                 "date": date.isoformat(), "visits": len(ids),
                 "clients": [{"client_id": cid, "name": names.get(cid, ""),
                              "pinned": pins.get(cid) == w,
                              "due": cid in pins,
                              "done": any(c["client_id"] == cid and c["done"]
                                          for c in day["choices"])} for cid in ids],
                 "started": bool(day["done"]), "solved": False, "stale": False,
                 "feasible": True, "km": 0.0, "drive_min": 0.0, "return": None, "proof": None}
        if plan is not None and ids:
            entry.update(solved=True, stale=plan["stale"], feasible=plan["feasible"])
            if plan["feasible"]:
                entry.update(km=plan["totals"]["km"], drive_min=plan["totals"]["drive_min"],
                             wait_min=plan["totals"]["wait_min"], leave=plan["start"]["clock"],
                             proof=plan["proof"]["text"],
                             proven=plan["proof"]["proven_optimal"],
                             **{"return": plan["return"]})
                total_km += plan["totals"]["km"]
                total_min += plan["totals"]["drive_min"]
            else:
                entry["proof"] = (plan.get("explanation") or {}).get("summary")
        changed |= entry["stale"]
        visits += len(ids)
        view["days"].append(entry)
    view["unplaced"] = [{"client_id": c.client_id, "name": names.get(c.client_id, ""),
                         "missing": c.visits - counts.get(c.client_id, 0)}
                        for c in spec.clients if counts.get(c.client_id, 0) < c.visits]
    changed = changed or (solve is not None and abs(total_km - solve["total_km"]) > 5e-3)
    view["totals"] = {"km": round(total_km, 3), "drive_min": round(total_min, 3),
                      "visits": visits}
    solved_visits = sorted(c for ids in placed.values() for c in ids)
    now_visits = sorted(c for day in view["days"] for c in (x["client_id"] for x in day["clients"]))
    view["proof"] = week_proof(solve, total_km, changed=changed,
                               same_visits=solved_visits == now_visits)
    view["changed"] = changed if solve is not None else False
    return view
