"""Phone and laptop at once: several devices mix reads, writes and solves on the real server.

The rule (webapp/API.md, "Editing from two devices"): every client and the settings carry a
``version``; a change that names an out-of-date version gets 409 with the record as it is
now, and the device makes its change again on top of it. A change without a version is
applied over whatever is stored (last writer wins). Fields a change leaves out are never
touched, so two devices changing different fields both keep their change.

The lost-update check is the classic one (a read-modify-write counter, e.g. Gray & Reuter,
"Transaction Processing", 1993, ch. 7; from memory): after N acknowledged increments the
counter must read N.
"""

from __future__ import annotations

import datetime as dt
import random
import threading
import time
from dataclasses import dataclass, field

import pytest

from .conftest import call

pytestmark = pytest.mark.slow

DEVICES = 6
DURATION_S = 12.0
SETTINGS_OWNED = {0: "rep_name", 1: "home_label"}  # one device per field
HOME = "47.36300, 0.73900"


@dataclass
class Device:
    number: int
    base: str
    counter_id: int
    rng: random.Random
    latencies_s: list[float] = field(default_factory=list)
    statuses: dict[int, int] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)
    increments: int = 0
    conflicts: int = 0
    own: dict[int, str] = field(default_factory=dict)  # own client id -> last acked notes
    setting: str | None = None  # last acked value of the owned settings field
    created: list[str] = field(default_factory=list)  # contested names this device won
    chosen: dict[str, list[int]] = field(default_factory=dict)
    solved: dict[str, int] = field(default_factory=dict)  # date -> stored solve id
    n: int = 0

    def request(self, method, path, body=None, expect=(200,)):
        started = time.monotonic()
        status, answer, _ = call(method, self.base + path, body, timeout_s=30)
        self.latencies_s.append(time.monotonic() - started)
        self.statuses[status] = self.statuses.get(status, 0) + 1
        if status not in expect:
            raise AssertionError(f"{method} {path} -> {status}: {str(answer)[:300]}")
        return status, answer

    def run(self, until: float) -> None:
        try:
            while time.monotonic() < until:
                self.n += 1
                self.step()
        except AssertionError as wrong:
            self.errors.append(str(wrong))

    def step(self) -> None:
        roll = self.rng.random()
        if roll < 0.30:
            path = self.rng.choice(["/api/clients", "/api/settings", f"/api/clients/"
                                    f"{self.counter_id}", "/api/days", "/api/drives"])
            self.request("GET", path)
        elif roll < 0.55:
            self.increment()
        elif roll < 0.65 and self.number in SETTINGS_OWNED:
            name = SETTINGS_OWNED[self.number]
            value = f"device {self.number} write {self.n}"
            self.request("PUT", "/api/settings", {name: value})
            self.setting = value
        elif roll < 0.78:
            self.edit_own_client()
        elif roll < 0.88:
            self.plan_own_day()
        elif roll < 0.94:
            self.create_contested()
        else:
            self.solve_own_day()

    def increment(self) -> None:
        """Read, add one, write back naming the version read; on 409 start from the answer."""
        _, current = self.request("GET", f"/api/clients/{self.counter_id}")
        while True:
            count = int(current["notes"] or 0)
            status, answer = self.request("PUT", f"/api/clients/{self.counter_id}",
                                          {"notes": str(count + 1),
                                           "version": current["version"]}, expect=(200, 409))
            if status == 200:
                assert answer["version"] == current["version"] + 1, answer
                self.increments += 1
                return
            self.conflicts += 1
            assert answer["error"] == "conflict" and answer["current"]["id"] == self.counter_id
            assert answer["current"]["version"] > current["version"]
            current = answer["current"]

    def edit_own_client(self) -> None:
        if not self.own or self.rng.random() < 0.2:
            _, made = self.request("POST", "/api/clients", {
                "name": f"Own {self.number}-{self.n}", "visit_min": 10,
                "location": f"{47.3 + self.rng.random() * 0.1:.5f}, "
                            f"{0.7 + self.rng.random() * 0.1:.5f}"}, expect=(201,))
            self.own[made["id"]] = ""
            return
        client_id = self.rng.choice(sorted(self.own))
        notes = f"edit {self.n}"
        _, answer = self.request("PUT", f"/api/clients/{client_id}", {"notes": notes})
        self.own[client_id] = notes

    def plan_own_day(self) -> None:
        if len(self.own) < 2:
            return
        date = (dt.date(2026, 3, 2) + dt.timedelta(days=self.number * 500 + self.n)).isoformat()
        ids = self.rng.sample(sorted(self.own), min(3, len(self.own)))
        self.request("PUT", f"/api/days/{date}/visits", {"client_ids": ids})
        self.chosen[date] = ids
        self.request("PUT", f"/api/days/{date}/done/{ids[0]}",
                     {"arrived": "09:00", "departed": "09:20"})

    def create_contested(self) -> None:
        # Devices in the same quarter second try the same name: one gets 201, the others 422.
        name = f"Race {int(time.time() * 4)}"
        status, answer = self.request("POST", "/api/clients", {
            "name": name, "location": "47.40000, 0.70000", "visit_min": 10},
            expect=(201, 422))
        if status == 201:
            self.created.append(name)
        else:
            assert answer["fields"][0]["field"] == "name", answer

    def solve_own_day(self) -> None:
        if not self.chosen:
            return
        date = self.rng.choice(sorted(self.chosen))
        # Days with a visit done are re-planned from the last one, not solved from home.
        status, job = self.request("POST", f"/api/days/{date}/replan",
                                   {"from": self.chosen[date][0], "now": "09:20"},
                                   expect=(202,))
        while job["state"] in ("queued", "running"):
            time.sleep(0.05)
            _, job = self.request("GET", f"/api/jobs/{job['id']}")
        assert job["state"] == "done", job
        self.solved[date] = job["result"]["plan"]["solve_id"]


