"""Storage of the client book: clients, their opening hours per weekday, CSV in and out."""

from __future__ import annotations

import csv
import io

from solver.clock import Window, format_windows, parse_windows
from solver.plan_csv import guard_cell, unguard_cell

from . import versions
from .db import transaction
from .errors import FieldErrors, NotFound
from .fields import SKIP, Checker
from .locations import position_json, read_location

__all__ = ["WEEKDAYS", "FIELDS", "CHANGE_FIELDS", "CSV_COLUMNS", "CLOSED", "list_clients", "get",
           "create", "update", "windows_on", "export_csv", "import_csv", "as_json"]

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")  # index = ISO weekday - 1
CLOSED = "closed"
FIELDS = {"name", "location", "visit_min", "windows", "notes", "active"}
CHANGE_FIELDS = FIELDS | {versions.FIELD}  # a change may name the version it was made from
CSV_COLUMNS = ("name", "lat", "lon", "visit_min", *WEEKDAYS, "notes", "active")
MAX_NAME = 120
MAX_NOTES = 2000
MAX_VISIT_MIN = 720
MAX_IMPORT_ROWS = 5000


def _hours(conn, ids) -> dict[int, dict[str, str]]:
    ids = list(ids)
    hours = {cid: dict.fromkeys(WEEKDAYS, "") for cid in ids}
    if not ids:
        return hours
    marks = ",".join("?" * len(ids))
    windows: dict[tuple[int, int], list[Window]] = {}
    for row in conn.execute(f"SELECT client_id, weekday, start_min, end_min FROM client_windows "
                            f"WHERE client_id IN ({marks}) ORDER BY start_min", ids):
        windows.setdefault((row[0], row[1]), []).append(Window(row[2], row[3]))
    for (cid, day), spans in windows.items():
        hours[cid][WEEKDAYS[day]] = format_windows(spans)
    for cid, day in conn.execute(f"SELECT client_id, weekday FROM client_closed_days "
                                 f"WHERE client_id IN ({marks})", ids):
        hours[cid][WEEKDAYS[day]] = CLOSED
    return hours


def as_json(row, hours: dict[str, str]) -> dict:
    return {
        "id": row["id"],
        "name": row["name"],
        "location": position_json(row["lat"], row["lon"]),
        "visit_min": row["visit_min"],
        "windows": hours,
        "notes": row["notes"],
        "active": bool(row["active"]),
        "updated_at": row["updated_at"],
        "version": row["version"],
    }


def list_clients(conn, *, query: str = "", active: bool | None = None) -> list[dict]:
    """Clients by name; ``query`` matches name or notes, ``active`` filters the flag."""
    sql, args = "SELECT * FROM clients WHERE 1 = 1", []
    if query:
        escaped = query.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
        sql += " AND (name LIKE ? ESCAPE '\\' OR notes LIKE ? ESCAPE '\\')"
        args += [f"%{escaped}%"] * 2
    if active is not None:
        sql += " AND active = ?"
        args.append(int(active))
    rows = conn.execute(sql + " ORDER BY name COLLATE NOCASE", args).fetchall()
    hours = _hours(conn, (r["id"] for r in rows))
    return [as_json(r, hours[r["id"]]) for r in rows]


def get(conn, client_id: int, *, field: str | None = None) -> dict:
    row = conn.execute("SELECT * FROM clients WHERE id = ?", (client_id,)).fetchone()
    if row is None:
        raise NotFound("client", client_id, field=field)
    return as_json(row, _hours(conn, [client_id])[client_id])


def windows_on(conn, client_ids, weekday: int) -> dict[int, tuple[Window, ...] | None]:
    """Each client's windows on ``weekday`` (0 = Monday): () any time, None closed."""
    result = {}
    for cid, hours in _hours(conn, client_ids).items():
        text = hours[WEEKDAYS[weekday]]
        result[cid] = None if text == CLOSED else parse_windows(text)
    return result


def _read(check: Checker, body: dict, *, partial: bool) -> dict:
    """The client's columns from ``body``; on ``partial`` only the fields given."""
    out: dict = {}
    if not partial or "name" in body:
        out["name"] = check.text("name", max_len=MAX_NAME, required=True)
    if not partial or "location" in body:
        if "location" not in body:
            check.fail("location", "location is missing; paste coordinates such as "
                       "'41.40338, 2.17403'")
        else:
            pos = read_location(check, "location", body["location"])
            out["location"] = pos
    if not partial or "visit_min" in body:
        out["visit_min"] = check.number("visit_min", low=1, high=MAX_VISIT_MIN, integer=True,
                                        unit="min")
    if "windows" in body:
        out["windows"] = _read_windows(check, body["windows"])
    elif not partial:
        out["windows"] = {}
    if not partial or "notes" in body:
        out["notes"] = check.text("notes", max_len=MAX_NOTES)
    if "active" in body:
        out["active"] = check.boolean("active")
    elif not partial:
        out["active"] = True
    return out


