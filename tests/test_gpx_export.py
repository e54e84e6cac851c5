"""GPX export, checked against the GPX 1.1 schema and read back with gpxpy.

Sources named beside the checks:
- GPX 1.1 schema (topografix.com/GPX/1/1/gpx.xsd): namespace http://www.topografix.com/GPX/1/1,
  required attributes version="1.1" and creator on gpx; gpxType is the sequence metadata,
  wpt*, rte*, trk*, extensions; wptType's children in the order ele, time, ..., name, cmt,
  desc, src, link*, sym, type, ...; metadataType's in the order name, desc, author,
  copyright, link*, time, ...; latitudeType is a decimal in [-90, 90] and longitudeType in
  [-180, 180) (180 excluded); time is xsd:dateTime, UTC. Quoted from memory of the XSD.
- XML Schema Part 2 §3.2.3 decimal: digits with an optional sign and point, no exponent.
- XML 1.0 §2.2 Char: which characters may appear in a document at all.
- gpxpy (package index), an independent GPX reader.
- RFC 5870 §3.3 geo: URI ABNF (the regular expression is shared with the iCalendar tests).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from datetime import UTC, date, datetime

import gpxpy
import pytest

from solver.coordinates import Position
from solver.day import DayProblem, DayRules, Visit
from solver.day_exact import plan_day
from solver.errors import InvalidInput
from solver.export_stops import export_day
from solver.gpx_export import day_gpx
from tests.test_ical_export import GEO_URI_RFC5870

NS = "{http://www.topografix.com/GPX/1/1}"
STAMP = datetime(2026, 12, 1, 7, 15, tzinfo=UTC)
XML_NAME = 'Müller & Söhne <Nord> "Eck" \'A\'; line\nbreak'
DECIMAL = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)")  # XML Schema Part 2 §3.2.3

POSITIONS = {
    0: Position(48.20849, 16.37208),
    1: Position(48.2391, 16.3771),
    2: Position(48.1858, 16.3128),
    3: Position(-0.00001, 179.99999),
}
NAMES = (XML_NAME, "Bäckerei Süd", "Kunde Drei")
# km by hand, symmetric; 1 minute per km; 20-minute visits
KM = [[0, 4, 9, 6], [4, 0, 7, 8], [9, 7, 0, 5], [6, 8, 5, 0]]


def planned_day():
    problem = DayProblem(km=KM, minutes=KM, visits=tuple(Visit(n, 20.0) for n in NAMES),
                         rules=DayRules(start_min=480.0, end_min=1020.0))
    plan = plan_day(problem)
    return plan, export_day(date(2026, 12, 7), plan, positions=POSITIONS,
                            notes={2: "Ring twice & wait <5 min>"})


def test_route_points_follow_the_plan_home_first_and_last():
    plan, day = planned_day()
    gpx = gpxpy.parse(day_gpx(day, stamp=STAMP).decode("utf-8"))
    (route,) = gpx.routes
    expected_nodes = [0, *plan.order, 0]
    got = [c for p in route.points for c in (p.latitude, p.longitude)]
    want = [c for n in expected_nodes for c in (POSITIONS[n].lat, POSITIONS[n].lon)]
    assert got == pytest.approx(want, abs=1e-9)
    assert [p.name for p in route.points] == ["Home", *[NAMES[n - 1] for n in plan.order], "Home"]


def test_waypoints_are_the_clients_with_names_escaped_and_round_tripped():
    plan, day = planned_day()
    data = day_gpx(day, stamp=STAMP)
    assert b"&amp;" in data and b"&lt;Nord&gt;" in data  # XML 1.0 §2.4: & and < escaped
    gpx = gpxpy.parse(data.decode("utf-8"))
    assert [w.name for w in gpx.waypoints] == [NAMES[n - 1] for n in plan.order]
    comments = {w.name: w.comment for w in gpx.waypoints}
    assert comments["Bäckerei Süd"] == "Ring twice & wait <5 min>"
    for waypoint, node in zip(gpx.waypoints, plan.order, strict=True):
        assert (waypoint.latitude, waypoint.longitude) == pytest.approx(
            (POSITIONS[node].lat, POSITIONS[node].lon), abs=1e-9)
        assert GEO_URI_RFC5870.fullmatch(waypoint.link), waypoint.link  # RFC 5870 §3.3


def test_root_namespace_version_creator_and_metadata():
    _, day = planned_day()
    data = day_gpx(day, stamp=STAMP)
    root = ET.fromstring(data)
    assert root.tag == f"{NS}gpx"  # GPX 1.1 namespace
    assert root.get("version") == "1.1" and root.get("creator") == "Rondo"
    gpx = gpxpy.parse(data.decode("utf-8"))
    assert gpx.version == "1.1" and gpx.creator == "Rondo"
    assert gpx.name == "Rondo plan 2026-12-07"
    assert gpx.time == STAMP  # metadata time, xsd:dateTime in UTC
    assert root.find(f"{NS}metadata/{NS}time").text == "2026-12-01T07:15:00Z"
    assert data.startswith(b"<?xml version='1.0' encoding='utf-8'?>")


def test_elements_come_in_schema_order():
    _, day = planned_day()
    root = ET.fromstring(day_gpx(day, stamp=STAMP))
    children = [child.tag.removeprefix(NS) for child in root]
    assert children == ["metadata", "wpt", "wpt", "wpt", "rte"]  # gpxType sequence
    order = ["ele", "time", "name", "cmt", "desc", "src", "link", "sym", "type"]  # wptType
    for point in root.iter(f"{NS}wpt"):
        tags = [child.tag.removeprefix(NS) for child in point]
        assert tags == sorted(tags, key=order.index), tags
    meta = [child.tag.removeprefix(NS) for child in root.find(f"{NS}metadata")]
    meta_order = ["name", "desc", "author", "copyright", "link", "time"]  # metadataType
    assert meta == sorted(meta, key=meta_order.index)
    route = [child.tag.removeprefix(NS) for child in root.find(f"{NS}rte")]
    assert route[0] == "name" and set(route[1:]) == {"rtept"}  # rteType: name ... rtept*


def test_coordinates_are_schema_decimals_in_range():
    _, day = planned_day()
    root = ET.fromstring(day_gpx(day, stamp=STAMP))
    points = list(root.iter(f"{NS}wpt")) + list(root.iter(f"{NS}rtept"))
    assert points
    for point in points:
        lat, lon = point.get("lat"), point.get("lon")
        assert DECIMAL.fullmatch(lat) and DECIMAL.fullmatch(lon), (lat, lon)  # no exponent
        assert -90 <= float(lat) <= 90 and -180 <= float(lon) < 180  # latitude/longitudeType
    assert any(p.get("lat") == "-0.00001" for p in points)  # not "-1e-05"


def test_longitude_180_is_written_as_minus_180():
    positions = {**POSITIONS, 3: Position(10.0, 180.0)}
    plan, _ = planned_day()
    day = export_day(date(2026, 12, 7), plan, positions=positions)
    root = ET.fromstring(day_gpx(day, stamp=STAMP))
    lons = {p.get("lon") for p in root.iter(f"{NS}rtept")}
    assert "-180" in lons and "180" not in lons  # longitudeType: maxExclusive 180


def test_characters_xml_forbids_do_not_break_the_file():
    plan, _ = planned_day()
    day = export_day(date(2026, 12, 7), plan, positions=POSITIONS,
                     notes={1: "code \x1b[0m\x00 here"})
    gpx = gpxpy.parse(day_gpx(day, stamp=STAMP).decode("utf-8"))  # XML 1.0 §2.2 Char
    comments = [w.comment for w in gpx.waypoints if w.comment]
    assert "code \ufffd[0m\ufffd here" in comments


def test_naive_stamp_is_refused():
    _, day = planned_day()
    with pytest.raises(InvalidInput) as caught:
        day_gpx(day, stamp=datetime(2026, 12, 1, 7, 15))
    assert caught.value.field == "stamp"


def test_not_a_day_is_refused():
    plan, _ = planned_day()
    with pytest.raises(InvalidInput) as caught:
        day_gpx(plan)
    assert caught.value.field == "day"
