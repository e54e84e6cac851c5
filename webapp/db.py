"""The laptop's SQLite database: connections, transactions and forward migrations."""

from __future__ import annotations

import contextlib
import sqlite3
from importlib import resources

from flask import current_app, g

__all__ = [
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "DatabaseTooNew",
    "connect",
    "get_db",
    "init_app",
    "migrate",
    "transaction",
]

# Step k (1-based) brings a database from user_version k-1 to k. Append, never edit:
# a laptop may hold a database made by any earlier release.
MIGRATIONS = ("schema.sql", "migration_002_day_exports.sql", "migration_003_paired_devices.sql",
              "migration_004_week_plans.sql", "migration_005_request_keys.sql",
              "migration_006_record_versions.sql")
SCHEMA_VERSION = len(MIGRATIONS)
BUSY_TIMEOUT_MS = 5000  # a solve worker and a request may write at the same moment


class DatabaseTooNew(RuntimeError):
    """The file was written by a newer Rondo; opening it could lose what it holds."""


def connect(path: str) -> sqlite3.Connection:
    """A connection in autocommit mode (transactions are explicit), rows by name, keys enforced."""
    conn = sqlite3.connect(path, isolation_level=None, check_same_thread=False)
    conn.row_factory = sqlite3.Row
    conn.execute("PRAGMA foreign_keys = ON")
    conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
    # FULL: a commit the server acknowledged is on disk, even if the laptop loses power
    # (sqlite.org/pragma.html#pragma_synchronous); not left to how SQLite was compiled.
    conn.execute("PRAGMA synchronous = FULL")
    return conn


@contextlib.contextmanager
def transaction(conn: sqlite3.Connection):
    """All writes inside commit together or not at all; the write lock is taken up front.

    Inside another transaction it becomes a savepoint, so the outer one stays all or nothing.
    """
    if conn.in_transaction:
        conn.execute("SAVEPOINT inner")
        try:
            yield conn
        except BaseException:
            conn.execute("ROLLBACK TO inner")
            conn.execute("RELEASE inner")
            raise
        conn.execute("RELEASE inner")
        return
    conn.execute("BEGIN IMMEDIATE")
    try:
        yield conn
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    conn.execute("COMMIT")


def migrate(conn: sqlite3.Connection) -> int:
    """Bring the database forward to SCHEMA_VERSION, one step per transaction; return it."""
    version = conn.execute("PRAGMA user_version").fetchone()[0]
    if version > SCHEMA_VERSION:
        raise DatabaseTooNew(
            f"the database is at schema version {version}, newer than this Rondo "
            f"({SCHEMA_VERSION}); update Rondo instead of opening it"
        )
    # WAL lets the solve workers write while the page reads; the mode stays with the file.
    conn.execute("PRAGMA journal_mode = WAL")
    for step in range(version + 1, SCHEMA_VERSION + 1):
        script = resources.files(__package__).joinpath(MIGRATIONS[step - 1]).read_text("utf-8")
        # executescript would commit on its own; run the statements inside one transaction.
        with transaction(conn):
            for statement in _statements(script):
                conn.execute(statement)
            conn.execute(f"PRAGMA user_version = {step}")
    return SCHEMA_VERSION


def _statements(script: str):
    buffer = ""
    for line in script.splitlines(keepends=True):
        if line.lstrip().startswith("--"):
            continue
        buffer += line
        if sqlite3.complete_statement(buffer):
            yield buffer.strip()
            buffer = ""
    if buffer.strip():
        yield buffer.strip()


def get_db() -> sqlite3.Connection:
    """This request's connection, opened on first use."""
    if "db" not in g:
        g.db = connect(current_app.config["DATABASE"])
    return g.db


def _close_db(_exc=None) -> None:
    conn = g.pop("db", None)
    if conn is not None:
        conn.close()


def init_app(app) -> None:
    """Migrate the database once at start-up and close each request's connection after it."""
    conn = connect(app.config["DATABASE"])
    try:
        migrate(conn)
    finally:
        conn.close()
    app.teardown_appcontext(_close_db)