def _read_windows(check: Checker, value) -> dict:
    if value is None:
        return {}
    if not isinstance(value, dict):
        check.fail("windows", "windows must be an object by weekday, e.g. "
                   '{"mon": "09:00-12:00, 14:00-17:00", "sun": "closed"}', repr(value)[:80])
        return {}
    parsed = {}
    for day, text in value.items():
        field = f"windows.{day}"
        if day not in WEEKDAYS:
            check.fail(field, f"{day!r} is not a weekday; expected one of {', '.join(WEEKDAYS)}",
                       str(day)[:20])
            continue
        if text is None or (isinstance(text, str) and not text.strip()):
            continue
        if not isinstance(text, str):
            check.fail(field, f"{field} must be text such as '09:00-12:00' or 'closed'",
                       repr(text)[:80])
            continue
        if text.strip().lower() == CLOSED:
            parsed[day] = None
            continue
        spans = check.run(field, parse_windows, text, field=field)
        if spans is not SKIP:
            parsed[day] = spans
    return parsed


def _check_name_free(conn, check: Checker, name, client_id=None) -> None:
    if not name:
        return
    row = conn.execute("SELECT id FROM clients WHERE name = ? COLLATE NOCASE AND id IS NOT ?",
                       (name, client_id)).fetchone()
    if row is not None:
        check.fail("name", f"name {name!r} is already used by client {row['id']}; names must "
                   "differ", name)


def _write_windows(conn, client_id: int, windows: dict) -> None:
    conn.execute("DELETE FROM client_windows WHERE client_id = ?", (client_id,))
    conn.execute("DELETE FROM client_closed_days WHERE client_id = ?", (client_id,))
    for day, spans in windows.items():
        weekday = WEEKDAYS.index(day)
        if spans is None:
            conn.execute("INSERT INTO client_closed_days (client_id, weekday) VALUES (?, ?)",
                         (client_id, weekday))
            continue
        for w in spans:
            conn.execute("INSERT INTO client_windows (client_id, weekday, start_min, end_min) "
                         "VALUES (?, ?, ?, ?)", (client_id, weekday, w.start_min, w.end_min))


def _insert(conn, data: dict) -> int:
    pos = data["location"]
    cur = conn.execute(
        "INSERT INTO clients (name, lat, lon, visit_min, notes, active) VALUES (?, ?, ?, ?, ?, ?)",
        (data["name"], pos.lat, pos.lon, data["visit_min"], data["notes"], int(data["active"])))
    _write_windows(conn, cur.lastrowid, data["windows"])
    return cur.lastrowid


def _apply(conn, client_id: int, data: dict) -> None:
    columns = {k: data[k] for k in ("name", "visit_min", "notes") if k in data}
    if "active" in data:
        columns["active"] = int(data["active"])
    if "location" in data:
        columns["lat"], columns["lon"] = data["location"].lat, data["location"].lon
    if not columns and "windows" not in data:
        return
    # Hours live in their own tables, yet changing them is a change of the client too.
    sets = "".join(f"{k} = ?, " for k in columns)
    conn.execute(f"UPDATE clients SET {sets}version = version + 1, updated_at = "
                 f"strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?",
                 (*columns.values(), client_id))
    if "windows" in data:
        _write_windows(conn, client_id, data["windows"])


def create(conn, body: dict) -> dict:
    check = Checker(body)
    data = _read(check, body, partial=False)
    # The name check holds the write lock, so two devices adding one name get one 422.
    with transaction(conn):
        _check_name_free(conn, check, data.get("name"))
        check.done()
        client_id = _insert(conn, data)
    return get(conn, client_id)


def update(conn, client_id: int, body: dict) -> dict:
    """Change the fields given; ``windows``, when given, replaces all seven weekdays.

    With ``version`` the change applies only if the client is still at that version (409).
    """
    get(conn, client_id)
    check = Checker(body)
    expected = versions.read(check, body)
    data = _read(check, body, partial=True)
    # Checks and write under one lock: no other change can land between them.
    with transaction(conn):
        if "name" in data:
            _check_name_free(conn, check, data["name"], client_id)
        check.done()
        versions.ensure_current(expected, f"client {client_id}", lambda: get(conn, client_id))
        _apply(conn, client_id, data)
    return get(conn, client_id)


