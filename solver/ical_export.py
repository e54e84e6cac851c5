"""A day's or a week's visits as an iCalendar file (RFC 5545), for any calendar app.

Guarantees, per RFC 5545 (section numbers beside each): one VCALENDAR with VERSION:2.0, our
own PRODID (§3.7.3) and METHOD:PUBLISH (§3.7.2); one VEVENT per visit with UID, DTSTAMP in
UTC, DTSTART/DTEND in the rep's time zone with TZID (§3.3.5 form 3) and a VTIMEZONE built
from the IANA tz database for every TZID used (§3.6.5), SEQUENCE (§3.8.7.4), STATUS (§3.8.1.11),
SUMMARY, LOCATION ("lat, lon (name)"), GEO "lat;lon" with at most six decimals (§3.8.1.6),
URL with the RFC 5870 geo: URI (§3.8.4.6) and a DESCRIPTION telling the stop's place in the
loop, the drive to it, the client's notes and the geo: URI. Lines end in CRLF and are folded
at 75 octets, and TEXT is escaped (§3.1, §3.3.11); the icalendar library does that.

Plan times are minutes after local midnight read as *wall-clock* time on the planned date,
so a 09:00 visit stays 09:00 local on either side of a daylight-saving change. A visit
lasting zero minutes has no DTEND (it ends at DTSTART, §3.6.1).

Options: ``include_travel`` adds a VEVENT per drive (CATEGORIES:TRAVEL, TRANSP:OPAQUE);
``alarm_before_leaving_min`` adds to each visit a VALARM (§3.6.6, ACTION:DISPLAY) that fires
that many minutes before the rep must leave for it, i.e. before its drive starts.

Stable identity across re-plans (the rule the caller keeps): a visit's UID is a function of
the plan date and the visit's ``uid_key`` only (:func:`visit_uid`), and its drive's UID of
the same (:func:`drive_uid`). For each day the caller stores the last exported SEQUENCE and
the visit stops exported; every new export of that day passes a larger ``sequence`` and, as
``cancelled``, the stored visits the new plan no longer holds
(:func:`solver.export_stops.dropped_stops`). Those are written with STATUS:CANCELLED under
their old UIDs and times, so a calendar that imported the earlier file drops them. An
export without drive events after one with them passes ``withdraw_drives`` on the day: the
drive events of every visit and of the way home are then written cancelled, under their
UIDs, so none stays behind in the calendar.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Sequence
from datetime import date, datetime, time, timedelta
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from icalendar import Alarm, Calendar, Event

from .clock import format_clock
from .coordinates import format_position, geo_uri
from .errors import InvalidInput
from .export_stops import ExportDay, ExportStop, utc_stamp

__all__ = ["PRODID", "UID_DOMAIN", "day_calendar", "week_calendar", "visit_uid", "drive_uid",
           "load_zone"]

PRODID = "-//Rondo//Visit plan//EN"
UID_DOMAIN = "rondo.local"
TRAVEL_CATEGORY = "TRAVEL"
VISIT_CATEGORY = "VISIT"
_GEO_DECIMALS = 6  # RFC 5545 §3.8.1.6: "specified to at most six decimal places"
_PLAIN_KEY = re.compile(r"[A-Za-z0-9_-]{1,64}")


def visit_uid(day: date, uid_key: str) -> str:
    """The UID of the visit with ``uid_key`` on ``day``: the same for every export of that day.

    Keys of letters, digits, "_" and "-" are kept readable ("rondo-2026-12-07-client-17@
    rondo.local"); any other key is replaced by a SHA-256 digest behind "h.", which no readable
    key can collide with (readable keys hold no ".").
    """
    return f"rondo-{day.isoformat()}-{_key_part(uid_key)}@{UID_DOMAIN}"


def drive_uid(day: date, uid_key: str | None) -> str:
    """The UID of the drive to the visit with ``uid_key`` on ``day``; None: the drive home."""
    if uid_key is None:
        return f"rondo-{day.isoformat()}.home.drive@{UID_DOMAIN}"
    return f"rondo-{day.isoformat()}-{_key_part(uid_key)}.drive@{UID_DOMAIN}"


def load_zone(tz_name: object) -> ZoneInfo:
    """The IANA time zone ``tz_name`` (e.g. "Europe/Vienna"), or InvalidInput naming tz_name."""
    if not isinstance(tz_name, str) or not tz_name.strip():
        raise InvalidInput(f"tz_name {tz_name!r} is not a time zone name such as Europe/Vienna",
                           field="tz_name", value=tz_name)
    try:
        return ZoneInfo(tz_name)
    except (ZoneInfoNotFoundError, ValueError, OSError):
        raise InvalidInput(f"tz_name {tz_name!r} is not a time zone of the IANA database; "
                           "expected a name such as Europe/Vienna", field="tz_name",
                           value=tz_name) from None


def day_calendar(day: ExportDay, *, tz_name: str, include_travel: bool = False,
                 alarm_before_leaving_min: int | None = None,
                 stamp: datetime | None = None) -> bytes:
    """One day's visits (and cancellations) as an RFC 5545 iCalendar file."""
    return week_calendar([day], tz_name=tz_name, include_travel=include_travel,
                         alarm_before_leaving_min=alarm_before_leaving_min, stamp=stamp)


def week_calendar(days: Sequence[ExportDay], *, tz_name: str, include_travel: bool = False,
                  alarm_before_leaving_min: int | None = None,
                  stamp: datetime | None = None) -> bytes:
    """Several dated days in one VCALENDAR; each day keeps its own SEQUENCE.

    ``stamp`` is the DTSTAMP (an aware datetime, written in UTC; now when None). Raises
    InvalidInput for an unknown ``tz_name``, a bad alarm or stamp, two days with the same
    date, or nothing at all to export.
    """
    zone = load_zone(tz_name)
    _check_alarm(alarm_before_leaving_min)
    dtstamp = utc_stamp(stamp)
    seen: set[date] = set()
    calendar = Calendar()
    calendar.add("prodid", PRODID)
    calendar.add("version", "2.0")
    calendar.add("calscale", "GREGORIAN")
    calendar.add("method", "PUBLISH")
    for index, day in enumerate(days):
        if not isinstance(day, ExportDay):
            raise InvalidInput(f"days[{index}] is a {type(day).__name__}; expected an ExportDay",
                               field=f"days[{index}]", value=day)
        if day.day in seen:
            raise InvalidInput(f"days[{index}] is {day.day.isoformat()} a second time; one plan "
                               "per date", field=f"days[{index}].day", value=day.day)
        seen.add(day.day)
        for event in _day_events(day, zone, dtstamp, include_travel, alarm_before_leaving_min):
            calendar.add_component(event)
    if not calendar.subcomponents:
        raise InvalidInput("there are no visits and no cancellations to export", field="days",
                           value=len(days))
    first, last = min(seen), max(seen)
    # The VTIMEZONE covers the whole years around the plan, transitions included (§3.6.5).
    calendar.add_missing_timezones(first_date=date(first.year, 1, 1),
                                   last_date=date(last.year + 1, 1, 1))
    return calendar.to_ical()


def _day_events(day: ExportDay, zone: ZoneInfo, dtstamp: datetime, include_travel: bool,
                alarm_min: int | None) -> list[Event]:
    visits = day.visits
    events: list[Event] = []
    for stop in visits:
        previous = day.stops[stop.order - 1]
        events.append(_visit_event(day, stop, previous, len(visits), zone, dtstamp, alarm_min))
        if include_travel:
            events.append(_drive_event(day, stop, previous.name, zone, dtstamp))
    for stop in day.cancelled:
        events.append(_visit_event(day, stop, None, len(visits), zone, dtstamp, None))
        if include_travel:
            events.append(_drive_event(day, stop, None, zone, dtstamp, cancelled=True))
    home = day.stops[-1]
    if include_travel and (visits or day.cancelled):
        events.append(_drive_event(day, home, day.stops[-2].name, zone, dtstamp,
                                   cancelled=not visits))
    if not include_travel and day.withdraw_drives:
        for stop in (*visits, *day.cancelled, home):
            events.append(_drive_event(day, stop, None, zone, dtstamp, cancelled=True))
    return events


def _visit_event(day: ExportDay, stop: ExportStop, previous: ExportStop | None, total: int,
                 zone: ZoneInfo, dtstamp: datetime, alarm_min: int | None) -> Event:
    event = _event(visit_uid(day.day, stop.uid_key), day.sequence, dtstamp,
                   cancelled=previous is None)
    start = _local(day.day, stop.start_min, zone)
    end = _local(day.day, stop.depart_min, zone)
    event.add("dtstart", start)
    if end > start:
        event.add("dtend", end)
    event.add("summary", stop.name)
    event.add("location", f"{format_position(stop.position)} ({stop.name})")
    event.add("geo", (round(stop.position.lat, _GEO_DECIMALS),
                      round(stop.position.lon, _GEO_DECIMALS)))
    event.add("url", geo_uri(stop.position))
    event.add("categories", [VISIT_CATEGORY])
    event.add("transp", "OPAQUE")
    lines = [f"Stop {stop.order} of {total}"] if previous is not None else [
        "Cancelled: this visit is no longer in the plan."]
    if previous is not None:
        lines.append(f"Drive from {previous.name}: {stop.leg_km:.1f} km, "
                     f"{round(stop.leg_min)} min (leave {format_clock(stop.leave_min)})")
        lines.append(f"Arrive {format_clock(stop.arrive_min)}, wait {round(stop.wait_min)} min, "
                     f"visit {format_clock(stop.start_min)}-{format_clock(stop.depart_min)}")
    if previous is not None and stop.break_before is not None:
        lines.append(f"Break {format_clock(stop.break_before[0])}-"
                     f"{format_clock(stop.break_before[1])} on arrival")
    if stop.notes.strip():
        lines.append(f"Notes: {stop.notes}")
    lines.append(f"Navigate: {geo_uri(stop.position)}")
    event.add("description", "\n".join(lines))
    if alarm_min is not None and previous is not None:
        leave = _local(day.day, stop.leave_min, zone)
        alarm = Alarm()
        alarm.add("action", "DISPLAY")
        # Relative to DTSTART (§3.8.6.3 default RELATED=START): fires before leaving.
        alarm.add("trigger", -((start - leave) + timedelta(minutes=alarm_min)))
        alarm.add("description", f"Leave at {format_clock(stop.leave_min)} for {stop.name} "
                                 f"({stop.leg_km:.1f} km, {round(stop.leg_min)} min)")
        event.add_component(alarm)
    return event


def _drive_event(day: ExportDay, stop: ExportStop, from_name: str | None, zone: ZoneInfo,
                 dtstamp: datetime, *, cancelled: bool = False) -> Event:
    home = stop.kind == "home"
    event = _event(drive_uid(day.day, None if home else stop.uid_key), day.sequence, dtstamp,
                   cancelled=cancelled)
    leave = _local(day.day, stop.leave_min, zone)
    arrive = _local(day.day, stop.arrive_min, zone)
    event.add("dtstart", leave)
    if arrive > leave:
        event.add("dtend", arrive)
    event.add("summary", "Drive home" if home else f"Drive to {stop.name}")
    event.add("location", f"{format_position(stop.position)} ({stop.name})")
    event.add("url", geo_uri(stop.position))
    event.add("categories", [TRAVEL_CATEGORY])
    event.add("transp", "OPAQUE")
    origin = f" from {from_name}" if from_name is not None else ""
    event.add("description", f"Drive{origin} to {stop.name}: {stop.leg_km:.1f} km, "
                             f"{round(stop.leg_min)} min\nNavigate: {geo_uri(stop.position)}")
    return event


def _event(uid: str, sequence: int, dtstamp: datetime, *, cancelled: bool) -> Event:
    event = Event()
    event.add("uid", uid)
    event.add("dtstamp", dtstamp)
    event.add("sequence", sequence)
    event.add("status", "CANCELLED" if cancelled else "CONFIRMED")
    return event


def _local(day: date, minutes: float | None, zone: ZoneInfo) -> datetime:
    """Wall-clock ``minutes`` after midnight of ``day`` in ``zone``, to the nearest minute."""
    wall = datetime.combine(day, time()) + timedelta(minutes=round(minutes or 0.0))
    return wall.replace(tzinfo=zone)


def _key_part(uid_key: str) -> str:
    if not isinstance(uid_key, str) or not uid_key.strip():
        raise InvalidInput(f"uid_key {uid_key!r} is not non-empty text", field="uid_key",
                           value=uid_key)
    if _PLAIN_KEY.fullmatch(uid_key):
        return uid_key
    return "h." + hashlib.sha256(uid_key.encode("utf-8")).hexdigest()[:32]


def _check_alarm(alarm_min: object) -> None:
    if alarm_min is None:
        return
    if isinstance(alarm_min, bool) or not isinstance(alarm_min, int) or not (
        0 <= alarm_min <= 24 * 60
    ):
        raise InvalidInput(f"alarm_before_leaving_min {alarm_min!r} is not a whole number of "
                           "minutes in 0..1440", field="alarm_before_leaving_min",
                           value=alarm_min)

