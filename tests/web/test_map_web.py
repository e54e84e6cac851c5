"""The day's map page and the day screen's map, navigation links and downloads.

Outside references named beside each check: CSP Level 3 §2.3.1 hash-source (base64 of the
SHA-256 of a script's text) and §6.3.2 sandbox, the HTML standard's iframe sandbox attribute;
HTML as parsed by the standard library's html.parser; Leaflet 1.9's own API in the browser
(L.Map.eachLayer, Marker.getLatLng, Polyline.getLatLngs); RFC 5870 §3.3 geo: URI ABNF;
RFC 5545 read back with icalendar. The browser test runs the real server in Debian
Chromium at phone size; every request is recorded and none may leave 127.0.0.1.
"""

from __future__ import annotations

import base64
import hashlib
import json
import re
import socket
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import gpxpy
import icalendar
import pytest

from webapp import create_app

from .browser import (  # noqa: E402
    ARTIFACTS,
    CHROMIUM,
    CHROMIUM_ARGS,
    PHONE,
    keep_on_loopback,
)
from .helpers import WEDNESDAY, live_api, set_home
from .live_server import ROOT, get_json, running_server
from .test_exports_web import GEO_URI, HOSTILE, PLACES, _day, _solve

SOLVE_TIMEOUT_MS = 45_000
# Demo clients near the demo home, open all Wednesday.
DEMO_CLIENTS = ["Maison Bourgeon", "Terreaux & Compagnie", "Le Petit Arrosoir",
                "Jardinerie des Bords du Cher"]


