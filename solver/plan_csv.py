"""A day's loop as a CSV table for spreadsheets: one row per stop, home first and last.

Guarantees: RFC 4180 shape (a header row, comma-separated fields, CRLF line ends, fields
with commas, quotes or line breaks quoted and inner quotes doubled: the csv module's
"excel" dialect), encoded UTF-8 *with* a byte-order mark. The mark is what makes Excel read
the file as UTF-8 rather than the local code page, so names such as "Café Ölberg" survive
(common practice, no source); LibreOffice, Numbers and Python's "utf-8-sig" codec skip it.
Numbers use a dot as decimal separator, whatever the locale.

Columns, in this order: order, client, arrive, start, depart (HH:MM, blank where the stop
has none), wait_min, leg_km, leg_min (the drive that ends at this stop), lat, lon (decimal
degrees, 6 decimals), geo_uri (RFC 5870). A client name that a spreadsheet would run as a
formula (starting with =, +, -, @, tab or carriage return; OWASP "CSV Injection") is written
with a leading apostrophe.
"""

from __future__ import annotations

import csv
import io

from .clock import format_clock
from .coordinates import geo_uri
from .errors import InvalidInput
from .export_stops import ExportDay, ExportStop

__all__ = ["CSV_COLUMNS", "plan_csv", "plan_csv_text", "guard_cell", "unguard_cell"]

CSV_COLUMNS = ("order", "client", "arrive", "start", "depart", "wait_min", "leg_km", "leg_min",
               "lat", "lon", "geo_uri")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_BOM = "\ufeff"


def plan_csv(day: ExportDay) -> bytes:
    """``day`` as CSV bytes: UTF-8 with a byte-order mark, CRLF line ends."""
    return (_BOM + plan_csv_text(day)).encode("utf-8")


def plan_csv_text(day: ExportDay) -> str:
    """``day`` as CSV text without the byte-order mark (for pasting or embedding)."""
    if not isinstance(day, ExportDay):
        raise InvalidInput(f"day is a {type(day).__name__}; expected an ExportDay", field="day",
                           value=day)
    out = io.StringIO()
    writer = csv.writer(out, dialect="excel")
    writer.writerow(CSV_COLUMNS)
    for stop in day.stops:
        writer.writerow(_row(stop))
    return out.getvalue()


def _row(stop: ExportStop) -> list[str]:
    first = stop.kind == "start"
    return [
        str(stop.order),
        guard_cell(stop.name),
        _clock(stop.arrive_min),
        _clock(stop.start_min),
        _clock(stop.depart_min),
        "" if stop.kind != "visit" else f"{stop.wait_min:.0f}",
        "" if first else f"{stop.leg_km:.2f}",
        "" if first else f"{stop.leg_min:.0f}",
        f"{stop.position.lat:.6f}",
        f"{stop.position.lon:.6f}",
        geo_uri(stop.position),
    ]


def _clock(minutes: float | None) -> str:
    return "" if minutes is None else format_clock(minutes)


def guard_cell(text: str) -> str:
    """``text`` with a leading apostrophe when a spreadsheet would run it as a formula."""
    return "'" + text if text.startswith(_FORMULA_START) else text


def unguard_cell(text: str) -> str:
    """The inverse of :func:`guard_cell`, for reading back a file this project wrote."""
    return text[1:] if text.startswith("'") and text[1:].startswith(_FORMULA_START) else text
