"""A date's stored plan as files (iCalendar, GPX, CSV) and map stops, with the calendar's memory.

Every export of a date reads the latest stored solve. Calendar exports also keep, per date,
the SEQUENCE and the visit stops last exported (table ``day_exports``): a re-export after the
plan changed gets SEQUENCE + 1 and cancels the visits dropped since; an unchanged plan keeps
its SEQUENCE. "Changed" means the stops' order or whole-minute times differ.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Sequence
from dataclasses import dataclass

from solver.clock import format_clock, parse_clock
from solver.coordinates import Position
from solver.day import DayPlan, PlannedVisit
from solver.errors import InvalidInput
from solver.export_stops import ExportDay, ExportStop, dropped_stops, export_day
from solver.gpx_export import day_gpx
from solver.ical_export import day_calendar, week_calendar
from solver.plan_csv import plan_csv

from . import plans, settings
from .db import transaction
from .errors import NotFound

__all__ = ["FORMATS", "ExportFile", "StoredDay", "NoPlan", "client_key", "stored_day",
           "map_stops", "day_file", "week_file", "week_monday"]

# Media types: RFC 5545 §8.1 (text/calendar), GPX 1.1 has no IANA registration and
# application/gpx+xml is what readers expect (common practice, no source), RFC 4180 §3 text/csv.
FORMATS = {
    "ics": "text/calendar; charset=utf-8",
    "gpx": "application/gpx+xml",
    "csv": "text/csv; charset=utf-8",
}
DAYS_PER_WEEK = 7


class NoPlan(NotFound):
    """The date has no stored plan that can be exported or drawn (answered 404)."""

    def __init__(self, date_text: str, message: str, *, field: str = "date"):
        super().__init__("plan for", date_text, field=field)
        self.args = (message,)


@dataclass(frozen=True)
class ExportFile:
    """The bytes of one export with how to send them."""

    data: bytes
    filename: str
    content_type: str
    sequence: int | None = None


@dataclass(frozen=True)
class StoredDay:
    """The latest stored plan of a date with what every export adds to it."""

    date: dt.date
    plan: DayPlan
    positions: dict[int, Position]
    notes: dict[int, str]
    keys: dict[int, str]
    home_name: str
    start_name: str
    done_keys: frozenset[str]
    tz_name: str

    def export(self, *, sequence: int = 0, cancelled: Sequence[ExportStop] = (),
               withdraw_drives: bool = False) -> ExportDay:
        return export_day(self.date, self.plan, positions=self.positions, notes=self.notes,
                          keys=self.keys, sequence=sequence, cancelled=cancelled,
                          home_name=self.home_name, start_name=self.start_name,
                          withdraw_drives=withdraw_drives)


def client_key(client_id: int) -> str:
    """The stable key of a client's visit: the same in every export, whatever its name."""
    return f"client-{client_id}"


def stored_day(conn, date: dt.date) -> StoredDay:
    """The date's latest solve as a plan, positions and notes from the stored clients."""
    row = conn.execute(
        "SELECT s.inputs_json, s.result_json FROM plan_solves s JOIN day_plans p "
        "ON p.id = s.plan_id WHERE p.plan_date = ? ORDER BY s.id DESC LIMIT 1",
        (date.isoformat(),)).fetchone()
    if row is None:
        raise NoPlan(date.isoformat(), f"no plan is stored for {date.isoformat()}; choose the "
                     "visits and work out the order first")
    inputs, outcome = json.loads(row["inputs_json"]), json.loads(row["result_json"])
    plan = outcome.get("plan")
    if plan is None:
        raise NoPlan(date.isoformat(), f"the latest solve for {date.isoformat()} found no order "
                     "that fits the day; there is no plan to show or export")
    node_client = {v["node"]: v["client_id"] for v in inputs["visits"]}
    start = inputs["start"]
    ids = set(node_client.values()) | ({start["client_id"]} if start.get("client_id") else set())
    marks = ",".join("?" * len(ids)) or "NULL"
    found = {r["id"]: r for r in conn.execute(
        f"SELECT id, name, lat, lon, notes FROM clients WHERE id IN ({marks})", tuple(ids))}
    home = inputs["places"][0]
    positions = {0: Position(home["lat"], home["lon"])}
    for node, cid in node_client.items():
        positions[node] = Position(found[cid]["lat"], found[cid]["lon"])
    start_node = plan["start_node"]
    if start_node not in positions:  # a typed position or the phone's own: as solved
        positions[start_node] = Position(start["lat"], start["lon"])
    start_name = start["label"]
    if start.get("client_id") in found:
        start_name = found[start["client_id"]]["name"]
    names = {node: found[cid]["name"] for node, cid in node_client.items()}
    row_settings = settings.load(conn)
    done = {client_key(c["client_id"]) for c in plans.choices(conn, date) if c["done"]}
    return StoredDay(
        date=date, plan=_plan(plan, names), positions=positions,
        notes={node: found[cid]["notes"] for node, cid in node_client.items()},
        keys={node: client_key(cid) for node, cid in node_client.items()},
        home_name=row_settings["home_label"], start_name=start_name,
        done_keys=frozenset(done), tz_name=row_settings["time_zone"])


