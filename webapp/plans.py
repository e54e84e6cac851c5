"""Storage of day plans: the visits chosen for a date, every solve, and the visits done."""

from __future__ import annotations

import datetime as dt
import json

from solver.clock import format_clock, format_windows

from . import clients
from .db import transaction
from .errors import Conflict, FieldErrors, NotFound
from .fields import Checker, is_id

__all__ = ["plan_id", "choices", "set_choices", "add_choice", "mark_done", "undo_done",
           "store_solve", "day_view", "list_days", "solve_record", "proof_summary",
           "ensure_not_started"]


def plan_id(conn, date: dt.date, *, create: bool = False) -> int | None:
    row = conn.execute("SELECT id FROM day_plans WHERE plan_date = ?",
                       (date.isoformat(),)).fetchone()
    if row is not None:
        return row["id"]
    if not create:
        return None
    return conn.execute("INSERT INTO day_plans (plan_date) VALUES (?)",
                        (date.isoformat(),)).lastrowid


def choices(conn, date: dt.date) -> list[dict]:
    """The clients chosen for ``date`` with their hours that weekday and done times, by name."""
    pid = plan_id(conn, date)
    if pid is None:
        return []
    rows = conn.execute(
        "SELECT c.id, c.name, c.active, c.visit_min, c.lat, c.lon, p.added_late, "
        "d.arrived_min, d.departed_min FROM plan_choices p JOIN clients c ON c.id = p.client_id "
        "LEFT JOIN visits_done d ON d.plan_id = p.plan_id AND d.client_id = p.client_id "
        "WHERE p.plan_id = ? ORDER BY c.name COLLATE NOCASE", (pid,)).fetchall()
    hours = clients.windows_on(conn, [r["id"] for r in rows], date.weekday())
    return [{
        "client_id": r["id"],
        "name": r["name"],
        "visit_min": r["visit_min"],
        "lat": r["lat"],
        "lon": r["lon"],
        "active": bool(r["active"]),
        "added_late": bool(r["added_late"]),
        "closed": hours[r["id"]] is None,
        "windows": hours[r["id"]],
        "done": None if r["arrived_min"] is None else {
            "arrived": format_clock(r["arrived_min"]), "departed": format_clock(r["departed_min"]),
            "arrived_min": r["arrived_min"], "departed_min": r["departed_min"]},
    } for r in rows]


def _check_visitable(conn, check: Checker, client_id, date: dt.date, field: str) -> None:
    if not is_id(client_id):
        check.fail(field, f"{field} is {client_id!r}; expected a client id", repr(client_id))
        return
    row = conn.execute("SELECT name, active FROM clients WHERE id = ?", (client_id,)).fetchone()
    if row is None:
        raise NotFound("client", client_id, field=field)
    if not row["active"]:
        check.fail(field, f"client {row['name']!r} is not active; reactivate it first",
                   client_id)
    elif clients.windows_on(conn, [client_id], date.weekday())[client_id] is None:
        check.fail(field, f"client {row['name']!r} is closed on {date.strftime('%A')}s",
                   client_id)


def set_choices(conn, date: dt.date, body: dict) -> None:
    """Replace the visits chosen for ``date``; visits already done cannot be dropped."""
    check = Checker(body)
    ids = body.get("client_ids")
    if not isinstance(ids, list):
        check.fail("client_ids", "client_ids must be a list of client ids", repr(ids)[:80])
        check.done()
    for k, cid in enumerate(ids):
        _check_visitable(conn, check, cid, date, f"client_ids[{k}]")
    if len(set(map(repr, ids))) != len(ids):
        check.fail("client_ids", "client_ids lists a client twice", repr(ids)[:80])
    for c in choices(conn, date):
        if c["done"] and c["client_id"] not in ids:
            check.fail("client_ids", f"{c['name']!r} is already done on this day and stays "
                       "in it; undo it first", c["client_id"])
    check.done()
    with transaction(conn):
        pid = plan_id(conn, date, create=True)
        if ids:
            marks = ",".join("?" * len(ids))
            conn.execute(f"DELETE FROM plan_choices WHERE plan_id = ? AND client_id NOT IN "
                         f"({marks})", (pid, *ids))
        else:
            # "NOT IN (NULL)" matches no row, so an empty choice needs its own statement.
            conn.execute("DELETE FROM plan_choices WHERE plan_id = ?", (pid,))
        for cid in ids:
            conn.execute("INSERT OR IGNORE INTO plan_choices (plan_id, client_id) VALUES (?, ?)",
                         (pid, cid))
        _touch(conn, pid)


