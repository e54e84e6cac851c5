"""Crash safety: the real server killed with SIGKILL at random moments while writes stream in.

Every write that was answered 2xx must be there after the restart, and SQLite's
``PRAGMA integrity_check`` must say ``ok`` (sqlite.org/pragma.html#pragma_integrity_check).
A write whose answer was lost with the process may or may not be there; both are fine. That
an acknowledged commit survives the process dying is SQLite's atomic commit guarantee
(sqlite.org/atomiccommit.html) with ``synchronous = FULL`` (sqlite.org/pragma.html).
"""

from __future__ import annotations

import datetime as dt
import http.client
import random
import sqlite3
import threading
import time
import urllib.error
from dataclasses import dataclass, field

import pytest

from .conftest import call

pytestmark = pytest.mark.slow

KILLS = 25
BUDGET_S = 45.0  # stop killing early rather than run long on a slow machine
MIN_KILLS = 8
WRITERS = 3
_LOST = (urllib.error.URLError, ConnectionError, http.client.HTTPException, TimeoutError,
         OSError)


@dataclass
class Writer:
    """One device writing in a loop; knows what the server acknowledged and what it sent."""

    number: int
    base: str = ""
    rng: random.Random = field(default_factory=random.Random)
    clients: dict[int, tuple[str, float, float]] = field(default_factory=dict)
    drives: dict[int, float] = field(default_factory=dict)  # last acknowledged km, home -> id
    drives_later: dict[int, set] = field(default_factory=dict)  # km sent after that ack
    chosen: dict[str, int] = field(default_factory=dict)  # date -> client acknowledged
    done: dict[tuple[str, int], tuple[int, int]] = field(default_factory=dict)
    rep_name: str | None = None
    rep_later: set = field(default_factory=set)
    counter: int = 0
    acks: int = 0
    errors: list = field(default_factory=list)

    def run(self, stop: threading.Event) -> None:
        while not stop.is_set():
            try:
                self._one_write()
            except _LOST:
                return  # the server is gone: this write's answer never came
            except AssertionError as wrong:  # an answer that was not 2xx: reported by the test
                self.errors.append(str(wrong)[:300])
                return

    def _one_write(self) -> None:
        self.counter += 1
        n, rng = self.counter, self.rng
        roll = rng.random()
        if not self.clients or roll < 0.35:
            name = f"Crash {self.number}-{n}"
            lat, lon = round(47.2 + rng.random() * 0.3, 5), round(0.5 + rng.random() * 0.4, 5)
            status, made, _ = call("POST", self.base + "/api/clients", {
                "name": name, "location": f"{lat}, {lon}", "visit_min": 15}, timeout_s=10)
            assert status == 201, made
            self.clients[made["id"]] = (name, lat, lon)
        elif roll < 0.6:
            client_id = rng.choice(sorted(self.clients))
            km = round(rng.uniform(1, 80), 3)
            self.drives_later.setdefault(client_id, set()).add(km)
            status, made, _ = call("PUT", self.base + "/api/drives", {
                "from": "home", "to": client_id, "km": km}, timeout_s=10)
            assert status == 200, made
            self.drives[client_id] = km
            self.drives_later[client_id] = set()
        elif roll < 0.9 or self.number != 0:
            client_id = rng.choice(sorted(self.clients))
            date = (dt.date(2027, 1, 4) + dt.timedelta(days=self.number * 2000 + n)).isoformat()
            status, body, _ = call("PUT", f"{self.base}/api/days/{date}/visits",
                                   {"client_ids": [client_id]}, timeout_s=10)
            assert status == 200, body
            self.chosen[date] = client_id
            arrived = rng.randrange(8 * 60, 17 * 60)
            departed = arrived + rng.randrange(0, 60)
            status, body, _ = call("PUT", f"{self.base}/api/days/{date}/done/{client_id}", {
                "arrived": f"{arrived // 60:02d}:{arrived % 60:02d}",
                "departed": f"{departed // 60:02d}:{departed % 60:02d}"}, timeout_s=10)
            assert status == 200, body
            self.done[(date, client_id)] = (arrived, departed)
        else:
            name = f"Rep after write {n}"
            self.rep_later.add(name)
            status, body, _ = call("PUT", self.base + "/api/settings", {"rep_name": name},
                                   timeout_s=10)
            assert status == 200, body
            self.rep_name, self.rep_later = name, set()
        self.acks += 1


