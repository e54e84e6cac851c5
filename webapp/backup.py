"""Backups of the laptop's database, putting one back, and the lock that keeps the two apart.

A backup is taken with SQLite's online backup API, so it is one consistent moment of the
database even while the server writes (sqlite.org/backup.html). A restore needs the folder to
itself: ``rondo serve`` holds a shared lock on ``rondo.lock`` while it runs and a restore takes
it exclusively, so a restore refuses while a server runs and a server waits for a restore.
SQLite's own file locks are used, so the lock goes with the process, even one that crashed.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import shutil
import sqlite3
import tempfile
from pathlib import Path

from . import db

__all__ = [
    "DATABASE_NAME",
    "LOCK_NAME",
    "BackupError",
    "DataInUse",
    "backup",
    "check_rondo_database",
    "restore",
    "server_lock",
]

DATABASE_NAME = "rondo.sqlite"  # what create_app names it inside the data folder
LOCK_NAME = "rondo.lock"
# Every file that is an SQLite 3 database starts with these 16 bytes (sqlite.org/fileformat.html,
# section 1.3 "The Database Header").
SQLITE_MAGIC = b"SQLite format 3\x00"
# Tables of migration step 1: a file without them is some other program's database.
REQUIRED_TABLES = frozenset({"settings", "clients", "client_windows", "client_closed_days",
                             "drive_entries", "day_plans", "plan_choices", "plan_solves",
                             "planned_visits", "visits_done"})
SERVER_WAIT_MS = 10_000  # a server starting during a restore waits this long for it


class BackupError(ValueError):
    """A folder or file that cannot be backed up or restored; the message says why."""


class DataInUse(RuntimeError):
    """A server is running on the data folder (or a restore is), so it cannot be replaced."""


def database_path(data_dir) -> Path:
    return Path(data_dir).resolve() / DATABASE_NAME


def _open_existing(path: Path) -> sqlite3.Connection:
    """A connection to a database file that must exist already (never creates one)."""
    conn = sqlite3.connect(f"{path.as_uri()}?mode=rw", uri=True, isolation_level=None,
                           timeout=db.BUSY_TIMEOUT_MS / 1000)
    conn.row_factory = sqlite3.Row
    return conn


def _fsync(path: Path) -> None:
    """Flush a file, or a folder's entry list, to the disk."""
    flags = os.O_RDONLY | getattr(os, "O_DIRECTORY", 0) if path.is_dir() else os.O_RDONLY
    try:
        fd = os.open(path, flags)
    except OSError:  # some systems cannot open a folder; its entries are flushed anyway
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _copy_live(source: sqlite3.Connection, target: Path) -> None:
    """Write a consistent copy of ``source`` to ``target`` as one self-contained file."""
    partial = target.with_name(target.name + ".partial")
    partial.unlink(missing_ok=True)
    copy = sqlite3.connect(partial, isolation_level=None)
    try:
        source.backup(copy)  # one step: the whole database as of one read transaction
        # A single file without a -wal beside it, whatever mode the source was in.
        copy.execute("PRAGMA journal_mode = DELETE")
        problems = _integrity(copy)
        if problems:
            raise BackupError(f"the copy did not pass SQLite's integrity check: {problems}")
    finally:
        copy.close()
    _fsync(partial)
    os.replace(partial, target)
    _fsync(target.parent)


def _integrity(conn: sqlite3.Connection) -> str:
    """'' when PRAGMA integrity_check says ok, else its first findings."""
    rows = [r[0] for r in conn.execute("PRAGMA integrity_check(5)")]
    return "" if rows == ["ok"] else "; ".join(rows)


def backup(data_dir, output) -> dict:
    """Copy the database of ``data_dir`` to ``output`` (replaced atomically if it exists)."""
    source_path = database_path(data_dir)
    if not source_path.is_file():
        raise BackupError(f"there is no Rondo database in {source_path.parent} "
                          f"(no {DATABASE_NAME}); check --data")
    target = Path(output).resolve()
    if target.is_dir():
        raise BackupError(f"--output {output} is a folder; give a file name such as "
                          "rondo-backup.sqlite")
    if target == source_path or (target.parent == source_path.parent
                                 and target.name.startswith(DATABASE_NAME + "-")):
        raise BackupError(f"--output {output} is the live database or one of its files; "
                          "write the backup somewhere else")
    if not target.parent.is_dir():
        raise BackupError(f"the folder of --output {output} does not exist")
    source = _open_existing(source_path)
    try:
        _copy_live(source, target)
    finally:
        source.close()
    return {"path": str(target), **check_rondo_database(target)}


def check_rondo_database(path) -> dict:
    """What the file holds if it is a sound Rondo database; BackupError saying why if not.

    Checks the SQLite header, PRAGMA integrity_check, the schema version and the tables.
    The file is read through a private copy, so it is never changed, even by a journal.
    """
    path = Path(path)
    if not path.is_file():
        raise BackupError(f"{path} is not a file")
    with open(path, "rb") as f:
        head = f.read(len(SQLITE_MAGIC))
    if head != SQLITE_MAGIC:
        raise BackupError(f"{path} is not an SQLite database (its first bytes are not "
                          "'SQLite format 3'); choose a file made by rondo backup")
    with tempfile.TemporaryDirectory(prefix="rondo-check-") as scratch:
        staged = Path(scratch) / DATABASE_NAME
        _stage(path, staged)
        conn = _open_existing(staged)
        try:
            return _describe(conn, path)
        finally:
            conn.close()


def _stage(path: Path, staged: Path) -> None:
    """Copy a database file (and a -wal left beside it) so it can be opened read-write."""
    shutil.copyfile(path, staged)
    wal = path.with_name(path.name + "-wal")
    if wal.is_file():
        shutil.copyfile(wal, staged.with_name(staged.name + "-wal"))


