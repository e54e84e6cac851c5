"""iCalendar export, checked against RFC 5545 and two independent parsers from the package index.

Sources named beside the checks:
- RFC 5545 (Desruisseaux, 2009), Internet Calendaring and Scheduling Core Object
  Specification: §3.1 content lines (CRLF, folding at 75 octets), §3.3.5 DATE-TIME and TZID,
  §3.3.11 TEXT escaping, §3.6 one or more components, §3.6.1 VEVENT (UID, DTSTAMP required;
  DTSTART; DTEND later than DTSTART), §3.6.5 VTIMEZONE for each TZID, §3.6.6 VALARM
  (DISPLAY needs ACTION, TRIGGER, DESCRIPTION), §3.8.1.6 GEO "lat;lon" as FLOAT,
  §3.8.1.11 STATUS, §3.8.7.2 DTSTAMP in UTC, §3.8.7.4 SEQUENCE. Section numbers are given
  from memory of the RFC.
- icalendar (package index) reads every file; its components carry ``errors`` for anything it
  could not parse.
- vobject (package index), a second parser written independently of icalendar; it builds its
  own time zones from the VTIMEZONE in the file, so local times read back through it test
  the VTIMEZONE we wrote, not the tz database we wrote it from.
- IANA tz database (via zoneinfo and tzdata): Europe/Vienna leaves summer time (UTC+2) on
  2026-10-25 and enters it on 2026-03-29; America/New_York leaves it (UTC-4 to UTC-5) on
  2026-11-01.
- RFC 5870 §3.3 geo: URI ABNF, written out as a regular expression below.
"""

from __future__ import annotations

import re
from datetime import UTC, date, datetime, timedelta
from zoneinfo import ZoneInfo

import pytest
import vobject
from hypothesis import given
from hypothesis import strategies as st
from icalendar import Calendar

from solver.coordinates import Position
from solver.day import DayPlan, DayProblem, DayRules, PlannedVisit, Visit
from solver.day_exact import plan_day
from solver.errors import InvalidInput
from solver.export_stops import ExportDay, dropped_stops, export_day
from solver.ical_export import PRODID, day_calendar, drive_uid, visit_uid, week_calendar

TRICKY = "Café Ölberg; Nord, \\ line\nbreak"  # §3.3.11: ; , \ and newline are escaped
STAMP = datetime(2026, 10, 20, 6, 30, tzinfo=UTC)
VIENNA = "Europe/Vienna"
# RFC 5870 §3.3: geo-URI = "geo:" coord-a "," coord-b [ "," coord-c ] p ;
# num = [ "-" ] pnum ; pnum = 1*DIGIT [ "." 1*DIGIT ] ; p = [ crsp ] [ uncp ] *parameter
_NUM = r"-?[0-9]+(?:\.[0-9]+)?"
GEO_URI_RFC5870 = re.compile(
    rf"geo:{_NUM},{_NUM}(?:,{_NUM})?(?:;crs=[A-Za-z0-9-]+)?(?:;u=[0-9]+(?:\.[0-9]+)?)?"
    r"(?:;[A-Za-z0-9-]+(?:=(?:[][:&+$A-Za-z0-9_.!~*'()-]|%[0-9A-Fa-f]{2})+)?)*",
    re.IGNORECASE,
)
# RFC 5545 §3.3.7 FLOAT: (["+"] / "-") 1*DIGIT ["." 1*DIGIT]
_FLOAT = r"[+-]?[0-9]+(?:\.[0-9]+)?"
GEO_LINE = re.compile(rf"GEO:(?P<lat>{_FLOAT});(?P<lon>{_FLOAT})")

POSITIONS = {
    0: Position(48.20849, 16.37208),
    1: Position(48.2391, 16.3771),
    2: Position(48.1858, 16.3128),
    3: Position(48.1702, 16.4361),
    4: Position(48.2650, 16.4510),
}


