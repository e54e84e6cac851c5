"""The demo scenario: an invented rep and invented clients, loaded into an empty database only."""

from __future__ import annotations

import json
from importlib import resources

from . import clients, drives, settings
from .db import transaction

__all__ = ["SCENARIO_FILE", "is_empty", "load_scenario", "fill_if_empty"]

SCENARIO_FILE = "demo_scenario.json"


def load_scenario() -> dict:
    return json.loads(resources.files(__package__).joinpath(SCENARIO_FILE).read_text("utf-8"))


def is_empty(conn) -> bool:
    """Nothing the rep entered: no clients, drives or plans, and no home."""
    for table in ("clients", "drive_entries", "day_plans"):
        if conn.execute(f"SELECT 1 FROM {table} LIMIT 1").fetchone() is not None:
            return False
    return conn.execute("SELECT home_lat FROM settings WHERE id = 1").fetchone()[0] is None


def fill_if_empty(conn) -> bool:
    """Load the scenario through the same checks as the API, in one transaction; True if done."""
    if not is_empty(conn):
        return False
    scenario = load_scenario()
    with transaction(conn):
        if not is_empty(conn):  # another process got there between the check and the lock
            return False
        settings.update(conn, scenario["settings"])
        ids = {"home": "home"}
        for client in scenario["clients"]:
            ids[client["name"]] = clients.create(conn, client)["id"]
        for drive in scenario["drives"]:
            drives.save(conn, {"from": ids[drive["from"]], "to": ids[drive["to"]],
                               "km": drive["km"], "minutes": drive["minutes"],
                               "both_ways": drive["both_ways"]})
        conn.execute("UPDATE settings SET is_demo = 1 WHERE id = 1")
    return True