class _Page(HTMLParser):
    """Inline script texts, start tags and every src/href of an HTML page."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.scripts: list[str] = []
        self.tags: list[str] = []
        self.urls: list[str] = []
        self.text: list[str] = []
        self._inline = False

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        attrs = dict(attrs)
        self.urls += [attrs[k] for k in ("src", "href") if attrs.get(k)]
        self._inline = tag == "script" and "src" not in attrs
        if self._inline:
            self.scripts.append("")

    def handle_endtag(self, tag):
        if tag == "script":
            self._inline = False

    def handle_data(self, data):
        if self._inline:
            self.scripts[-1] += data
        else:
            self.text.append(data)


def _parse(html: str) -> _Page:
    page = _Page()
    page.feed(html)
    return page


def _policy(header: str) -> dict[str, list[str]]:
    return {part.split()[0]: part.split()[1:] for part in header.split(";") if part.strip()}


@pytest.fixture
def mapped(client):
    set_home(client)
    made = _day(client, [*PLACES[:3], (HOSTILE, "47.37000, 0.68000")])
    return made, _solve(client, WEDNESDAY)


def test_the_map_page_allows_exactly_its_own_inline_scripts(client, mapped):
    response = client.get(f"/days/{WEDNESDAY}/map")
    assert response.status_code == 200
    assert response.headers["Content-Type"] == "text/html; charset=utf-8"
    html = response.get_data(as_text=True)
    page = _parse(html)
    policy = _policy(response.headers["Content-Security-Policy"])
    # CSP3 §2.3.1: 'sha256-' + base64(SHA-256(script text as UTF-8)).
    expected = {"'sha256-" + base64.b64encode(hashlib.sha256(s.encode()).digest()).decode() + "'"
                for s in page.scripts}
    assert set(policy["script-src"]) == {"'self'", *expected}
    assert "'unsafe-inline'" not in policy["script-src"]
    # CSP3 §6.3.2 sandbox: scripts and the origin only; no forms, pop-ups, modals, navigation.
    assert sorted(policy["sandbox"]) == ["allow-same-origin", "allow-scripts"]
    assert policy["frame-ancestors"] == ["'self'"] and policy["connect-src"] == ["'none'"]
    # Everything the page loads is on this server; no tiles while TILE_UPSTREAM is unset.
    assert page.urls and all(u.startswith("/") and not u.startswith("//") for u in page.urls)
    assert "/tiles/" not in html and "No street map" in html
    text = "".join(page.text)
    for caution in ("Plan while parked", "never handle the phone while driving",
                    "estimates", "obey road rules and local regulations"):
        assert caution in text


def test_the_map_shows_the_stored_order_and_keeps_a_hostile_name_text(client, mapped):
    _, plan = mapped
    html = client.get(f"/days/{WEDNESDAY}/map").get_data(as_text=True)
    page = _parse(html)
    assert "img" not in page.tags and "<img" not in html
    titles = re.findall(r'"title": "(\d+)\. ', html)
    assert titles == [str(k) for k in range(1, len(plan["visits"]) + 1)]
    # The popup carries the name as HTML text, escaped once.
    hostile_seq = next(v["seq"] for v in plan["visits"] if v["name"] == HOSTILE)
    assert f"{hostile_seq}. &lt;img src=x onerror=alert(1)&gt;" in html


def test_the_map_uses_the_tile_proxy_when_configured_in_the_instance(tmp_path):
    (tmp_path / "config.py").write_text(
        'TILE_UPSTREAM = "http://127.0.0.1:9/{z}/{x}/{y}.png"\nTILE_CONTACT = "rep@example.org"\n',
        encoding="utf-8")
    app = create_app(instance_path=str(tmp_path))
    assert app.config["TILE_UPSTREAM"].startswith("http://127.0.0.1:9/")
    client = app.test_client()
    set_home(client)
    _day(client, PLACES[:2])
    _solve(client, WEDNESDAY)
    html = client.get(f"/days/{WEDNESDAY}/map").get_data(as_text=True)
    assert '"/tiles/{z}/{x}/{y}.png"' in html
    attribution = json.loads(re.search(r'"attribution": ("[^"]*")', html).group(1))
    assert attribution == "© OpenStreetMap contributors"  # OSMF attribution guidelines
    assert app.extensions["rondo_jobs"].join(timeout_s=60)


def test_a_day_without_a_plan_has_no_map_and_bad_dates_are_named(client):
    set_home(client)
    response = client.get(f"/days/{WEDNESDAY}/map")
    assert response.status_code == 404 and WEDNESDAY in response.get_data(as_text=True)
    response = client.get("/days/2026-13-01/map")
    assert response.status_code == 422 and "2026-13-01" in response.get_data(as_text=True)


def test_the_day_screen_frames_the_map_sandboxed_and_the_assets_are_served(client):
    page = client.get(f"/day?date={WEDNESDAY}").get_data(as_text=True)
    frame = re.search(r"<iframe[^>]*>", page).group(0)
    # HTML iframe sandbox: only these two tokens (no allow-forms, -popups, -top-navigation...).
    tokens = re.search(r'sandbox="([^"]*)"', frame).group(1).split()
    assert sorted(tokens) == ["allow-same-origin", "allow-scripts"]
    for label in ("Calendar file", "GPX route", "Spreadsheet (CSV)"):
        assert label in page
    with client.get("/vendor/leaflet/leaflet.js") as script:  # the file is closed after
        assert script.status_code == 200
    tiles = client.get("/tiles/1/0/0.png")
    assert tiles.status_code == 404 and tiles.json["error"] == "tiles_off"


def test_serve_refuses_a_tile_address_that_is_not_a_template(tmp_path):
    done = subprocess.run([sys.executable, "-m", "webapp", "serve", "--port", "0", "--data",
                           str(tmp_path), "--tiles", "tile.example/{z}/{x}.png"], cwd=ROOT,
                          capture_output=True, text=True, timeout=60)
    assert done.returncode != 0
    assert "--tiles" in done.stderr and "{y}" in done.stderr and "Traceback" not in done.stderr


# ---- the real page in a browser ----

def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _flat(pairs) -> list[float]:
    return [x for pair in pairs for x in pair]


def _shot(page, name: str) -> None:
    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / f"{name}.png"))


_LEAFLET_READ = """() => {
    const map = Object.values(window).find((v) => v instanceof L.Map);
    const out = {stops: [], loop: null, homes: 0};
    map.eachLayer((layer) => {
        if (layer instanceof L.Marker) {
            const cls = layer.options.icon.options.className || "";
            if (cls.includes("rondo-stop")) out.stops.push({title: layer.options.title,
                lat: layer.getLatLng().lat, lon: layer.getLatLng().lng});
            if (cls.includes("rondo-home")) out.homes += 1;
        } else if (layer instanceof L.Polyline && layer.options.className === "rondo-loop") {
            out.loop = layer.getLatLngs().map((p) => [p.lat, p.lng]);
        }
    });
    return out;
}"""

_SHARE_STAND_IN = """() => {
    navigator.canShare = (data) => Boolean(data && data.files && data.files.length === 1);
    navigator.share = async (data) => {
        const file = data.files[0];
        window.__rondoShared = {name: file.name, type: file.type, text: await file.text()};
    };
}"""

_OPEN_POPUP = """(name) => {
    const map = Object.values(window).find((v) => v instanceof L.Map);
    map.eachLayer((layer) => {
        if (layer instanceof L.Marker && (layer.options.title || "").endsWith(name)) {
            layer.openPopup();
        }
    });
    const popup = document.querySelector(".leaflet-popup-content");
    return {text: popup ? popup.textContent : null,
            imgs: document.querySelectorAll(".leaflet-popup img, .leaflet-marker-icon img").length};
}"""


@pytest.mark.browser
def test_the_phone_page_maps_the_solved_loop_and_hands_out_files(tmp_path_factory):
    playwright_api = pytest.importorskip("playwright.sync_api")
    if not Path(CHROMIUM).exists():
        pytest.skip(f"{CHROMIUM} is not installed (apt-get install chromium)")
    data = tmp_path_factory.mktemp("map-browser") / "data"
    data.mkdir()
    # Tiles switched on but unreachable (a closed loopback port): the map must still work.
    (data / "config.py").write_text(
        f'TILE_UPSTREAM = "http://127.0.0.1:{_free_port()}/{{z}}/{{x}}/{{y}}.png"\n'
        'TILE_TIMEOUT_S = 1.0\n', encoding="utf-8")
    with running_server(data, demo=True) as (base, log), \
            playwright_api.sync_playwright() as p:
        clients = {c["name"]: c for c in get_json(base + "/api/clients?active=true")}
        home = get_json(base + "/api/settings")["home"]
        hostile = live_api(base, "POST", "/api/clients", {
            "name": HOSTILE, "location": f"{home['lat'] + 0.012}, {home['lon'] - 0.01}",
            "visit_min": 15})
        clients[HOSTILE] = hostile
        chosen = [clients[name]["id"] for name in DEMO_CLIENTS] + [hostile["id"]]
        live_api(base, "PUT", f"/api/days/{WEDNESDAY}/visits", {"client_ids": chosen})

        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        context = browser.new_context(**PHONE, accept_downloads=True)
        dialogs: list[str] = []
        errors: list[str] = []
        outside = keep_on_loopback(context)
        page = context.new_page()
        page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
        page.on("pageerror", lambda e: errors.append(str(e)))
        try:
            page.goto(f"{base}/day?date={WEDNESDAY}")
            page.locator("#solve-button").click()
            expect = playwright_api.expect
            expect(page.locator("#proof")).to_contain_text("Proven best",
                                                           timeout=SOLVE_TIMEOUT_MS)
            plan = get_json(f"{base}/api/days/{WEDNESDAY}")["plan"]
            frame_box = page.frame_locator("#day-map")
            expect(frame_box.locator(".rondo-stop")).to_have_count(len(chosen))
            frame = next(f for f in page.frames if "/map" in f.url)
            frame.wait_for_function("() => window.L && document.querySelector('.rondo-loop')")

            # Read the map through Leaflet: numbered stops in plan order, the closed loop.
            seen = frame.evaluate(_LEAFLET_READ)
            order = [v["name"] for v in plan["visits"]]
            assert [s["title"] for s in seen["stops"]] == \
                [f"{k}. {name}" for k, name in enumerate(order, start=1)]
            where = [(clients[n]["location"]["lat"], clients[n]["location"]["lon"])
                     for n in order]
            assert _flat((s["lat"], s["lon"]) for s in seen["stops"]) == pytest.approx(_flat(where))
            home_at = (home["lat"], home["lon"])
            assert _flat(seen["loop"]) == pytest.approx(_flat([home_at, *where, home_at]))
            assert seen["homes"] == 1
            numbers = frame_box.locator(".rondo-stop").all_inner_texts()
            assert sorted(int(n) for n in numbers) == list(range(1, len(order) + 1))
            # With no tiles reachable: a neutral ground and a scale bar still.
            expect(frame_box.locator(".leaflet-control-scale")).to_be_visible()
            ground = frame.evaluate("() => getComputedStyle("
                                    "document.querySelector('.folium-map')).backgroundColor")
            assert ground == "rgb(229, 231, 235)"
            expect(frame_box.locator(".rondo-map-caution")).to_contain_text(
                "never handle the phone while driving")
            popup = frame.evaluate(_OPEN_POPUP, HOSTILE)
            assert HOSTILE in popup["text"] and popup["imgs"] == 0
            page.locator("#map-slot").scroll_into_view_if_needed()
            page.wait_for_timeout(300)
            _shot(page, "map-01-day-map")

            # Each visit and the way home hand a geo: URI (RFC 5870 §3.3) to the maps app.
            links = page.locator("#stops a.nav-link")
            expect(links).to_have_count(len(order) + 1)
            hrefs = [links.nth(k).get_attribute("href") for k in range(len(order) + 1)]
            assert all(GEO_URI.fullmatch(h) for h in hrefs), hrefs
            read = [tuple(float(x) for x in h[4:].split(",")) for h in hrefs]
            assert _flat(read) == pytest.approx(_flat([*where, home_at]), abs=1e-6)
            page.locator("#stops").scroll_into_view_if_needed()
            _shot(page, "map-02-stops-with-links")

            # The calendar file downloads (no file sharing in desktop Chromium) and parses.
            page.locator("#export-slot").scroll_into_view_if_needed()
            _shot(page, "map-03-files")
            with page.expect_download() as download:
                page.locator('[data-export="ics"]').click()
            assert download.value.suggested_filename == f"rondo-{WEDNESDAY}.ics"
            events = icalendar.Calendar.from_ical(Path(download.value.path()).read_bytes())
            summaries = [(e.decoded("dtstart"), str(e["summary"])) for e in events.walk("VEVENT")]
            assert [name for _, name in sorted(summaries)] == order
            expect(page.locator("#toast")).to_contain_text(f"rondo-{WEDNESDAY}.ics")

            # Phones that share files get the file through navigator.share (Web Share API
            # Level 2: canShare({files}) first). Headless Chromium has no share sheet, so a
            # stand-in records the File Rondo hands over; its content is read back with gpxpy.
            page.evaluate(_SHARE_STAND_IN)
            page.locator('[data-export="gpx"]').click()
            page.wait_for_function("() => window.__rondoShared !== undefined")
            shared = page.evaluate("() => window.__rondoShared")
            assert shared["name"] == f"rondo-{WEDNESDAY}.gpx"
            route = gpxpy.parse(shared["text"]).routes[0].points
            assert [point.name for point in route[1:-1]] == order

            # Take one visit off and solve again: the map follows the new plan.
            gone = order[0]
            page.get_by_role("button", name=f"Take {gone} off this day").click()
            page.locator("#solve-button").click()
            expect(frame_box.locator(".rondo-stop")).to_have_count(len(chosen) - 1,
                                                                  timeout=SOLVE_TIMEOUT_MS)
            new_plan = get_json(f"{base}/api/days/{WEDNESDAY}")["plan"]
            assert f"solve={new_plan['solve_id']}" in page.locator("#day-map").get_attribute("src")
            frame = next(f for f in page.frames if "/map" in f.url)
            frame.wait_for_function("() => window.L && document.querySelector('.rondo-loop')")
            titles = [s["title"] for s in frame.evaluate(_LEAFLET_READ)["stops"]]
            assert all(not t.endswith(gone) for t in titles) and len(titles) == len(chosen) - 1
        finally:
            context.close()
            browser.close()
        assert outside == [], f"requests left 127.0.0.1: {outside}"
        assert dialogs == [] and errors == [], (dialogs, errors)