def hand_plan(visits, *, start_min=480.0, back_km=5.0, back_min=10.0) -> DayPlan:
    """A DayPlan built by hand: visits are (node, name, arrive, start, depart, km, min)."""
    planned = tuple(PlannedVisit(node, name, arrive, start - arrive, start, depart, km, minutes)
                    for node, name, arrive, start, depart, km, minutes in visits)
    last = planned[-1].depart_min if planned else start_min
    return DayPlan(
        visits=planned, start_node=0, start_min=start_min, return_min=last + back_min,
        return_leg_km=back_km, return_leg_min=back_min, break_before_return=None,
        total_km=sum(v.leg_km for v in planned) + back_km,
        total_drive_min=sum(v.leg_min for v in planned) + back_min,
        total_wait_min=sum(v.wait_min for v in planned), proven_optimal=True, lower_bound=0.0,
        gap=0.0, seconds=0.0, method="hand", objective="km")


def sample_plan() -> DayPlan:
    return hand_plan([
        (1, TRICKY, 500.0, 540.0, 600.0, 12.34, 20.0),
        (2, "Bäckerei Süd", 615.0, 615.0, 660.0, 8.0, 15.0),
        (3, "Kunde Drei", 680.0, 690.0, 735.0, 9.5, 20.0),
    ])


def sample_day(**options) -> ExportDay:
    return export_day(date(2026, 10, 22), sample_plan(), positions=POSITIONS,
                      notes={1: "Ring twice; ask for Jörg, \\ back door\nparking behind"},
                      keys={1: "client-17", 2: "client-4", 3: "Kunde Drei (alt)"}, **options)


def both_parsers(data: bytes):
    """Parse with icalendar and vobject; fail on any component error icalendar reports."""
    calendar = Calendar.from_ical(data)
    for component in calendar.walk():
        assert getattr(component, "errors", []) == [], (component.name, component.errors)
    other = vobject.readOne(data.decode("utf-8"))
    return calendar, other


def raw_lines(data: bytes) -> list[bytes]:
    assert data.endswith(b"\r\n")
    return data[:-2].split(b"\r\n")


def unfolded(data: bytes) -> list[str]:
    """RFC 5545 §3.1 unfolding: CRLF followed by one space or tab is removed."""
    return re.sub(rb"\r\n[ \t]", b"", data).decode("utf-8").split("\r\n")


# --- RFC 5545 form ---------------------------------------------------------------------------


@pytest.mark.parametrize("travel", [False, True])
def test_lines_end_in_crlf_and_fold_at_75_octets(travel):
    data = day_calendar(sample_day(), tz_name=VIENNA, include_travel=travel,
                        alarm_before_leaving_min=15, stamp=STAMP)
    lines = raw_lines(data)
    for line in lines:  # RFC 5545 §3.1: CRLF line breaks, lines SHOULD NOT exceed 75 octets
        assert b"\n" not in line and b"\r" not in line
        assert len(line) <= 75, line
    assert any(line.startswith(b" ") for line in lines)  # the long DESCRIPTION was folded
    for line in lines:  # folding never splits a UTF-8 sequence (§3.1: "split a multi-octet")
        line.decode("utf-8")


def test_calendar_properties_and_required_event_properties():
    calendar, other = both_parsers(day_calendar(sample_day(), tz_name=VIENNA, stamp=STAMP))
    assert calendar["PRODID"] == PRODID  # §3.7.3
    assert calendar["VERSION"] == "2.0"  # §3.7.4
    assert calendar["METHOD"] == "PUBLISH"  # §3.7.2
    events = calendar.walk("VEVENT")
    assert len(events) == 3 == len(other.vevent_list)
    for event in events:  # §3.6.1: UID and DTSTAMP required; DTSTART with METHOD PUBLISH
        for name in ("UID", "DTSTAMP", "DTSTART", "SUMMARY", "SEQUENCE"):
            assert name in event, name
        assert event.decoded("DTSTAMP") == STAMP  # §3.8.7.2: in UTC
    stamps = [line for line in unfolded(day_calendar(sample_day(), tz_name=VIENNA, stamp=STAMP))
              if line.startswith("DTSTAMP")]
    assert stamps and all(line == "DTSTAMP:20261020T063000Z" for line in stamps)  # §3.3.5 form 2


