"""A day's loop as a GPX 1.1 file, for navigation and mapping apps.

Guarantees, per the GPX 1.1 schema (topografix.com/GPX/1/1): the root ``gpx`` element in the
namespace ``http://www.topografix.com/GPX/1/1`` with ``version="1.1"`` and
``creator="Rondo"``; children in schema order: ``metadata`` (name, desc, time in UTC), one
``wpt`` per visit (name, cmt with the client's notes, desc with the planned times, a link
with the RFC 5870 geo: URI), and one ``rte`` whose ``rtept`` run start, visits in driving
order, home. Coordinates are xsd:decimal in fixed notation; a longitude of exactly 180 is
written -180 because the schema's longitudeType excludes 180. Text is XML-escaped by
ElementTree; characters XML 1.0 forbids were already replaced in
:func:`solver.export_stops.export_day`. The file is UTF-8 with an XML declaration.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from datetime import datetime

from .clock import format_clock
from .coordinates import geo_uri
from .errors import InvalidInput
from .export_stops import ExportDay, ExportStop, utc_stamp

__all__ = ["GPX_NAMESPACE", "CREATOR", "day_gpx"]

GPX_NAMESPACE = "http://www.topografix.com/GPX/1/1"
CREATOR = "Rondo"
_DECIMALS = 9


def day_gpx(day: ExportDay, *, stamp: datetime | None = None) -> bytes:
    """``day`` as GPX 1.1: the visits as waypoints and the loop as one route.

    ``stamp`` is the metadata time (an aware datetime, written in UTC; now when None).
    """
    if not isinstance(day, ExportDay):
        raise InvalidInput(f"day is a {type(day).__name__}; expected an ExportDay", field="day",
                           value=day)
    when = utc_stamp(stamp)
    visits = day.visits
    title = f"Rondo plan {day.day.isoformat()}"
    home = day.stops[-1]
    # The namespace is declared as the default on the root and every element is written
    # unprefixed, so the file reads <gpx xmlns="..."> as GPX readers expect.
    root = ET.Element("gpx", {"xmlns": GPX_NAMESPACE, "version": "1.1", "creator": CREATOR})
    metadata = ET.SubElement(root, "metadata")
    _text(metadata, "name", title)
    _text(metadata, "desc", f"{len(visits)} visits, {_total_km(day):.1f} km, "
                            f"home at {format_clock(home.arrive_min)}")
    _text(metadata, "time", when.strftime("%Y-%m-%dT%H:%M:%SZ"))
    before = {stop.order: stop.name for stop in day.stops}
    for stop in visits:
        point = _point(root, "wpt", stop)
        _text(point, "name", stop.name)
        if stop.notes.strip():
            _text(point, "cmt", stop.notes)
        _text(point, "desc", _visit_line(stop, len(visits), before[stop.order - 1]))
        link = ET.SubElement(point, "link", {"href": geo_uri(stop.position)})
        _text(link, "text", "Navigate")
    route = ET.SubElement(root, "rte")
    _text(route, "name", title)
    for stop in day.stops:
        point = _point(route, "rtept", stop)
        _text(point, "name", stop.name)
        if stop.kind == "visit":
            _text(point, "desc", _visit_line(stop, len(visits), before[stop.order - 1]))
        elif stop.kind == "start":
            _text(point, "desc", f"Leave {format_clock(stop.depart_min)}")
        else:
            _text(point, "desc", f"Home {format_clock(stop.arrive_min)}")
    ET.indent(root)
    return ET.tostring(root, encoding="utf-8", xml_declaration=True) + b"\n"


def _text(parent: ET.Element, name: str, text: str) -> ET.Element:
    child = ET.SubElement(parent, name)
    child.text = text
    return child


def _point(parent: ET.Element, name: str, stop: ExportStop) -> ET.Element:
    lon = -180.0 if stop.position.lon == 180.0 else stop.position.lon
    return ET.SubElement(parent, name, {"lat": _decimal(stop.position.lat),
                                              "lon": _decimal(lon)})


def _decimal(value: float) -> str:
    """xsd:decimal allows no exponent: fixed notation, trailing zeros dropped."""
    written = f"{value:.{_DECIMALS}f}".rstrip("0").rstrip(".")
    return "0" if written in ("", "-0") else written


def _visit_line(stop: ExportStop, total: int, from_name: str) -> str:
    return (f"Stop {stop.order} of {total}: arrive {format_clock(stop.arrive_min)}, "
            f"visit {format_clock(stop.start_min)}-{format_clock(stop.depart_min)}; "
            f"{stop.leg_km:.1f} km, {round(stop.leg_min)} min from {from_name}")


def _total_km(day: ExportDay) -> float:
    return sum(stop.leg_km for stop in day.stops)