def _p95(values: list[float]) -> float:
    ordered = sorted(values)
    return ordered[max(0, int(round(0.95 * len(ordered))) - 1)]  # nearest-rank percentile


def test_devices_editing_at_once_lose_no_update(server_process, report):
    base = server_process.start()
    assert call("PUT", base + "/api/settings", {"home": HOME, "break_min": 0,
                                               "time_limit_s": 5})[0] == 200
    status, counter, _ = call("POST", base + "/api/clients", {
        "name": "Shared Counter", "location": "47.38000, 0.72000", "visit_min": 10,
        "notes": "0"})
    assert status == 201
    devices = [Device(k, base, counter["id"], random.Random(500 + k)) for k in range(DEVICES)]
    started = time.monotonic()
    until = started + DURATION_S
    threads = [threading.Thread(target=d.run, args=(until,)) for d in devices]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=DURATION_S + 120)
        assert not t.is_alive(), "a device hung"
    took_s = time.monotonic() - started
    assert not any(d.errors for d in devices), [d.errors for d in devices if d.errors]

    # No lost update: every acknowledged increment is in the counter.
    total = sum(d.increments for d in devices)
    stored = call("GET", f"{base}/api/clients/{counter['id']}")[1]
    assert int(stored["notes"]) == total, (stored["notes"], total)
    assert stored["version"] == total + 1
    # Each device's own fields hold its last acknowledged change.
    settings = call("GET", base + "/api/settings")[1]
    for d in devices:
        if d.setting is not None:
            assert settings[SETTINGS_OWNED[d.number]] == d.setting
        for client_id, notes in d.own.items():
            assert call("GET", f"{base}/api/clients/{client_id}")[1]["notes"] == notes
        for date, ids in d.chosen.items():
            day = call("GET", f"{base}/api/days/{date}")[1]
            assert sorted(c["client_id"] for c in day["choices"]) == sorted(ids)
            assert [v["client_id"] for v in day["done"]] == [ids[0]]
        for date, solve_id in d.solved.items():
            assert call("GET", f"{base}/api/solves/{solve_id}")[1]["date"] == date
    # A contested name was won by exactly one device.
    won = [name for d in devices for name in d.created]
    assert len(won) == len(set(won))
    names = [c["name"] for c in call("GET", base + "/api/clients")[1]]
    assert len(names) == len({n.casefold() for n in names})
    assert all(name in names for name in won)

    latencies = [s for d in devices for s in d.latencies_s]
    statuses: dict[int, int] = {}
    for d in devices:
        for code, count in d.statuses.items():
            statuses[code] = statuses.get(code, 0) + count
    assert not [code for code in statuses if code >= 500], statuses
    conflicts = sum(d.conflicts for d in devices)
    assert total > 0 and conflicts > 0, "the devices never collided; the test proved nothing"
    report("load", f"load: {DEVICES} devices x {DURATION_S:g} s on the real server: "
                   f"{len(latencies)} requests, {len(latencies) / took_s:.0f} requests/s, p95 "
                   f"{_p95(latencies) * 1000:.0f} ms; {total} versioned increments, "
                   f"{conflicts} answered 409 and redone, none lost; statuses "
                   + ", ".join(f"{code}: {count}" for code, count in sorted(statuses.items())))