def test_text_survives_round_trip_in_both_parsers():
    calendar, other = both_parsers(day_calendar(sample_day(), tz_name=VIENNA, stamp=STAMP))
    first = calendar.walk("VEVENT")[0]
    assert str(first["SUMMARY"]) == TRICKY  # §3.3.11 escaping undone by icalendar
    assert other.vevent_list[0].summary.value == TRICKY  # ... and by vobject
    notes = "Ring twice; ask for Jörg, \\ back door\nparking behind"
    assert notes in str(first["DESCRIPTION"])
    assert notes in other.vevent_list[0].description.value
    assert TRICKY in other.vevent_list[0].location.value


def test_every_visit_is_one_event_with_its_planned_times():
    day = sample_day()
    calendar, other = both_parsers(day_calendar(day, tz_name=VIENNA, stamp=STAMP))
    zone = ZoneInfo(VIENNA)
    for stop, event, twin in zip(day.visits, calendar.walk("VEVENT"), other.vevent_list,
                                 strict=True):
        start = datetime(2026, 10, 22, tzinfo=zone) + timedelta(minutes=stop.start_min)
        end = datetime(2026, 10, 22, tzinfo=zone) + timedelta(minutes=stop.depart_min)
        assert event.decoded("DTSTART") == start and event.decoded("DTEND") == end
        assert twin.dtstart.value == start and twin.dtend.value == end
        assert event.decoded("DTEND") > event.decoded("DTSTART")  # §3.8.2.2
        assert str(event["SUMMARY"]) == stop.name
        assert str(event["STATUS"]) == "CONFIRMED"  # §3.8.1.11


def test_description_tells_place_in_loop_drive_and_navigation():
    calendar, _ = both_parsers(day_calendar(sample_day(), tz_name=VIENNA, stamp=STAMP))
    second = str(calendar.walk("VEVENT")[1]["DESCRIPTION"])
    assert second.startswith("Stop 2 of 3\n")
    assert f"Drive from {TRICKY}: 8.0 km, 15 min (leave 10:00)" in second
    uri = second.rsplit("Navigate: ", 1)[1]
    assert GEO_URI_RFC5870.fullmatch(uri), uri  # RFC 5870 §3.3
    assert uri == "geo:48.1858,16.3128"


def test_geo_is_two_floats_and_location_names_the_place():
    data = day_calendar(sample_day(), tz_name=VIENNA, stamp=STAMP)
    geo = [GEO_LINE.fullmatch(line) for line in unfolded(data) if line.startswith("GEO")]
    assert len(geo) == 3 and all(geo)  # §3.8.1.6: GEO value is float ";" float
    for match, node in zip(geo, (1, 2, 3), strict=True):
        assert float(match["lat"]) == pytest.approx(POSITIONS[node].lat, abs=5e-7)
        assert float(match["lon"]) == pytest.approx(POSITIONS[node].lon, abs=5e-7)
    calendar, other = both_parsers(data)
    assert calendar.walk("VEVENT")[1].decoded("GEO") == pytest.approx((48.1858, 16.3128))
    assert str(calendar.walk("VEVENT")[1]["LOCATION"]) == "48.18580, 16.31280 (Bäckerei Süd)"
    urls = [event.url.value for event in other.vevent_list]
    assert all(GEO_URI_RFC5870.fullmatch(url) for url in urls), urls  # RFC 5870 §3.3


def test_a_vtimezone_exists_for_every_tzid_used():
    data = day_calendar(sample_day(), tz_name="America/New_York", include_travel=True,
                        stamp=STAMP)
    lines = unfolded(data)
    used = {m.group(1) for line in lines for m in [re.search(r";TZID=([^:;]+)", line)] if m}
    calendar, _ = both_parsers(data)
    defined = {str(tz["TZID"]) for tz in calendar.walk("VTIMEZONE")}
    assert used == {"America/New_York"} and used <= defined  # §3.2.19 and §3.6.5


