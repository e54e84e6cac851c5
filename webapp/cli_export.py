"""``rondo export STOPS.csv --format ics|gpx|csv``: plan the day and write the file."""

from __future__ import annotations

import datetime as dt
import sys
from pathlib import Path

from solver.errors import InvalidInput
from solver.export_stops import export_day
from solver.gpx_export import day_gpx
from solver.ical_export import day_calendar, load_zone
from solver.plan_csv import plan_csv

from .cli_solve import plan_stops_day, read_home_and_stops

__all__ = ["run_export"]


def run_export(args) -> int:
    load_zone(args.tz)  # a bad zone name fails before any solving
    day = _date(args.date)
    home, stops, _, matrix = read_home_and_stops(args)
    plan, here = plan_stops_day(home, stops, matrix, args)
    positions = {0: home.position, **{k: s.position for k, s in enumerate(stops, start=1)}}
    if here is not None:
        positions[plan.start_node] = here
    notes = {k: s.notes for k, s in enumerate(stops, start=1) if s.notes}
    keys = {k: s.name for k, s in enumerate(stops, start=1)}
    exported = export_day(day, plan, positions=positions, notes=notes, keys=keys,
                          sequence=args.sequence, home_name=home.name)
    if args.format == "ics":
        data = day_calendar(exported, tz_name=args.tz, include_travel=args.travel,
                            alarm_before_leaving_min=args.alarm)
    elif args.format == "gpx":
        data = day_gpx(exported)
    else:
        data = plan_csv(exported)
    if args.output:
        Path(args.output).write_bytes(data)
    else:
        sys.stdout.buffer.write(data)
        sys.stdout.flush()
    return 0


def _date(text: str | None) -> dt.date:
    if not text:
        return dt.date.today()
    try:
        return dt.date.fromisoformat(text)
    except ValueError:
        raise InvalidInput(f"--date {text!r} is not a date; expected YYYY-MM-DD",
                           field="--date", value=text) from None
