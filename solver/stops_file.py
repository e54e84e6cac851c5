"""Rondo's stops CSV: one row per place, home first unless given separately.

Columns (header names, case-insensitive; order free):

- ``name`` (required): the client, unique in the file;
- ``location``: any form :func:`solver.coordinates.parse_position` reads, *or*
  ``lat`` and ``lon`` in decimal degrees;
- ``duration_min`` (optional): how long the visit lasts, minutes (default 0);
- ``windows`` (optional): when the visit may start, e.g. ``09:00-12:00, 14:00-17:00``
  (empty: any time);
- ``notes`` (optional): free text carried into exports;
- week columns, read by ``rondo week``: ``days`` (weekdays the client receives
  visitors, e.g. ``Mon Wed Fri`` or ``Mon-Thu``; empty: every working day),
  ``visits_per_week`` (default 1), ``min_gap_days`` (default 1), ``fixed_day``.

Every cell is kept in :attr:`Stop.cells` (by lower-case column name).

Errors name the line and column, e.g. "line 4, column lat: '123.4' ...".
"""

from __future__ import annotations

import csv
import io
import math
import os
from dataclasses import dataclass, field
from pathlib import Path

from .clock import Window, parse_windows
from .coordinates import Position, check_position, parse_position
from .errors import InvalidInput

__all__ = ["Stop", "read_stops_csv", "parse_stops_csv", "MAX_ROWS"]

MAX_ROWS = 2000  # a rep's whole client book fits many times over


@dataclass(frozen=True)
class Stop:
    """A place from the file, with its visit duration and windows."""

    name: str
    position: Position
    service_min: float = 0.0
    windows: tuple[Window, ...] = ()
    notes: str = ""
    cells: dict[str, str] = field(default_factory=dict, compare=False)


def read_stops_csv(source: str | os.PathLike) -> tuple[list[Stop], set[str]]:
    """The stops of a CSV file (home first) and the set of optional columns it has."""
    path = Path(source)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise InvalidInput(f"cannot read {path}: {exc.strerror}", field="file",
                           value=str(path)) from exc
    except UnicodeDecodeError as exc:
        raise InvalidInput(f"{path} is not UTF-8 text", field="file", value=str(path)) from exc
    return parse_stops_csv(text)


def parse_stops_csv(text: str) -> tuple[list[Stop], set[str]]:
    """Parse the CSV text; see the module docstring for the columns."""
    reader = csv.DictReader(io.StringIO(text.lstrip("\ufeff")))
    if not reader.fieldnames:
        raise InvalidInput("the stops file is empty; expected a header line such as "
                           "name,location,duration_min,windows", field="file")
    columns = {(h or "").strip().lower(): h for h in reader.fieldnames}
    if "name" not in columns:
        raise InvalidInput(f"the header {reader.fieldnames!r} has no 'name' column",
                           field="name")
    has_location = "location" in columns
    if not has_location and not ("lat" in columns and "lon" in columns):
        raise InvalidInput("the header needs a 'location' column or both 'lat' and 'lon'",
                           field="location")
    stops: list[Stop] = []
    seen: set[str] = set()
    for line_no, row in enumerate(reader, start=2):
        if line_no - 1 > MAX_ROWS:
            raise InvalidInput(f"the file has more than {MAX_ROWS} rows", field="file")

        def cell(column: str, row=row) -> str:
            key = columns.get(column)
            value = row.get(key) if key is not None else None
            return (value or "").strip()

        if not any((v or "").strip() for v in row.values() if isinstance(v, str)):
            continue
        name = cell("name")
        where = f"line {line_no}"
        if not name:
            raise InvalidInput(f"{where}: the name is empty", field="name", value=name)
        if name in seen:
            raise InvalidInput(f"{where}: the name {name!r} appears twice", field="name",
                               value=name)
        seen.add(name)
        if has_location and cell("location"):
            position = parse_position(cell("location"), field=f"{where}, column location")
        else:
            position = check_position(_number(cell("lat"), f"{where}, column lat"),
                                      _number(cell("lon"), f"{where}, column lon"),
                                      field=f"{where} ({name})")
        duration_text = cell("duration_min")
        service = _number(duration_text, f"{where}, column duration_min") if duration_text else 0.0
        if not 0 <= service <= 24 * 60:
            raise InvalidInput(f"{where}, column duration_min: {duration_text!r} is not a "
                               "duration; expected 0..1440 minutes",
                               field="duration_min", value=duration_text)
        windows = parse_windows(cell("windows"), field=f"{where}, column windows")
        cells = {column: cell(column) for column in columns}
        stops.append(Stop(name, position, float(service), windows, cell("notes"), cells))
    if not stops:
        raise InvalidInput("the stops file has a header but no rows", field="file")
    optional = {c for c in ("duration_min", "windows", "notes") if c in columns}
    return stops, optional


def _number(text: str, field: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InvalidInput(f"{field}: {text!r} is not a number", field=field,
                           value=text) from None
    if not math.isfinite(value):
        raise InvalidInput(f"{field}: {text!r} is not a finite number", field=field, value=text)
    return value