def test_zero_length_visit_has_no_dtend():
    plan = hand_plan([(1, "Drop-off", 500.0, 500.0, 500.0, 3.0, 20.0)])
    day = export_day(date(2026, 5, 4), plan, positions=POSITIONS)
    calendar, other = both_parsers(day_calendar(day, tz_name=VIENNA, stamp=STAMP))
    event = calendar.walk("VEVENT")[0]
    assert "DTEND" not in event and "DURATION" not in event  # §3.6.1: ends at DTSTART
    assert other.vevent_list[0].dtstart.value.hour == 8


# --- travel legs and alarms ------------------------------------------------------------------


def test_travel_events_cover_each_drive_and_the_way_home():
    day = sample_day()
    calendar, _ = both_parsers(day_calendar(day, tz_name=VIENNA, include_travel=True,
                                            stamp=STAMP))
    events = calendar.walk("VEVENT")
    drives = [e for e in events if "TRAVEL" in e.categories]
    visits = [e for e in events if "TRAVEL" not in e.categories]
    assert len(drives) == len(day.visits) + 1 and len(visits) == len(day.visits)
    midnight = datetime(2026, 10, 22, tzinfo=ZoneInfo(VIENNA))
    for stop, drive in zip(day.stops[1:], drives, strict=True):
        assert drive.decoded("DTSTART") == midnight + timedelta(minutes=stop.leave_min)
        assert drive.decoded("DTEND") == midnight + timedelta(minutes=stop.arrive_min)
        assert str(drive["TRANSP"]) == "OPAQUE"  # §3.8.2.7
    assert str(drives[-1]["SUMMARY"]) == "Drive home"
    assert str(drives[-1]["UID"]) == drive_uid(date(2026, 10, 22), None)
    assert len({str(e["UID"]) for e in events}) == len(events)  # §3.8.4.7: unique


def test_withdrawn_drives_come_cancelled_under_their_uids_and_only_without_travel():
    # §3.8.1.11: STATUS:CANCELLED under the UID the drive was first sent with.
    day = sample_day(sequence=3, withdraw_drives=True)
    events = Calendar.from_ical(day_calendar(day, tz_name=VIENNA, stamp=STAMP)).walk("VEVENT")
    drives = [e for e in events if "TRAVEL" in e.categories]
    expected = [drive_uid(day.day, s.uid_key) for s in day.visits] + [drive_uid(day.day, None)]
    assert [str(e["UID"]) for e in drives] == expected
    assert {str(e["STATUS"]) for e in drives} == {"CANCELLED"}
    assert {int(e["SEQUENCE"]) for e in drives} == {3}
    # Exported with drives again, the flag is moot: the drives are simply current.
    again = Calendar.from_ical(day_calendar(day, tz_name=VIENNA, include_travel=True,
                                            stamp=STAMP)).walk("VEVENT")
    assert {str(e["STATUS"]) for e in again if "TRAVEL" in e.categories} == {"CONFIRMED"}


def test_alarm_fires_the_chosen_minutes_before_leaving():
    day = sample_day()
    calendar, other = both_parsers(day_calendar(day, tz_name=VIENNA, alarm_before_leaving_min=15,
                                                stamp=STAMP))
    midnight = datetime(2026, 10, 22, tzinfo=ZoneInfo(VIENNA))
    for stop, event, twin in zip(day.visits, calendar.walk("VEVENT"), other.vevent_list,
                                 strict=True):
        (alarm,) = event.walk("VALARM")
        assert str(alarm["ACTION"]) == "DISPLAY" and str(alarm["DESCRIPTION"])  # §3.6.6
        fires = event.decoded("DTSTART") + alarm.decoded("TRIGGER")  # §3.8.6.3 RELATED=START
        assert fires == midnight + timedelta(minutes=stop.leave_min - 15)
        assert twin.dtstart.value + twin.valarm.trigger.value == fires
    # first visit: leaves home 08:00, visit at 09:00, alarm 07:45
    assert calendar.walk("VEVENT")[0].walk("VALARM")[0].decoded("TRIGGER") == timedelta(
        minutes=-75)


