"""Storage of drives the rep measured: road km and/or minutes for one direction of a pair."""

from __future__ import annotations

from solver.distances import DriveOverride

from .db import transaction
from .errors import NotFound
from .fields import SKIP, Checker, is_id

__all__ = ["FIELDS", "HOME", "list_drives", "save", "delete", "overrides_for"]

HOME = "home"
FIELDS = {"from", "to", "km", "minutes", "both_ways"}
MAX_DRIVE_KM = 5000.0  # a day's driving at the solver's top speed of 200 km/h is 4800 km
MAX_DRIVE_MIN = 1440.0  # a drive longer than a day fits no day plan


def _place(conn, check: Checker, field: str, value):
    """'home' -> None (home has no client id); an id -> that client's id."""
    if value == HOME:
        return None
    if not is_id(value):
        check.fail(field, f"{field} is {value!r}; expected \"home\" or a client id", repr(value))
        return SKIP
    if conn.execute("SELECT 1 FROM clients WHERE id = ?", (value,)).fetchone() is None:
        raise NotFound("client", value, field=field)
    return value


def _json(row) -> dict:
    return {
        "id": row["id"],
        "from": HOME if row["from_client_id"] is None else row["from_client_id"],
        "to": HOME if row["to_client_id"] is None else row["to_client_id"],
        "from_name": row["from_name"],
        "to_name": row["to_name"],
        "km": row["km"],
        "minutes": row["minutes"],
        "updated_at": row["updated_at"],
    }


_SELECT = (
    "SELECT d.*, ifnull(f.name, s.home_label) AS from_name, ifnull(t.name, s.home_label) "
    "AS to_name FROM drive_entries d JOIN settings s ON s.id = 1 "
    "LEFT JOIN clients f ON f.id = d.from_client_id LEFT JOIN clients t ON t.id = d.to_client_id"
)


def list_drives(conn) -> list[dict]:
    rows = conn.execute(_SELECT + " ORDER BY from_name COLLATE NOCASE, to_name COLLATE NOCASE")
    return [_json(r) for r in rows]


def save(conn, body: dict) -> list[dict]:
    """Store the drive from -> to (and back, on ``both_ways``), replacing an earlier entry."""
    check = Checker(body)
    origin = _place(conn, check, "from", body.get("from"))
    target = _place(conn, check, "to", body.get("to"))
    km, minutes = body.get("km"), body.get("minutes")
    # Beyond these no single drive fits a working day; such a figure is a typo.
    readable = all([check.number(name, low=0, high=high, unit=unit) is not None
                    for name, high, unit in (("km", MAX_DRIVE_KM, "km"),
                                             ("minutes", MAX_DRIVE_MIN, "min"))
                    if body.get(name) is not None])
    both = check.boolean("both_ways") if "both_ways" in body else False
    if SKIP not in (origin, target) and origin == target:
        check.fail("to", "from and to are the same place; a drive needs two places", body["to"])
    if readable:
        entry = check.run("km", DriveOverride, km=km, minutes=minutes)
    check.done()
    pairs = [(origin, target)] + ([(target, origin)] if both else [])
    ids = []
    with transaction(conn):
        for a, b in pairs:
            conn.execute("DELETE FROM drive_entries WHERE ifnull(from_client_id, 0) = ifnull(?, 0)"
                         " AND ifnull(to_client_id, 0) = ifnull(?, 0)", (a, b))
            cur = conn.execute(
                "INSERT INTO drive_entries (from_client_id, to_client_id, km, minutes) "
                "VALUES (?, ?, ?, ?)", (a, b, entry.km, entry.minutes))
            ids.append(cur.lastrowid)
    marks = ",".join("?" * len(ids))
    return [_json(r) for r in conn.execute(_SELECT + f" WHERE d.id IN ({marks}) ORDER BY d.id",
                                           ids)]


def delete(conn, drive_id: int) -> None:
    with transaction(conn):
        cur = conn.execute("DELETE FROM drive_entries WHERE id = ?", (drive_id,))
        if cur.rowcount == 0:
            raise NotFound("drive", drive_id)


def overrides_for(conn, client_ids: list[int | None]) -> dict[tuple[int, int], DriveOverride]:
    """The entries among ``client_ids`` (None = home) keyed by their index in that list."""
    index = {cid: k for k, cid in enumerate(client_ids)}
    found = {}
    for row in conn.execute("SELECT from_client_id, to_client_id, km, minutes FROM "
                            "drive_entries"):
        a, b = row["from_client_id"], row["to_client_id"]
        if a in index and b in index:
            found[(index[a], index[b])] = DriveOverride(km=row["km"], minutes=row["minutes"])
    return found