def _span(value) -> tuple[float, float] | None:
    if not value:
        return None
    return (float(parse_clock(value["start"], field="break.start")),
            float(parse_clock(value["end"], field="break.end")))


def _plan(plan: dict, names: dict[int, str]) -> DayPlan:
    """The stored JSON of a plan (``DayPlan.as_dict``) back as a DayPlan, with today's names."""
    visits = tuple(PlannedVisit(
        node=v["node"], name=names[v["node"]], arrive_min=v["arrive_min"],
        wait_min=v["wait_min"], start_min=v["start_min"], depart_min=v["depart_min"],
        leg_km=v["leg_km"], leg_min=v["leg_min"], break_before=_span(v.get("break")))
        for v in plan["visits"])
    return DayPlan(
        visits=visits, start_node=plan["start_node"], start_min=plan["start_min"],
        return_min=plan["return_min"], return_leg_km=plan["return_leg_km"],
        return_leg_min=plan["return_leg_min"],
        break_before_return=_span(plan.get("break_before_return")),
        total_km=plan["total_km"], total_drive_min=plan["total_drive_min"],
        total_wait_min=plan["total_wait_min"], proven_optimal=plan["proven_optimal"],
        lower_bound=plan["lower_bound"], gap=plan["gap"], seconds=plan["seconds"],
        method=plan["method"], objective=plan["objective"])


def map_stops(day: StoredDay) -> list[dict]:
    """The stops as ``maps.day_map_html`` reads them: start, visits in order, home."""
    out = []
    for stop in day.export().stops:
        kind = "home" if stop.kind == "start" and day.plan.start_node == 0 else stop.kind
        out.append({"name": stop.name, "lat": stop.position.lat, "lon": stop.position.lon,
                    "order": stop.order, "kind": kind,
                    "arrive": None if stop.arrive_min is None else format_clock(stop.arrive_min),
                    "depart": None if stop.depart_min is None else format_clock(stop.depart_min)})
    return out


def day_file(conn, date: dt.date, fmt: str, *, include_travel: bool = False,
             alarm_min: int | None = None) -> ExportFile:
    """One date's plan as ``fmt`` ("ics", "gpx" or "csv"); calendars update the memory."""
    if fmt not in FORMATS:
        raise InvalidInput(f"format {fmt!r} is not one of {', '.join(FORMATS)}", field="format",
                           value=fmt)
    name = f"rondo-{date.isoformat()}.{fmt}"
    if fmt != "ics":
        day = stored_day(conn, date).export()
        data = day_gpx(day) if fmt == "gpx" else plan_csv(day)
        return ExportFile(data, name, FORMATS[fmt])
    with transaction(conn):
        stored = stored_day(conn, date)
        revised, keep = _revise(conn, stored, include_travel=include_travel)
        data = day_calendar(revised, tz_name=stored.tz_name, include_travel=include_travel,
                            alarm_before_leaving_min=alarm_min)
        _remember(conn, revised, keep, include_travel=include_travel)
    return ExportFile(data, name, FORMATS["ics"], revised.sequence)


def week_monday(date: dt.date, *, field: str = "date") -> dt.date:
    """``date`` itself when it is a Monday (ISO 8601 weeks start on Monday); else InvalidInput."""
    if date.weekday() != 0:
        raise InvalidInput(f"{field} {date.isoformat()!r} is a {date.strftime('%A')}; a week is "
                           "named by its Monday", field=field, value=date.isoformat())
    return date