# --- stable identity across re-plans ---------------------------------------------------------


def _tiny_problem(names):
    """Home and clients on a line 10 km apart, 1 min per km, 30 min visits (hand-made)."""
    n = len(names) + 1
    km = [[10.0 * abs(i - j) for j in range(n)] for i in range(n)]
    return DayProblem(km=km, minutes=km, visits=tuple(Visit(name, 30.0) for name in names),
                      rules=DayRules(start_min=480.0, end_min=1080.0))


def test_replan_keeps_uids_raises_sequence_and_cancels_the_dropped_visit():
    monday = date(2026, 12, 7)
    first_names = ("Anna", "Bert", "Cora")
    first = export_day(monday, plan_day(_tiny_problem(first_names)), positions=POSITIONS,
                       keys={1: "c-anna", 2: "c-bert", 3: "c-cora"}, sequence=0)
    before, _ = both_parsers(day_calendar(first, tz_name=VIENNA, include_travel=True,
                                          stamp=STAMP))
    # Bert is dropped and Dora added; the nodes are renumbered, the keys are not.
    second_names = ("Dora", "Cora", "Anna")
    plan = plan_day(_tiny_problem(second_names))
    replan = export_day(monday, plan, positions=POSITIONS,
                        keys={1: "c-dora", 2: "c-cora", 3: "c-anna"}, sequence=1)
    replan = export_day(monday, plan, positions=POSITIONS,
                        keys={1: "c-dora", 2: "c-cora", 3: "c-anna"}, sequence=1,
                        cancelled=dropped_stops(first.visits, replan))
    after, other = both_parsers(day_calendar(replan, tz_name=VIENNA, include_travel=True,
                                             stamp=STAMP + timedelta(hours=2)))

    def by_uid(calendar):
        return {str(e["UID"]): e for e in calendar.walk("VEVENT")}

    old, new = by_uid(before), by_uid(after)
    assert set(old) <= set(new)  # every earlier event is updated, none left behind
    for key in ("c-anna", "c-cora"):
        uid = visit_uid(monday, key)
        assert uid in old and uid in new
        assert str(new[uid]["STATUS"]) == "CONFIRMED"
    assert visit_uid(monday, "c-dora") in new and visit_uid(monday, "c-dora") not in old
    for uid in (visit_uid(monday, "c-bert"), drive_uid(monday, "c-bert")):
        assert str(new[uid]["STATUS"]) == "CANCELLED"  # §3.8.1.11
        assert "DTSTART" in new[uid]  # still a complete VEVENT (§3.6.1)
    assert str(new[visit_uid(monday, "c-bert")]["SUMMARY"]) == "Bert"
    assert {int(e["SEQUENCE"]) for e in old.values()} == {0}
    assert {int(e["SEQUENCE"]) for e in new.values()} == {1}  # §3.8.7.4: raised on change
    cancelled = [e for e in other.vevent_list if e.status.value == "CANCELLED"]
    assert {e.uid.value for e in cancelled} == {visit_uid(monday, "c-bert"),
                                                drive_uid(monday, "c-bert")}


def test_uid_is_readable_for_plain_keys_and_hashed_otherwise():
    day = date(2026, 12, 7)
    assert visit_uid(day, "client-17") == "rondo-2026-12-07-client-17@rondo.local"
    hashed = visit_uid(day, "Café; Ölberg")
    assert re.fullmatch(r"rondo-2026-12-07-h\.[0-9a-f]{32}@rondo\.local", hashed)
    assert visit_uid(day, "client-17") != visit_uid(date(2026, 12, 8), "client-17")
    assert drive_uid(day, "home") != drive_uid(day, None)  # a client keyed "home" is not home