def export_csv(conn) -> str:
    """Every client, one row each, in the columns of CSV_COLUMNS (see API docs)."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")  # RFC 4180 line ends
    writer.writerow(CSV_COLUMNS)
    for c in list_clients(conn):
        loc = c["location"]
        # Names and notes a spreadsheet would run as formulas get a leading apostrophe
        # (OWASP "CSV Injection"); importing the file takes it off again.
        writer.writerow([guard_cell(c["name"]), f"{loc['lat']:.6f}", f"{loc['lon']:.6f}",
                         c["visit_min"], *(c["windows"][d] for d in WEEKDAYS),
                         guard_cell(c["notes"]), "yes" if c["active"] else "no"])
    return out.getvalue()


# Columns of the solver's stops file, so that file imports as it is.
_ALIASES = {"location": "lat and lon in any form", "duration_min": "visit_min",
            "windows": "the same hours every weekday"}
_TRUE = {"yes", "y", "true", "1", ""}
_FALSE = {"no", "n", "false", "0"}


def import_csv(conn, text: str) -> dict:
    """Create or update (matched by name) every row; any bad cell and nothing is stored."""
    reader = csv.reader(io.StringIO(text.lstrip("\ufeff")))
    try:
        rows = list(reader)
    except csv.Error as exc:
        raise FieldErrors.one("file", f"the file is not readable as CSV: {exc}") from None
    if not rows:
        raise FieldErrors.one("file", "the file is empty; expected a header row "
                              f"{','.join(CSV_COLUMNS)}")
    header = [h.strip().lower() for h in rows[0]]
    _check_header(header)
    body_rows = [r for r in rows[1:] if any(cell.strip() for cell in r)]
    if len(body_rows) > MAX_IMPORT_ROWS:
        raise FieldErrors.one("file", f"the file has {len(body_rows)} rows; at most "
                              f"{MAX_IMPORT_ROWS} can be imported at once")
    errors: list[dict] = []
    planned: list[dict] = []
    seen: dict[str, int] = {}
    for number, raw in enumerate(rows[1:], start=2):
        if not any(cell.strip() for cell in raw):
            continue
        if len(raw) > len(header):
            errors.append({"field": f"line {number}", "message": f"line {number} has "
                           f"{len(raw)} cells; the header has {len(header)}", "value": None})
            continue
        cells = dict(zip(header, raw + [""] * (len(header) - len(raw)), strict=True))
        body, bad = _row_body(cells)
        check = Checker(body)
        for field, message, value in bad:
            check.fail(field, message, value)
        data = _read(check, body, partial=False)
        name = data.get("name")
        if name:
            key = name.casefold()
            if key in seen:
                check.fail("name", f"name {name!r} is also on line {seen[key]}", name)
            seen[key] = number
        for e in check.errors:
            errors.append({**e, "field": f"line {number}: {e['field']}",
                           "message": f"line {number}: {e['message']}"})
        if not check.errors:
            planned.append(data)
    if errors:
        raise FieldErrors(errors)
    created = updated = 0
    with transaction(conn):
        for data in planned:
            # Matched under the write lock: a client added meanwhile is updated, not doubled.
            row = conn.execute("SELECT id FROM clients WHERE name = ? COLLATE NOCASE",
                               (data["name"],)).fetchone()
            client_id = row["id"] if row else None
            if client_id is None:
                _insert(conn, data)
                created += 1
            else:
                _apply(conn, client_id, data)
                updated += 1
    return {"created": created, "updated": updated}


def _check_header(header: list[str]) -> None:
    known = set(CSV_COLUMNS) | set(_ALIASES)
    problems = [f"column {h!r} is not known" for h in header if h not in known]
    if len(set(header)) != len(header):
        problems.append("a column appears twice")
    if "name" not in header:
        problems.append("column 'name' is missing")
    if "visit_min" not in header and "duration_min" not in header:
        problems.append("column 'visit_min' is missing")
    if "location" not in header and not {"lat", "lon"} <= set(header):
        problems.append("give either a 'location' column or both 'lat' and 'lon'")
    if problems:
        raise FieldErrors.one("file", "the header row is not usable: " + "; ".join(problems)
                              + f". Expected columns: {','.join(CSV_COLUMNS)}")


def _row_body(cells: dict) -> tuple[dict, list]:
    """A CSV row as the same body the JSON API takes, plus cell-level problems."""
    bad = []
    body: dict = {"name": unguard_cell(cells.get("name", "")),
                  "notes": unguard_cell(cells.get("notes", ""))}
    if cells.get("location", "").strip():
        body["location"] = cells["location"]
    elif "lat" in cells or "lon" in cells:
        lat, lon = cells.get("lat", "").strip(), cells.get("lon", "").strip()
        body["location"] = f"{lat}, {lon}" if lat and lon else ""
    minutes = cells.get("visit_min", cells.get("duration_min", "")).strip()
    try:
        body["visit_min"] = int(minutes)
    except ValueError:
        body["visit_min"] = minutes or None
    every_day = cells.get("windows", "")
    body["windows"] = {d: cells.get(d, every_day) for d in WEEKDAYS}
    active = cells.get("active", "").strip().lower()
    if active in _TRUE:
        body["active"] = True
    elif active in _FALSE:
        body["active"] = False
    else:
        bad.append(("active", f"active {active!r} is not yes or no", active))
    return body, bad