def week_file(conn, monday: dt.date, *, include_travel: bool = False,
              alarm_min: int | None = None) -> ExportFile:
    """Every planned day of the week from ``monday`` in one calendar; each keeps its memory."""
    week_monday(monday)
    with transaction(conn):
        revised: list[tuple[ExportDay, tuple[ExportStop, ...]]] = []
        zone = settings.load(conn)["time_zone"]
        for offset in range(DAYS_PER_WEEK):
            try:
                stored = stored_day(conn, monday + dt.timedelta(days=offset))
            except NoPlan:
                continue
            revised.append(_revise(conn, stored, include_travel=include_travel))
        if not revised:
            raise NoPlan(monday.isoformat(), f"no day of the week from {monday.isoformat()} "
                         "has a plan to export")
        data = week_calendar([day for day, _ in revised], tz_name=zone,
                             include_travel=include_travel, alarm_before_leaving_min=alarm_min)
        for day, keep in revised:
            _remember(conn, day, keep, include_travel=include_travel)
    return ExportFile(data, f"rondo-week-{monday.isoformat()}.ics", FORMATS["ics"])


def _revise(conn, stored: StoredDay, *,
            include_travel: bool) -> tuple[ExportDay, tuple[ExportStop, ...]]:
    """The export with its SEQUENCE and cancellations, and done visits to keep remembering.

    Visits already done are neither cancelled nor forgotten: a re-plan from the road leaves
    them out of the plan, but they happened. Drive events of the last export are withdrawn
    (a new SEQUENCE) when this one goes without them.
    """
    draft = stored.export()
    row = conn.execute("SELECT sequence, signature, stops_json, include_travel FROM day_exports "
                       "WHERE plan_date = ?", (stored.date.isoformat(),)).fetchone()
    if row is None:
        return draft, ()
    previous = [_decode(item) for item in json.loads(row["stops_json"])]
    planned = {stop.uid_key for stop in draft.visits}
    keep = tuple(s for s in previous if s.uid_key in stored.done_keys and s.uid_key not in planned)
    candidates = [s for s in previous if s.uid_key not in stored.done_keys]
    cancelled = dropped_stops(candidates, draft)
    withdraw = bool(row["include_travel"]) and not include_travel
    changed = row["signature"] != _signature(draft) or withdraw
    return stored.export(sequence=row["sequence"] + int(changed), cancelled=cancelled,
                         withdraw_drives=withdraw), keep


def _remember(conn, day: ExportDay, keep: tuple[ExportStop, ...], *,
              include_travel: bool) -> None:
    stops = [_encode(s) for s in (*day.visits, *day.cancelled, *keep)]
    conn.execute(
        "INSERT INTO day_exports (plan_date, sequence, signature, stops_json, include_travel) "
        "VALUES (?, ?, ?, ?, ?) ON CONFLICT (plan_date) DO UPDATE SET "
        "sequence = excluded.sequence, signature = excluded.signature, "
        "stops_json = excluded.stops_json, include_travel = excluded.include_travel, "
        "exported_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')",
        (day.day.isoformat(), day.sequence, _signature(day), json.dumps(stops),
         int(include_travel)))


def _whole(minutes: float | None) -> int | None:
    # The calendar writes whole minutes; a difference below that is no change to it.
    return None if minutes is None else round(minutes)


def _signature(day: ExportDay) -> str:
    return json.dumps([[s.kind, s.uid_key, s.order, _whole(s.arrive_min), _whole(s.start_min),
                        _whole(s.depart_min)] for s in day.stops])


def _encode(stop: ExportStop) -> dict:
    return {"order": stop.order, "kind": stop.kind, "uid_key": stop.uid_key, "name": stop.name,
            "lat": stop.position.lat, "lon": stop.position.lon, "arrive_min": stop.arrive_min,
            "start_min": stop.start_min, "depart_min": stop.depart_min,
            "wait_min": stop.wait_min, "leg_km": stop.leg_km, "leg_min": stop.leg_min,
            "notes": stop.notes,
            "break_before": None if stop.break_before is None else list(stop.break_before)}


def _decode(item: dict) -> ExportStop:
    brk = item.get("break_before")
    return ExportStop(
        order=item["order"], kind=item["kind"], uid_key=item["uid_key"], name=item["name"],
        position=Position(item["lat"], item["lon"]), arrive_min=item["arrive_min"],
        start_min=item["start_min"], depart_min=item["depart_min"], wait_min=item["wait_min"],
        leg_km=item["leg_km"], leg_min=item["leg_min"], notes=item["notes"],
        break_before=None if brk is None else (brk[0], brk[1]))