@given(st.text(min_size=1).filter(str.strip), st.text(min_size=1).filter(str.strip))
def test_uids_are_stable_ascii_and_distinct(a, b):
    day = date(2026, 12, 7)
    assert visit_uid(day, a) == visit_uid(day, a)
    assert visit_uid(day, a).isascii() and " " not in visit_uid(day, a)
    assert (visit_uid(day, a) == visit_uid(day, b)) == (a == b)
    assert visit_uid(day, a) not in {drive_uid(day, b), drive_uid(day, None)}


def test_a_day_with_every_visit_dropped_still_cancels_them():
    monday = date(2026, 12, 7)
    first = export_day(monday, sample_plan(), positions=POSITIONS)
    empty = export_day(monday, hand_plan([]), positions=POSITIONS, sequence=3,
                       cancelled=first.visits)
    calendar, _ = both_parsers(day_calendar(empty, tz_name=VIENNA, include_travel=True,
                                            stamp=STAMP))
    statuses = {str(e["UID"]): str(e["STATUS"]) for e in calendar.walk("VEVENT")}
    assert set(statuses.values()) == {"CANCELLED"}
    assert drive_uid(monday, None) in statuses and len(statuses) == 7


# --- a week across a daylight-saving change (IANA tz database) -------------------------------


def _nine_oclock_day(day: date, name: str) -> ExportDay:
    plan = hand_plan([(1, name, 520.0, 540.0, 600.0, 10.0, 40.0)])
    return export_day(day, plan, positions=POSITIONS, keys={1: "client-1"})


@pytest.mark.parametrize(
    ("tz_name", "days", "offsets_h"),
    [
        # Europe/Vienna: CEST (UTC+2) until Sunday 2026-10-25 03:00, then CET (UTC+1)
        (VIENNA, [date(2026, 10, 24), date(2026, 10, 25), date(2026, 10, 26)], [2, 1, 1]),
        # Europe/Vienna: CET until Sunday 2026-03-29 02:00, then CEST
        (VIENNA, [date(2026, 3, 28), date(2026, 3, 30)], [1, 2]),
        # America/New_York: EDT (UTC-4) until Sunday 2026-11-01 02:00, then EST (UTC-5)
        ("America/New_York", [date(2026, 10, 31), date(2026, 11, 2)], [-4, -5]),
    ],
)
def test_week_across_dst_keeps_wall_clock_times(tz_name, days, offsets_h):
    week = [_nine_oclock_day(day, f"Client on {day:%A}") for day in days]
    calendar, other = both_parsers(week_calendar(week, tz_name=tz_name, stamp=STAMP))
    events = calendar.walk("VEVENT")
    assert len(events) == len(days) and len(calendar.walk("VCALENDAR")) == 1
    for day, offset, event, twin in zip(days, offsets_h, events, other.vevent_list, strict=True):
        for start in (event.decoded("DTSTART"), twin.dtstart.value):
            assert (start.date(), start.hour, start.minute) == (day, 9, 0)
            assert start.utcoffset() == timedelta(hours=offset)
        utc = twin.dtstart.value.astimezone(UTC)  # vobject reads the VTIMEZONE we wrote
        assert (utc.hour, utc.minute) == (9 - offset, 0)
    assert len({str(e["UID"]) for e in events}) == len(days)


# --- bad input -------------------------------------------------------------------------------


@pytest.mark.parametrize("tz_name", ["Europe/Vienn", "Mars/Olympus", "", "../../etc/passwd",
                                     "/usr/share/zoneinfo/UTC", 7])
def test_unknown_time_zone_names_tz_name(tz_name):
    with pytest.raises(InvalidInput) as caught:
        day_calendar(sample_day(), tz_name=tz_name, stamp=STAMP)
    assert caught.value.field == "tz_name" and caught.value.value == tz_name


@pytest.mark.parametrize("alarm", [-5, 1441, 2.5, True])
def test_bad_alarm_minutes_are_refused(alarm):
    with pytest.raises(InvalidInput) as caught:
        day_calendar(sample_day(), tz_name=VIENNA, alarm_before_leaving_min=alarm)
    assert caught.value.field == "alarm_before_leaving_min"