def _verify(database: str, writers: list[Writer]) -> int:
    """Check every acknowledged write against the file itself; the number of rows checked."""
    conn = sqlite3.connect(database)
    try:
        assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        assert conn.execute("PRAGMA foreign_key_check").fetchall() == []
        stored = {r[0]: (r[1], r[2], r[3]) for r in
                  conn.execute("SELECT id, name, lat, lon FROM clients")}
        drives = {r[0]: r[1] for r in conn.execute(
            "SELECT to_client_id, km FROM drive_entries WHERE from_client_id IS NULL")}
        chosen = {(r[0], r[1]) for r in conn.execute(
            "SELECT p.plan_date, c.client_id FROM plan_choices c JOIN day_plans p "
            "ON p.id = c.plan_id")}
        done = {(r[0], r[1]): (r[2], r[3]) for r in conn.execute(
            "SELECT p.plan_date, d.client_id, d.arrived_min, d.departed_min FROM visits_done d "
            "JOIN day_plans p ON p.id = d.plan_id")}
        rep_name = conn.execute("SELECT rep_name FROM settings").fetchone()[0]
    finally:
        conn.close()
    rows = 0
    for w in writers:
        for client_id, (name, lat, lon) in w.clients.items():
            assert client_id in stored, f"acknowledged client {client_id} {name!r} was lost"
            got = stored[client_id]
            assert got[0] == name and got[1] == pytest.approx(lat) and \
                got[2] == pytest.approx(lon), (client_id, got)
            rows += 1
        for client_id, km in w.drives.items():
            assert drives.get(client_id) in {km} | w.drives_later.get(client_id, set()), (
                f"drive home -> {client_id}: {drives.get(client_id)} stored, {km} acknowledged")
            rows += 1
        for date, client_id in w.chosen.items():
            assert (date, client_id) in chosen, f"the choice of {client_id} on {date} was lost"
            rows += 1
        for key, times in w.done.items():
            assert done.get(key) == times, f"done mark {key} lost or changed: {done.get(key)}"
            rows += 1
        if w.rep_name is not None:
            assert rep_name in {w.rep_name} | w.rep_later, (rep_name, w.rep_name)
            rows += 1
    return rows


def test_acknowledged_writes_survive_sigkill(server_process, report):
    writers = [Writer(k, rng=random.Random(1000 + k)) for k in range(WRITERS)]
    kill_rng = random.Random(2026)
    database = str(server_process.data_dir / "rondo.sqlite")
    started = time.monotonic()
    kills = checks = 0
    base = server_process.start()
    assert call("PUT", base + "/api/settings", {"home": "47.36300, 0.73900"})[0] == 200
    while kills < KILLS and (time.monotonic() - started < BUDGET_S or kills < MIN_KILLS):
        for w in writers:
            w.base = base
        stop = threading.Event()
        threads = [threading.Thread(target=w.run, args=(stop,), daemon=True) for w in writers]
        for t in threads:
            t.start()
        time.sleep(kill_rng.uniform(0.05, 0.9))  # a random moment, writes in flight
        server_process.kill()
        kills += 1
        stop.set()
        for t in threads:
            t.join(timeout=20)
            assert not t.is_alive(), "a writer hung after the server died"
        assert not any(w.errors for w in writers), [w.errors for w in writers]
        checks += _verify(database, writers)  # the file as the crash left it
        base = server_process.start()
    # The restarted server serves every acknowledged client through the API as well.
    listed = {c["id"]: c["name"] for c in call("GET", base + "/api/clients")[1]}
    final = _verify(database, writers)
    for w in writers:
        for client_id, (name, _, _) in w.clients.items():
            assert listed.get(client_id) == name
    acks = sum(w.acks for w in writers)
    assert kills >= MIN_KILLS and acks > kills, (kills, acks)
    report("crash", f"crash: {kills} SIGKILLs survived in {time.monotonic() - started:.0f} s; "
                    f"{acks} acknowledged writes, {final} acknowledged rows verified after the "
                    f"last restart ({checks} row checks after the kills), integrity_check ok "
                    "every time")
