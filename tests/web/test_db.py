"""The laptop database: WAL, foreign keys, forward migrations, all-or-nothing writes.

Sources: SQLite documentation for PRAGMA journal_mode, foreign_keys and user_version
(sqlite.org/pragma.html) and for savepoints (sqlite.org/lang_savepoint.html).
"""

from __future__ import annotations

import sqlite3

import pytest

from webapp import create_app
from webapp.db import MIGRATIONS, SCHEMA_VERSION, DatabaseTooNew, connect, migrate, transaction

from .helpers import dump


def test_database_lives_in_the_instance_folder_with_wal_and_keys(app, conn, tmp_path):
    assert app.config["DATABASE"] == str(tmp_path / "rondo.sqlite")
    # journal_mode persists in the file once set to WAL (SQLite docs, PRAGMA journal_mode).
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION == len(MIGRATIONS)


def test_default_database_path_is_inside_the_given_instance_folder(tmp_path):
    app = create_app(instance_path=str(tmp_path / "data"))
    assert app.config["DATABASE"] == str(tmp_path / "data" / "rondo.sqlite")
    assert (tmp_path / "data" / "rondo.sqlite").exists()


def test_foreign_keys_are_enforced(conn):
    with pytest.raises(sqlite3.IntegrityError), transaction(conn):
        conn.execute("INSERT INTO client_windows (client_id, weekday, start_min, end_min) "
                     "VALUES (999, 0, 540, 600)")


def test_migrating_again_changes_nothing(conn):
    before = dump(conn)
    assert migrate(conn) == SCHEMA_VERSION
    assert dump(conn) == before


def test_a_fresh_file_is_brought_forward_from_version_zero(tmp_path):
    path = str(tmp_path / "old.sqlite")
    conn = connect(path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 0
    migrate(conn)
    tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert {"settings", "clients", "client_windows", "client_closed_days", "drive_entries",
            "day_plans", "plan_choices", "plan_solves", "planned_visits",
            "visits_done"} <= tables
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    conn.close()


def test_a_database_from_a_newer_release_is_refused_untouched(tmp_path):
    path = str(tmp_path / "newer.sqlite")
    conn = connect(path)
    conn.execute("CREATE TABLE kept (x)")
    conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    with pytest.raises(DatabaseTooNew, match="newer than this Rondo"):
        migrate(conn)
    assert [tuple(r) for r in conn.execute("SELECT name FROM sqlite_master")] == [("kept",)]
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] != "wal"
    conn.close()


def test_a_failed_write_leaves_nothing_behind(conn):
    before = dump(conn)
    with pytest.raises(sqlite3.IntegrityError), transaction(conn):
        conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('A', 1, 2, 30)")
        conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('a', 1, 2, 30)")
    assert dump(conn) == before


def test_an_inner_failure_rolls_back_only_to_its_savepoint(conn):
    with transaction(conn):
        conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('Kept', 1, 2, 30)")
        with pytest.raises(sqlite3.IntegrityError), transaction(conn):
            conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('X', 1, 2, 0)")
    names = [r[0] for r in conn.execute("SELECT name FROM clients")]
    assert names == ["Kept"]
