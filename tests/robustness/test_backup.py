"""``rondo backup`` and ``rondo restore`` run as the real command against a real server.

References: SQLite's online backup API copies a consistent snapshot while others write
(sqlite.org/backup.html); every SQLite 3 file starts with "SQLite format 3\\0"
(sqlite.org/fileformat.html §1.3); ``PRAGMA integrity_check`` answers "ok" for a sound file
and ``PRAGMA user_version`` holds the schema version (sqlite.org/pragma.html).
"""

from __future__ import annotations

import sqlite3
import subprocess
import sys
import threading
import time
from importlib import resources
from pathlib import Path

import pytest

from webapp import backup
from webapp.db import SCHEMA_VERSION, connect, migrate

from .conftest import ROOT, call

pytestmark = pytest.mark.slow


def rondo(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "webapp", *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def _rows(path: Path) -> list[str]:
    conn = sqlite3.connect(path)
    try:
        return list(conn.iterdump())
    finally:
        conn.close()


def _sound(path: Path) -> None:
    conn = sqlite3.connect(path)
    try:
        assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        assert conn.execute("PRAGMA foreign_key_check").fetchall() == []
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "delete"
        assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    finally:
        conn.close()


def test_backups_taken_while_the_server_writes_are_consistent_snapshots(server_process,
                                                                        tmp_path, report):
    base = server_process.start()
    assert call("PUT", base + "/api/settings", {"home": "47.36300, 0.73900"})[0] == 200
    acked: list[int] = []
    sent = [0]
    stop = threading.Event()

    def write() -> None:
        while not stop.is_set():
            sent[0] += 1
            status, made, _ = call("POST", base + "/api/clients", {
                "name": f"Backed {sent[0]}", "location": "47.40000, 0.70000", "visit_min": 10,
                "windows": {"mon": "09:00-12:00", "sun": "closed"}})
            assert status == 201, made
            acked.append(made["id"])

    writer = threading.Thread(target=write, daemon=True)
    writer.start()
    try:
        counts = []
        for k in range(4):
            time.sleep(0.3)
            acked_before, output = len(acked), tmp_path / f"copy-{k}.sqlite"
            done = rondo("backup", "--data", str(server_process.data_dir), "--output",
                         str(output))
            sent_after = sent[0]
            assert done.returncode == 0, done.stderr
            assert "backed up" in done.stdout
            _sound(output)
            assert not Path(str(output) + "-wal").exists()
            conn = sqlite3.connect(output)
            in_copy = conn.execute("SELECT count(*) FROM clients").fetchone()[0]
            hours = conn.execute("SELECT count(*) FROM client_windows").fetchone()[0]
            closed = conn.execute("SELECT count(*) FROM client_closed_days").fetchone()[0]
            conn.close()
            # One moment: every client acknowledged before it, none not yet sent, and each
            # client whole (its hours were written in the same transaction).
            assert acked_before <= in_copy <= sent_after, (acked_before, in_copy, sent_after)
            assert hours == closed == in_copy
            counts.append(in_copy)
    finally:
        stop.set()
        writer.join(timeout=30)
    assert counts == sorted(counts) and counts[-1] > counts[0], counts
    report("backup", f"backup: 4 copies taken during {len(acked)} acknowledged writes, each "
                     f"a consistent snapshot ({', '.join(map(str, counts))} clients), "
                     "integrity_check ok")


def test_restore_refuses_while_the_server_runs_then_restores_and_keeps_the_old(
        server_process, tmp_path):
    base = server_process.start()
    for name in ("Kept One", "Kept Two"):
        assert call("POST", base + "/api/clients", {"name": name, "location": "47.1, 0.7",
                                                    "visit_min": 10})[0] == 201
    saved = tmp_path / "saved.sqlite"
    assert rondo("backup", "--data", str(server_process.data_dir), "--output",
                 str(saved)).returncode == 0
    assert call("POST", base + "/api/clients", {"name": "After Backup", "location": "47.2, 0.7",
                                                "visit_min": 10})[0] == 201
    live = server_process.data_dir / "rondo.sqlite"

    busy = rondo("restore", "--data", str(server_process.data_dir), str(saved))
    assert busy.returncode == 5, busy
    assert "server is running" in busy.stderr
    names = {c["name"] for c in call("GET", base + "/api/clients")[1]}
    assert names == {"Kept One", "Kept Two", "After Backup"}
    assert not list(server_process.data_dir.glob("rondo-before-restore-*"))

    server_process.stop()
    before = _rows(live)
    done = rondo("restore", "--data", str(server_process.data_dir), str(saved))
    assert done.returncode == 0, done.stderr
    kept = list(server_process.data_dir.glob("rondo-before-restore-*.sqlite"))
    assert len(kept) == 1 and str(kept[0]) in done.stdout
    assert _rows(kept[0]) == before  # the previous database, row for row
    assert _rows(live) == _rows(saved)  # the backup, row for row
    _sound(live)

    base = server_process.start()
    names = {c["name"] for c in call("GET", base + "/api/clients")[1]}
    assert names == {"Kept One", "Kept Two"}
    assert call("POST", base + "/api/clients", {"name": "After Restore", "location": "47.3, 0.7",
                                                "visit_min": 10})[0] == 201


def _not_rondo(tmp_path: Path) -> dict[str, Path]:
    files = {}
    files["text"] = tmp_path / "notes.sqlite"
    files["text"].write_text("name,lat,lon\nA,1,2\n")
    files["empty"] = tmp_path / "empty.sqlite"
    files["empty"].write_bytes(b"")
    files["other program"] = tmp_path / "other.sqlite"
    conn = sqlite3.connect(files["other program"])
    conn.execute("CREATE TABLE songs (title TEXT)")
    conn.commit()
    conn.close()
    good = tmp_path / "good-source"
    conn = connect(str(good))
    migrate(conn)
    conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('Z', 1, 2, 10)")
    conn.close()
    conn = sqlite3.connect(good)
    conn.execute("PRAGMA journal_mode = DELETE")  # fold the -wal in, so the bytes are whole
    conn.close()
    # Newer than this Rondo: its schema version is beyond SCHEMA_VERSION.
    files["newer"] = tmp_path / "newer.sqlite"
    files["newer"].write_bytes(good.read_bytes())
    conn = sqlite3.connect(files["newer"])
    conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    conn.close()
    # Damaged: the right header, then a page of the clients table overwritten with junk.
    files["damaged"] = tmp_path / "damaged.sqlite"
    data = bytearray(good.read_bytes())
    conn = sqlite3.connect(good)
    page = conn.execute("SELECT rootpage FROM sqlite_master WHERE name = 'clients'").fetchone()[0]
    size = conn.execute("PRAGMA page_size").fetchone()[0]
    conn.close()
    data[(page - 1) * size + 8:(page - 1) * size + 200] = b"\xff" * 192
    files["damaged"].write_bytes(bytes(data))
    return files


def test_restore_refuses_files_that_are_not_a_sound_rondo_database(tmp_path):
    folder = tmp_path / "data"
    folder.mkdir()
    conn = connect(str(folder / "rondo.sqlite"))
    migrate(conn)
    conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('Mine', 47, 0.7, 5)")
    conn.close()
    before = _rows(folder / "rondo.sqlite")
    for what, path in _not_rondo(tmp_path).items():
        done = rondo("restore", "--data", str(folder), str(path))
        assert done.returncode == 2, (what, done.stdout, done.stderr)
        assert done.stderr.startswith("rondo: ") and str(path.name) in done.stderr, what
        assert _rows(folder / "rondo.sqlite") == before, what
        assert not list(folder.glob("rondo-before-restore-*")), what
        assert not list(folder.glob(".rondo.sqlite.restoring*")), what


def test_an_older_backup_is_brought_forward_when_restored(tmp_path):
    old = tmp_path / "old.sqlite"
    conn = sqlite3.connect(old, isolation_level=None)
    conn.executescript(resources.files("webapp").joinpath("schema.sql").read_text("utf-8"))
    conn.execute("PRAGMA user_version = 1")
    conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('Old One', 47, 0.7, 5)")
    conn.close()
    folder = tmp_path / "data"
    result = backup.restore(folder, old)
    assert result["schema_version"] == 1 and result["previous_kept_as"] is None
    restored = folder / "rondo.sqlite"
    _sound(restored)
    conn = sqlite3.connect(restored)
    assert conn.execute("SELECT name, version FROM clients").fetchall() == [("Old One", 1)]
    conn.close()


def test_the_folder_lock_keeps_restore_and_server_apart(tmp_path):
    folder, source, saved = tmp_path / "data", tmp_path / "src", tmp_path / "saved.sqlite"
    source.mkdir()
    conn = connect(str(source / "rondo.sqlite"))
    migrate(conn)
    conn.close()
    backup.backup(source, saved)
    with backup.server_lock(folder), pytest.raises(backup.DataInUse, match="server is running"):
        backup.restore(folder, saved)
    backup.restore(folder, saved)  # the lock went with the server


def test_backup_names_what_is_wrong_with_its_arguments(tmp_path):
    missing = rondo("backup", "--data", str(tmp_path / "nowhere"), "--output",
                    str(tmp_path / "x.sqlite"))
    assert missing.returncode == 2 and "no Rondo database" in missing.stderr
    assert not (tmp_path / "x.sqlite").exists() and not (tmp_path / "nowhere").exists()
    folder = tmp_path / "data"
    folder.mkdir()
    conn = connect(str(folder / "rondo.sqlite"))
    migrate(conn)
    conn.close()
    into_dir = rondo("backup", "--data", str(folder), "--output", str(tmp_path))
    assert into_dir.returncode == 2 and "is a folder" in into_dir.stderr
    onto_live = rondo("backup", "--data", str(folder), "--output", str(folder / "rondo.sqlite"))
    assert onto_live.returncode == 2 and "live database" in onto_live.stderr
    _sound_live = sqlite3.connect(folder / "rondo.sqlite")
    assert _sound_live.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    _sound_live.close()