def add_choice(conn, date: dt.date, client_id, *, late: bool) -> None:
    """Add one client to the day (a last-minute visit when ``late``)."""
    check = Checker()
    _check_visitable(conn, check, client_id, date, "client_id")
    if any(c["client_id"] == client_id for c in choices(conn, date)):
        check.fail("client_id", "this client is already in the day", client_id)
    check.done()
    with transaction(conn):
        pid = plan_id(conn, date, create=True)
        conn.execute("INSERT INTO plan_choices (plan_id, client_id, added_late) VALUES (?, ?, ?)",
                     (pid, client_id, int(late)))
        _touch(conn, pid)


def _touch(conn, pid: int) -> None:
    conn.execute("UPDATE day_plans SET updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') "
                 "WHERE id = ?", (pid,))


def _chosen(conn, date: dt.date, client_id: int) -> dict:
    for c in choices(conn, date):
        if c["client_id"] == client_id:
            return c
    raise NotFound(f"visit on {date.isoformat()} to client", client_id)


def mark_done(conn, date: dt.date, client_id: int, body: dict) -> None:
    """Record (or correct) when the visit really started and ended."""
    _chosen(conn, date, client_id)
    check = Checker(body)
    arrived = check.clock("arrived")
    departed = check.clock("departed")
    check.done()
    if departed < arrived:
        raise FieldErrors.one("departed", f"departed {body['departed']} is before arrived "
                              f"{body['arrived']}", body["departed"])
    with transaction(conn):
        pid = plan_id(conn, date)
        conn.execute("INSERT INTO visits_done (plan_id, client_id, arrived_min, departed_min) "
                     "VALUES (?, ?, ?, ?) ON CONFLICT (plan_id, client_id) DO UPDATE SET "
                     "arrived_min = excluded.arrived_min, departed_min = excluded.departed_min, "
                     "recorded_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')",
                     (pid, client_id, arrived, departed))
        _touch(conn, pid)


def undo_done(conn, date: dt.date, client_id: int) -> None:
    if not _chosen(conn, date, client_id)["done"]:
        raise NotFound(f"done visit on {date.isoformat()} to client", client_id)
    with transaction(conn):
        conn.execute("DELETE FROM visits_done WHERE plan_id = ? AND client_id = ?",
                     (plan_id(conn, date), client_id))


def ensure_not_started(day_choices: list[dict]) -> None:
    """A whole-day solve from home makes no sense once visits are done."""
    if any(c["done"] for c in day_choices):
        raise Conflict("visits are already done on this day; re-plan from where you are")


def store_solve(conn, date: dt.date, *, kind: str, inputs: dict, outcome: dict) -> int:
    """Keep one solve with everything that went in; ``outcome`` holds a plan or why none."""
    plan = outcome.get("plan")
    node_client = {v["node"]: v["client_id"] for v in inputs["visits"]}
    values = {
        "feasible": int(plan is not None),
        "proven_optimal": int(bool(plan and plan["proven_optimal"])),
        "objective": inputs["rules"]["objective"],
        "lower_bound": plan["lower_bound"] if plan else None,
        "gap": plan["gap"] if plan else None,
        "seconds": outcome["seconds"],
        "method": plan["method"] if plan else "explanation",
        "start_min": inputs["start"]["min"],
        "return_min": plan["return_min"] if plan else None,
        "total_km": plan["total_km"] if plan else None,
        "total_drive_min": plan["total_drive_min"] if plan else None,
        "total_wait_min": plan["total_wait_min"] if plan else None,
    }
    with transaction(conn):
        pid = plan_id(conn, date, create=True)
        cur = conn.execute(
            f"INSERT INTO plan_solves (plan_id, kind, {', '.join(values)}, inputs_json, "
            f"result_json) VALUES (?, ?, {', '.join('?' * len(values))}, ?, ?)",
            (pid, kind, *values.values(), json.dumps(inputs), json.dumps(outcome)))
        solve_id = cur.lastrowid
        for seq, v in enumerate(plan["visits"] if plan else [], start=1):
            conn.execute(
                "INSERT INTO planned_visits (solve_id, seq, client_id, arrive_min, wait_min, "
                "start_min, depart_min, leg_km, leg_min) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (solve_id, seq, node_client[v["node"]], v["arrive_min"], v["wait_min"],
                 v["start_min"], v["depart_min"], v["leg_km"], v["leg_min"]))
        _touch(conn, pid)
    return solve_id


def proof_summary(plan: dict) -> dict:
    """The proof figures in the rep's words."""
    objective = plan["objective"]
    over = None
    if plan["proven_optimal"]:
        what = "drives less" if objective == "km" else "gets you home sooner"
        text = f"Proven best: no other order of these visits {what}."
        over = 0.0
    elif objective == "km" and plan["lower_bound"] > 0:
        # The optimum is at least the bound, so the plan is at most this much above it.
        over = max(0.0, (plan["total_km"] - plan["lower_bound"]) / plan["lower_bound"] * 100)
        text = (f"Best found in {plan['seconds']:.0f} s: at most {over:.1f} % more driving "
                "than the best possible.")
    else:
        text = (f"Best found in {plan['seconds']:.0f} s, not proven best "
                f"(gap {plan['gap'] * 100:.1f} %).")
    return {"proven_optimal": plan["proven_optimal"], "objective": objective,
            "lower_bound": plan["lower_bound"], "gap": plan["gap"], "over_pct": over,
            "seconds": plan["seconds"], "method": plan["method"], "text": text}