def _describe(conn: sqlite3.Connection, shown: Path) -> dict:
    try:
        problems = _integrity(conn)
        version = conn.execute("PRAGMA user_version").fetchone()[0]
        tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type = "
                                             "'table'")}
    except sqlite3.DatabaseError as exc:
        raise BackupError(f"{shown} cannot be read as a database: {exc}") from None
    if problems:
        raise BackupError(f"{shown} is damaged; SQLite's integrity check says: {problems}")
    if version > db.SCHEMA_VERSION:
        raise BackupError(f"{shown} is at schema version {version}, newer than this Rondo "
                          f"({db.SCHEMA_VERSION}); update Rondo first")
    missing = sorted(REQUIRED_TABLES - tables)
    if version < 1 or missing:
        raise BackupError(f"{shown} is an SQLite database but not Rondo's (schema version "
                          f"{version}, missing tables: {', '.join(missing) or 'none'})")
    if conn.execute("SELECT count(*) FROM settings").fetchone()[0] != 1:
        raise BackupError(f"{shown} has no settings row; it is not a whole Rondo database")
    counts = {t: conn.execute(f"SELECT count(*) FROM {t}").fetchone()[0]
              for t in ("clients", "day_plans", "visits_done", "drive_entries")}
    return {"schema_version": version, "counts": counts}


@contextlib.contextmanager
def _lock(data_dir, *, exclusive: bool, wait_ms: int):
    """Hold the folder's lock; DataInUse if another process holds it the other way."""
    folder = Path(data_dir).resolve()
    folder.mkdir(parents=True, exist_ok=True)
    # Rollback-journal mode (the default): a read transaction holds SQLite's SHARED lock,
    # and BEGIN EXCLUSIVE cannot be had while any other process holds one.
    conn = sqlite3.connect(folder / LOCK_NAME, isolation_level=None, timeout=wait_ms / 1000)
    try:
        try:
            conn.execute("CREATE TABLE IF NOT EXISTS lock_holder (note TEXT)")
            if exclusive:
                conn.execute("BEGIN EXCLUSIVE")
            else:
                conn.execute("BEGIN")
                conn.execute("SELECT count(*) FROM lock_holder").fetchone()
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc) and "busy" not in str(exc):
                raise
            what = ("a Rondo server is running on this folder (or another restore is); "
                    "stop it (Ctrl+C in its window) and run the restore again" if exclusive else
                    "a restore is running on this folder; start the server when it is done")
            raise DataInUse(f"{folder}: {what}") from None
        yield
    finally:
        conn.close()  # ends the transaction and releases the lock


def server_lock(data_dir):
    """Held by ``rondo serve`` for its whole run: restores refuse while it is held."""
    return _lock(data_dir, exclusive=False, wait_ms=SERVER_WAIT_MS)


def _stamp() -> str:
    return dt.datetime.now(dt.UTC).strftime("%Y%m%dT%H%M%SZ")


def restore(data_dir, file) -> dict:
    """Replace the database of ``data_dir`` with ``file`` after checking it; keep the old one.

    Refuses (DataInUse) while a server runs on the folder. The previous database is kept as
    ``rondo-before-restore-<UTC time>.sqlite`` beside it; the restored one is migrated forward.
    """
    source = Path(file).resolve()
    check_rondo_database(source)
    folder = Path(data_dir).resolve()
    live = database_path(folder)
    if source == live:
        raise BackupError(f"{file} is the live database itself; nothing to restore")
    with _lock(folder, exclusive=True, wait_ms=0):
        staged = folder / f".{DATABASE_NAME}.restoring"
        try:
            described = _prepare(source, staged)
            kept = _keep_previous(live) if live.is_file() else None
            os.replace(staged, live)
        finally:
            for leftover in (staged, *_companions(staged)):
                leftover.unlink(missing_ok=True)
        # The old -wal was emptied by the checkpoint in _keep_previous; no journal of the
        # old file may be read against the new one.
        for companion in _companions(live):
            companion.unlink(missing_ok=True)
        _fsync(folder)
    return {"restored_from": str(source), "database": str(live),
            "previous_kept_as": None if kept is None else str(kept), **described,
            "schema_version_now": db.SCHEMA_VERSION}


def _prepare(source: Path, staged: Path) -> dict:
    """Copy ``source`` to ``staged``, check it, migrate it forward; what it holds."""
    for leftover in (staged, *_companions(staged)):
        leftover.unlink(missing_ok=True)
    _stage(source, staged)
    conn = _open_existing(staged)
    try:
        described = _describe(conn, source)
        db.migrate(conn)  # an older backup comes forward to this Rondo's schema
        conn.execute("PRAGMA journal_mode = DELETE")
        problems = _integrity(conn)
        if problems:
            raise BackupError(f"{source} did not pass the integrity check after migrating: "
                              f"{problems}")
    finally:
        conn.close()
    _fsync(staged)
    return described


def _companions(path: Path) -> tuple[Path, ...]:
    return tuple(path.with_name(path.name + suffix) for suffix in ("-wal", "-shm", "-journal"))


def _keep_previous(live: Path) -> Path:
    """Copy the current database beside it under a timestamped name; empty its -wal."""
    kept = live.with_name(f"rondo-before-restore-{_stamp()}.sqlite")
    n = 1
    while kept.exists():
        n += 1
        kept = live.with_name(f"rondo-before-restore-{_stamp()}-{n}.sqlite")
    conn = _open_existing(live)
    try:
        _copy_live(conn, kept)
        conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        conn.close()
    return kept
