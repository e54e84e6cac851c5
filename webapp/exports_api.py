"""Download a planned day (iCalendar, GPX, CSV) or a week (iCalendar) from the stored plans."""

from __future__ import annotations

from flask import Blueprint, Response, request

from . import plan_exports
from .db import get_db
from .errors import FieldErrors
from .fields import Checker, parse_date

__all__ = ["exports_bp", "CALENDAR_OPTIONS", "MAX_ALARM_MIN"]

exports_bp = Blueprint("exports_api", __name__, url_prefix="/api")

CALENDAR_OPTIONS = {"travel", "alarm"}
MAX_ALARM_MIN = 24 * 60  # solver.ical_export accepts 0..1440 minutes
_YES_NO = {"1": True, "true": True, "0": False, "false": False}


def _options(allowed: set[str]) -> tuple[bool, int | None]:
    """``travel`` (1/0, true/false) and ``alarm`` (whole minutes) from the query string."""
    unknown = sorted(set(request.args) - allowed)
    if unknown:
        hint = (f"expected one of {', '.join(sorted(allowed))}" if allowed
                else "this file takes no options")
        raise FieldErrors([{"field": k, "message": f"unknown option {k!r}; {hint}",
                            "value": request.args.get(k)} for k in unknown], status=400)
    check = Checker()
    travel_text = request.args.get("travel", "0")
    travel = _YES_NO.get(travel_text.lower())
    if travel is None:
        check.fail("travel", f"travel {travel_text!r} must be 1 or 0", travel_text[:40])
    alarm_text = request.args.get("alarm")
    alarm = None
    if alarm_text is not None:
        if alarm_text.isascii() and alarm_text.isdigit() and int(alarm_text) <= MAX_ALARM_MIN:
            alarm = int(alarm_text)
        else:
            check.fail("alarm", f"alarm {alarm_text!r} must be whole minutes 0..{MAX_ALARM_MIN} "
                       "before leaving", alarm_text[:40])
    check.done()
    return bool(travel), alarm


def _send(export: plan_exports.ExportFile) -> Response:
    # The file name is built from a checked date only: digits, dashes and the extension.
    response = Response(export.data, content_type=export.content_type)
    response.headers["Content-Disposition"] = f'attachment; filename="{export.filename}"'
    response.headers["Cache-Control"] = "no-store"  # every export reflects the plan right now
    response.headers["X-Content-Type-Options"] = "nosniff"
    return response


@exports_bp.get("/days/<date_text>/export.ics")
def day_calendar(date_text: str):
    """The day as an iCalendar file; re-exports keep UIDs, raise SEQUENCE, cancel dropped ones."""
    date = parse_date(date_text)
    travel, alarm = _options(CALENDAR_OPTIONS)
    return _send(plan_exports.day_file(get_db(), date, "ics", include_travel=travel,
                                       alarm_min=alarm))


@exports_bp.get("/days/<date_text>/export.gpx")
def day_route(date_text: str):
    """The day's loop as GPX 1.1: visits as waypoints, the loop as a route."""
    date = parse_date(date_text)
    _options(set())
    return _send(plan_exports.day_file(get_db(), date, "gpx"))


@exports_bp.get("/days/<date_text>/export.csv")
def day_table(date_text: str):
    """The day's stops as a CSV table, home first and last."""
    date = parse_date(date_text)
    _options(set())
    return _send(plan_exports.day_file(get_db(), date, "csv"))


@exports_bp.get("/weeks/<date_text>/export.ics")
def week_calendar(date_text: str):
    """Every planned day of the week starting on this Monday, in one calendar file."""
    monday = plan_exports.week_monday(parse_date(date_text))
    travel, alarm = _options(CALENDAR_OPTIONS)
    return _send(plan_exports.week_file(get_db(), monday, include_travel=travel,
                                        alarm_min=alarm))
