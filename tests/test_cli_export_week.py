"""``rondo export`` and ``rondo week`` end to end, read back with reference libraries."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import gpxpy
import icalendar

DEMO = Path(__file__).resolve().parent.parent / "fixtures" / "demo" / "linz-monday.csv"


def rondo(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "webapp", *args], capture_output=True,
                          timeout=300)


def test_exported_calendar_matches_the_solved_order(tmp_path):
    solved = json.loads(rondo("solve", str(DEMO), "--json").stdout)
    out = tmp_path / "day.ics"
    done = rondo("export", str(DEMO), "--format", "ics", "--date", "2026-12-07",
                 "--output", str(out), "--alarm", "10")
    assert done.returncode == 0, done.stderr
    # RFC 5545 §3.1: content lines end in CRLF; parsed back with the icalendar library.
    raw = out.read_bytes()
    assert b"\r\n" in raw and b"\n" not in raw.replace(b"\r\n", b"")
    calendar = icalendar.Calendar.from_ical(raw)
    events = [c for c in calendar.walk("VEVENT")]
    assert [str(e["SUMMARY"]) for e in events] == solved["order"]
    first = events[0]
    assert first["DTSTART"].dt.strftime("%H:%M") == solved["visits"][0]["start"]
    assert first["DTSTART"].dt.tzinfo is not None
    assert any(c.name == "VALARM" for c in first.walk())


def test_exported_gpx_route_runs_home_to_home(tmp_path):
    done = rondo("export", str(DEMO), "--format", "gpx", "--date", "2026-12-07")
    assert done.returncode == 0, done.stderr
    # GPX 1.1 (topografix.com), read back with gpxpy.
    gpx = gpxpy.parse(done.stdout.decode("utf-8"))
    points = gpx.routes[0].points
    assert points[0].name == points[-1].name == "Home"
    assert len(points) == 2 + 8


def test_week_with_a_cap_spreads_the_clients(tmp_path):
    done = rondo("week", str(DEMO), "--days", "Mon-Wed", "--max-visits", "3", "--json")
    assert done.returncode == 0, done.stderr
    week = json.loads(done.stdout)
    counts = [len(d["clients"]) for d in week["days"]]
    assert sum(counts) == 8 and max(counts) <= 3
    assert week["proven_optimal"] is True
    total = sum(d["plan"]["total_km"] for d in week["days"] if d["plan"])
    assert abs(total - week["total_km"]) < 1e-3


def test_week_rejects_an_unknown_weekday():
    done = rondo("week", str(DEMO), "--days", "Mon-Funday")
    assert done.returncode == 2
    assert b"not a weekday" in done.stderr