def _latest_solve(conn, pid: int | None):
    if pid is None:
        return None
    return conn.execute("SELECT * FROM plan_solves WHERE plan_id = ? ORDER BY id DESC LIMIT 1",
                        (pid,)).fetchone()


def _plan_entry(inputs: dict, plan: dict) -> dict:
    node_client = {v["node"]: v["client_id"] for v in inputs["visits"]}
    user_km = inputs["matrix"]["user_entered_km"]
    user_min = inputs["matrix"]["user_entered_minutes"]
    prev = inputs["start"]["node"]
    visits = []
    for seq, v in enumerate(plan["visits"], start=1):
        node = v["node"]
        visits.append({**v, "seq": seq, "client_id": node_client[node],
                       "visit_min": inputs["visits"][node - 1]["service_min"],
                       "leg_entered": bool(user_km[prev][node] or user_min[prev][node])})
        prev = node
    return {
        "visits": visits,
        # The latest departure that keeps every start (older stored plans lack it).
        "leave": plan.get("leave"),
        "return": plan["return"],
        "return_min": plan["return_min"],
        "return_leg_km": plan["return_leg_km"],
        "return_leg_min": plan["return_leg_min"],
        "return_leg_entered": bool(user_km[prev][0] or user_min[prev][0]),
        "break_before_return": plan["break_before_return"],
        "totals": {
            "km": plan["total_km"],
            "drive_min": plan["total_drive_min"],
            "wait_min": plan["total_wait_min"],
            "visit_min": sum(v["visit_min"] for v in visits),
            "visits": len(visits),
        },
        "proof": proof_summary(plan),
        "day_end": inputs["rules"]["end"],
    }


def day_view(conn, date: dt.date) -> dict:
    """Everything the day screen shows: choices, done visits, the latest solve."""
    day_choices = choices(conn, date)
    view = {
        "date": date.isoformat(),
        "weekday": clients.WEEKDAYS[date.weekday()],
        "choices": [c | {"windows": clients.CLOSED if c["windows"] is None
                         else format_windows(c["windows"])} for c in day_choices],
        "done": [{"client_id": c["client_id"], "name": c["name"], **c["done"]}
                 for c in day_choices if c["done"]],
        "plan": None,
    }
    solve = _latest_solve(conn, plan_id(conn, date))
    if solve is None:
        return view
    inputs = json.loads(solve["inputs_json"])
    outcome = json.loads(solve["result_json"])
    entry = {
        "solve_id": solve["id"],
        "kind": solve["kind"],
        "solved_at": solve["solved_at"],
        "feasible": bool(solve["feasible"]),
        # Visits were added or dropped since this solve: its order no longer covers the day.
        "stale": {v["client_id"] for v in inputs["visits"]}
        != {c["client_id"] for c in day_choices},
        "start": inputs["start"],
        "explanation": outcome.get("explanation"),
    }
    if outcome.get("plan") is not None:
        entry |= _plan_entry(inputs, outcome["plan"])
    view["plan"] = entry
    return view


def solve_record(conn, solve_id: int) -> dict:
    """One stored solve: when, what went in, what came out."""
    row = conn.execute("SELECT s.*, p.plan_date FROM plan_solves s JOIN day_plans p "
                       "ON p.id = s.plan_id WHERE s.id = ?", (solve_id,)).fetchone()
    if row is None:
        raise NotFound("solve", solve_id)
    return {"id": row["id"], "date": row["plan_date"], "kind": row["kind"],
            "solved_at": row["solved_at"], "feasible": bool(row["feasible"]),
            "inputs": json.loads(row["inputs_json"]), "outcome": json.loads(row["result_json"])}


def list_days(conn) -> list[dict]:
    """Dates that have a plan, newest first, with how many visits and whether solved."""
    rows = conn.execute(
        "SELECT p.plan_date, count(c.client_id) AS visits, "
        "(SELECT count(*) FROM plan_solves s WHERE s.plan_id = p.id AND s.feasible = 1) "
        "AS solves FROM day_plans p LEFT JOIN plan_choices c ON c.plan_id = p.id "
        "GROUP BY p.id ORDER BY p.plan_date DESC").fetchall()
    return [{"date": r["plan_date"], "visits": r["visits"], "solved": r["solves"] > 0}
            for r in rows]