def test_naive_stamp_is_refused():
    with pytest.raises(InvalidInput) as caught:
        day_calendar(sample_day(), tz_name=VIENNA, stamp=datetime(2026, 10, 20, 6, 30))
    assert caught.value.field == "stamp"


def test_two_plans_for_one_date_are_refused():
    with pytest.raises(InvalidInput) as caught:
        week_calendar([sample_day(), sample_day()], tz_name=VIENNA, stamp=STAMP)
    assert caught.value.field == "days[1].day"


def test_nothing_to_export_is_refused():
    empty = export_day(date(2026, 12, 7), hand_plan([]), positions=POSITIONS)
    with pytest.raises(InvalidInput) as caught:
        day_calendar(empty, tz_name=VIENNA, include_travel=True, stamp=STAMP)
    assert caught.value.field == "days"


# --- bad input to export_day, shared by every export (field names per solver.errors) ---------


def test_visit_without_position_names_its_node():
    positions = {k: v for k, v in POSITIONS.items() if k != 2}
    with pytest.raises(InvalidInput) as caught:
        export_day(date(2026, 10, 22), sample_plan(), positions=positions)
    assert caught.value.field == "positions[2]" and "Bäckerei Süd" in str(caught.value)


def test_position_that_is_not_a_position_is_refused():
    positions = {**POSITIONS, 3: (48.17, 16.43)}
    with pytest.raises(InvalidInput) as caught:
        export_day(date(2026, 10, 22), sample_plan(), positions=positions)
    assert caught.value.field == "positions[3]" and caught.value.value == (48.17, 16.43)


@pytest.mark.parametrize("sequence", [-1, True, 1.0, "2"])
def test_bad_sequence_is_refused(sequence):
    with pytest.raises(InvalidInput) as caught:
        export_day(date(2026, 10, 22), sample_plan(), positions=POSITIONS, sequence=sequence)
    assert caught.value.field == "sequence" and caught.value.value == sequence


def test_datetime_is_not_a_plan_date():
    with pytest.raises(InvalidInput) as caught:
        export_day(datetime(2026, 10, 22, 9), sample_plan(), positions=POSITIONS)
    assert caught.value.field == "day"


def test_two_visits_with_one_key_are_refused():
    with pytest.raises(InvalidInput) as caught:
        export_day(date(2026, 10, 22), sample_plan(), positions=POSITIONS,
                   keys={1: "client-1", 3: "client-1"})
    assert caught.value.field == "keys[3]" and caught.value.value == "client-1"


def test_a_visit_cannot_be_kept_and_cancelled():
    day = sample_day()
    with pytest.raises(InvalidInput) as caught:
        sample_day(cancelled=day.visits[:1])
    assert caught.value.field == "cancelled[0]" and caught.value.value == "client-17"


def test_notes_must_be_text():
    with pytest.raises(InvalidInput) as caught:
        export_day(date(2026, 10, 22), sample_plan(), positions=POSITIONS, notes={2: 42})
    assert caught.value.field == "notes[2]" and caught.value.value == 42


def test_control_characters_become_replacement_characters():
    # RFC 5545 §3.3.11 excludes CONTROL from TEXT; CR LF and CR are line ends (§3.1)
    day = export_day(date(2026, 10, 22), sample_plan(), positions=POSITIONS,
                     notes={1: "bell\x07 broken\r\nuse\rside door"})
    assert day.visits[0].notes == "bell\ufffd broken\nuse\nside door"
    calendar, _ = both_parsers(day_calendar(day, tz_name=VIENNA, stamp=STAMP))
    assert "bell\ufffd broken\nuse\nside door" in str(calendar.walk("VEVENT")[0]["DESCRIPTION"])


def test_default_stamp_is_now_in_utc():
    before = datetime.now(UTC).replace(microsecond=0)
    calendar, _ = both_parsers(day_calendar(sample_day(), tz_name=VIENNA))
    stamp = calendar.walk("VEVENT")[0].decoded("DTSTAMP")
    assert stamp.utcoffset() == timedelta(0)  # §3.8.7.2: UTC
    assert before <= stamp <= datetime.now(UTC)
