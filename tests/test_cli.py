"""The ``rondo solve`` command end to end, as a subprocess, against published results."""

from __future__ import annotations

import itertools
import json
import subprocess
import sys
from pathlib import Path

import pytest
from geographiclib.geodesic import Geodesic

from solver.distances import DEFAULT_DETOUR_FACTOR

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


def rondo(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "webapp", *args], capture_output=True,
                          text=True, timeout=300)


def test_kroa100_is_proven_at_the_published_optimum():
    # TSPLIB95 published optimum for kroA100: 21282 (Reinelt 1991).
    done = rondo("solve", str(FIXTURES / "tsplib" / "kroA100.tsp"), "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)
    assert result["length"] == 21282
    assert result["proven_optimal"] is True
    assert result["gap"] == 0
    assert sorted(result["order"]) == list(range(1, 101)) and result["order"][0] == 1
    for key in ("lower_bound", "seconds", "method"):
        assert key in result


def test_time_window_benchmark_reports_published_travel_time():
    # Dumas et al. (1995) proven optimum for n20w20.001: 378 (travel time incl. the return).
    done = rondo("solve", str(FIXTURES / "tsptw" / "n20w20.001.txt"), "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)
    assert result["length"] == 378 and result["proven_optimal"] is True


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "stops.csv"
    path.write_text(text, encoding="utf-8")
    return path


def test_stops_csv_loop_matches_brute_force_with_geographiclib(tmp_path):
    # Reference: geographiclib's WGS-84 inverse geodesic (Karney 2013) times the detour
    # factor, with a brute force over every order written here.
    places = [("Home", 47.0707, 15.4395), ("A", 47.0801, 15.4212), ("B", 47.0563, 15.4620),
              ("C", 47.0912, 15.4555), ("D", 47.0450, 15.4102), ("E", 47.0688, 15.4800)]
    csv_text = "name,lat,lon\n" + "".join(f"{n},{a},{b}\n" for n, a, b in places)
    done = rondo("solve", str(_write(tmp_path, csv_text)), "--json")
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout)

    def leg(p, q):
        return Geodesic.WGS84.Inverse(p[1], p[2], q[1], q[2])["s12"] / 1000 * DEFAULT_DETOUR_FACTOR

    best = min(
        sum(leg(a, b) for a, b in zip((places[0], *perm), (*perm, places[0]), strict=True))
        for perm in itertools.permutations(places[1:])
    )
    assert result["proven_optimal"] is True
    assert result["length"] == pytest.approx(best, rel=1e-9)
    assert result["order"][0] == "Home" and sorted(result["order"][1:]) == list("ABCDE")


@pytest.mark.parametrize(
    ("csv_text", "fragment"),
    [
        ("name,location\nHome,\"41,40338, 2,17403\"\n", "decimal commas"),
        ("name,lat,lon\nHome,123.4,2.0\n", "latitude"),
        ("name,lat,lon\nHome,1,2\nHome,1,3\n", "appears twice"),
        ("title,lat,lon\nHome,1,2\n", "no 'name' column"),
        ("name,lat,lon\nHome,1,2\nA,1,2.1\n", None),
    ],
)
def test_bad_stops_file_exits_2_with_one_line(tmp_path, csv_text, fragment):
    done = rondo("solve", str(_write(tmp_path, csv_text)))
    if fragment is None:
        assert done.returncode == 0, done.stderr
        return
    assert done.returncode == 2
    assert fragment in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1


def test_infeasible_day_exits_3_with_an_explanation(tmp_path):
    # Common practice, no source: a visit must start inside its window. A client 20 km away
    # that closes at 08:05 cannot be reached from an 08:00 start at 50 km/h.
    csv_text = ("name,lat,lon,duration_min,windows\nHome,47.0,15.0,,\n"
                "Far Shop,47.18,15.0,30,07:00-08:05\n")
    done = rondo("solve", str(_write(tmp_path, csv_text)), "--day-start", "08:00", "--json")
    assert done.returncode == 3
    explanation = json.loads(done.stdout)["explanation"]
    assert explanation["unreachable"][0]["name"] == "Far Shop"
    assert explanation["move_to_another_day"] == ["Far Shop"]


def test_missing_file_is_bad_input():
    done = rondo("solve", "no-such-file.csv")
    assert done.returncode == 2 and "does not exist" in done.stderr
