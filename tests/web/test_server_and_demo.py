"""``rondo serve`` as a real process, and the demo scenario it can load into an empty database."""

from __future__ import annotations

import inspect
import json
import urllib.request

from solver.coordinates import parse_position
from webapp import create_app, demo, server
from webapp.clients import WEEKDAYS
from webapp.db import connect

from .helpers import dump, wait_job
from .live_server import get_json, running_server

# A box around Touraine (the Indre-et-Loire department lies roughly within
# 46.7..47.8 N, 0.05..1.4 E; from memory of a map): where the demo says it is.
LAT_RANGE, LON_RANGE = (46.7, 47.8), (0.05, 1.4)


def test_serve_binds_to_loopback_by_default():
    defaults = {k: p.default for k, p in inspect.signature(server.serve).parameters.items()}
    assert {k: defaults[k] for k in ("host", "port", "data_dir", "demo", "lan")} == {
        "host": "127.0.0.1", "port": 8765, "data_dir": "instance", "demo": False, "lan": False}


def test_serve_demo_fills_an_empty_database_and_never_a_used_one(tmp_path):
    data = tmp_path / "data"
    with running_server(data, demo=True) as (base, log):
        assert base.startswith("http://127.0.0.1:")
        assert get_json(base + "/api/settings")["is_demo"] is True
        assert len(get_json(base + "/api/clients")) == len(demo.load_scenario()["clients"])
        request = urllib.request.Request(base + "/api/settings", method="PUT",
                                         data=json.dumps({"rep_name": "Me now"}).encode(),
                                         headers={"Content-Type": "application/json"})
        urllib.request.urlopen(request, timeout=5).close()
        page = urllib.request.urlopen(base + "/day", timeout=5).read().decode()
        assert "Demo data" in page
    assert (data / "rondo.sqlite").exists()
    conn = connect(str(data / "rondo.sqlite"))
    before = dump(conn)
    conn.close()
    with running_server(data, demo=True) as (base, log):
        assert get_json(base + "/api/settings")["rep_name"] == "Me now"
        assert "already holds data" in log.read_text()
    conn = connect(str(data / "rondo.sqlite"))
    assert dump(conn) == before
    conn.close()


def test_the_demo_scenario_is_plausible():
    scenario = demo.load_scenario()
    names = [c["name"] for c in scenario["clients"]]
    assert 25 <= len(names) <= 40
    assert len({n.casefold() for n in names}) == len(names)
    home = parse_position(scenario["settings"]["home"])
    for place in [home] + [parse_position(c["location"]) for c in scenario["clients"]]:
        assert LAT_RANGE[0] <= place.lat <= LAT_RANGE[1], place
        assert LON_RANGE[0] <= place.lon <= LON_RANGE[1], place
    for c in scenario["clients"]:
        assert 10 <= c["visit_min"] <= 90, c["name"]
        if c.get("active", True):
            open_days = [d for d in WEEKDAYS[:5] if c["windows"].get(d, "") != "closed"]
            assert open_days, f"{c['name']} can never be visited on a working day"
    assert "invented" in scenario["about"]


def test_the_demo_loads_through_the_api_checks_and_a_demo_day_is_proven(tmp_path):
    app = create_app({"DATABASE": str(tmp_path / "d.sqlite")}, instance_path=str(tmp_path))
    conn = connect(app.config["DATABASE"])
    assert demo.fill_if_empty(conn) is True
    assert demo.fill_if_empty(conn) is False
    conn.close()
    client = app.test_client()
    book = client.get("/api/clients?active=true").json
    wednesday = [c["id"] for c in book if c["windows"]["wed"] != "closed"]
    # The eight nearest-to-home open clients make a full but possible day.
    settings = client.get("/api/settings").json
    home = settings["home"]
    by_distance = sorted(wednesday, key=lambda cid: _d2(book, cid, home))
    client.put("/api/days/2026-03-04/visits", json={"client_ids": by_distance[:8]})
    job = wait_job(client, client.post("/api/days/2026-03-04/solve"))
    assert job["state"] == "done", job
    plan = job["result"]["plan"]
    assert plan["feasible"] and plan["proof"]["proven_optimal"], plan
    assert plan["return_min"] <= 18 * 60 + 30
    assert app.extensions["rondo_jobs"].join(10)


def _d2(book, cid, home):
    c = next(c for c in book if c["id"] == cid)["location"]
    return (c["lat"] - home["lat"]) ** 2 + (c["lon"] - home["lon"]) ** 2
