"""The installed page away from the laptop, in headless Debian Chromium against the real server.

Phone profile 390 x 844. Every request is recorded three ways and none may leave 127.0.0.1:
Playwright's routing (with service-worker requests included), the browser's request events,
and a recording proxy on loopback that Chromium must use for every other host.
Sources: W3C Service Workers (registration, clients.claim, the Cache API's keys() order:
"request response list" in insertion order; from memory); Chromium's own installability
check through the DevTools protocol (Page.getInstallabilityErrors; the criteria Chromium
applies, from memory); W3C Web App Manifest. Conflict rules: the outbox rule stated in
static/js/offline.js and shown to the rep.
"""

from __future__ import annotations

import http.server
import json
import os
import re
import socketserver
import threading
import time
import urllib.parse
import urllib.request
from pathlib import Path

import pytest

playwright_api = pytest.importorskip("playwright.sync_api")
expect = playwright_api.expect

from webapp.icon_art import png_bytes  # noqa: E402

from .helpers import live_api  # noqa: E402
from .live_server import running_server  # noqa: E402

pytestmark = pytest.mark.browser

from .browser import (  # noqa: E402
    ARTIFACTS,
    CHROMIUM,
    CHROMIUM_ARGS,
    PHONE,
    keep_on_loopback,
)

WEDNESDAY = "2026-03-04"
THURSDAY = "2026-03-05"
SOLVE_TIMEOUT_S = 60
# Demo clients open all Wednesday and Thursday, near home.
DAY_CLIENTS = ["Maison Bourgeon", "Terreaux & Compagnie", "Le Petit Arrosoir"]
EXTRA_CLIENT = "Graineterie de la Tour"
SYNC_TIMEOUT_MS = 25_000  # the page looks for the laptop at once on "online", else every 15 s


# ---- the loopback recorder every other host goes to ----

class _Recorder(socketserver.ThreadingMixIn, socketserver.TCPServer):
    daemon_threads = True
    allow_reuse_address = True


def _recording_proxy():
    seen: list[str] = []

    class Handler(socketserver.StreamRequestHandler):
        def handle(self):
            line = self.rfile.readline(4096).decode("latin-1").strip()
            if line:
                seen.append(line)
            self.wfile.write(b"HTTP/1.1 403 Forbidden\r\nContent-Length: 0\r\n\r\n")

    server = _Recorder(("127.0.0.1", 0), Handler)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    return server, seen


# Chromium itself calls Google services (component updates, sign-in, autofill) whatever the
# flags; those reach only the recorder, which refuses them. Any other host is a failure. (A page
# request to such a host would still fail the test: routing and request events catch it first.)
_BROWSER_OWN_HOSTS = re.compile(
    r"^(CONNECT |\w+ http://)[\w.-]*\b(google|googleapis|gstatic)\.com[:/ ]")


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    if not Path(CHROMIUM).exists():
        pytest.skip(f"{CHROMIUM} is not installed (apt-get install chromium)")
    proxy, seen = _recording_proxy()
    # Requests a service worker makes are routed too (Playwright, experimental, Chromium only);
    # the flag is read when the driver starts, so it is set only around this start.
    old = os.environ.get("PW_EXPERIMENTAL_SERVICE_WORKER_NETWORK_EVENTS")
    os.environ["PW_EXPERIMENTAL_SERVICE_WORKER_NETWORK_EVENTS"] = "1"
    try:
        manager = playwright_api.sync_playwright().start()
    finally:
        if old is None:
            del os.environ["PW_EXPERIMENTAL_SERVICE_WORKER_NETWORK_EVENTS"]
        else:
            os.environ["PW_EXPERIMENTAL_SERVICE_WORKER_NETWORK_EVENTS"] = old
    # Chromium sends loopback requests directly and everything else to this proxy.
    args = [*CHROMIUM_ARGS, f"--proxy-server=http://127.0.0.1:{proxy.server_address[1]}"]
    chromium = manager.chromium.launch(executable_path=CHROMIUM, args=args)

    def installed():
        """A profile on disk: Chromium never offers to install from an incognito window."""
        return manager.chromium.launch_persistent_context(
            str(tmp_path_factory.mktemp("profile")), executable_path=CHROMIUM, args=args, **PHONE)

    try:
        yield chromium, installed
    finally:
        chromium.close()
        manager.stop()
        proxy.shutdown()
        proxy.server_close()
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / "offline-browser-own-requests.txt").write_text("\n".join(seen) + "\n")
    strange = [line for line in seen if not _BROWSER_OWN_HOSTS.match(line)]
    assert strange == [], f"requests tried to leave 127.0.0.1: {strange}"


def _watch(context):
    """Route and record every request of ``context``; return the check to run at the end."""
    errors: list[str] = []
    requests: list[str] = []
    outside = keep_on_loopback(context)
    context.on("request", lambda r: requests.append(r.url))
    page = context.pages[0] if context.pages else context.new_page()
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("dialog", lambda d: (errors.append(f"dialog: {d.message}"), d.dismiss()))
    page.context_ref, page.requests = context, requests

    def check():
        off = [u for u in requests if urllib.parse.urlsplit(u).hostname not in ("127.0.0.1", None)
               and not u.startswith(("data:", "blob:"))]
        assert outside == [] and off == [], f"requests left 127.0.0.1: {outside or off}"
        assert errors == [], f"the page raised: {errors}"

    return page, check


@pytest.fixture
def phone(browser):
    """A phone-sized page; after the test, no request may have aimed off loopback."""
    chromium, _installed = browser
    context = chromium.new_context(**PHONE)
    page, check = _watch(context)
    yield page
    context.close()
    check()


def _shot(page, name: str) -> None:
    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / f"{name}.png"))


def _ids(base: str, names) -> dict[str, int]:
    book = {c["name"]: c["id"] for c in live_api(base, "GET", "/api/clients")}
    return {name: book[name] for name in names}


def _solved_day(base: str, date: str, names) -> dict:
    """Choose and solve the day through the API, as the laptop would have it."""
    live_api(base, "PUT", f"/api/days/{date}/visits",
             {"client_ids": list(_ids(base, names).values())})
    job = live_api(base, "POST", f"/api/days/{date}/solve")
    deadline = time.monotonic() + SOLVE_TIMEOUT_S
    while job["state"] in ("queued", "running"):
        assert time.monotonic() < deadline, "the solve did not finish"
        time.sleep(0.2)
        job = live_api(base, "GET", f"/api/jobs/{job['id']}")
    assert job["state"] == "done" and job["result"]["plan"]["feasible"], job
    return job["result"]


def _ready(page) -> None:
    """The worker controls the page and has kept what the page read before it took over."""
    expect(page.locator("html")).to_have_attribute("data-offline-ready", "yes", timeout=20_000)


def _cached(page) -> dict[str, list[str]]:
    return page.evaluate("""async () => {
        const out = {};
        for (const name of await caches.keys()) {
            const cache = await caches.open(name);
            out[name] = (await cache.keys()).map((r) => r.url.replace(location.origin, ""));
        }
        return out;
    }""")


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    with running_server(tmp_path_factory.mktemp("offline") / "data", demo=True) as (base, _):
        yield base


def test_the_page_is_installable_and_the_worker_takes_control(server, browser):
    context = browser[1]()
    page, check = _watch(context)
    try:
        _installable(server, page)
    finally:
        context.close()
    check()


def _installable(server, page):
    page.goto(server + "/day")
    _ready(page)
    worker = page.evaluate("""async () => {
        const reg = await navigator.serviceWorker.ready;
        return { scope: reg.scope, script: navigator.serviceWorker.controller.scriptURL };
    }""")
    assert worker == {"scope": server + "/", "script": server + "/sw.js"}
    # Chromium's own verdict: no installability errors, a manifest it parsed without errors.
    cdp = page.context_ref.new_cdp_session(page)
    assert cdp.send("Page.getInstallabilityErrors")["installabilityErrors"] == []
    manifest = cdp.send("Page.getAppManifest")
    assert manifest["errors"] == [] and manifest["url"] == server + "/static/manifest.webmanifest"
    caches = _cached(page)
    shell = [name for name in caches if name.startswith("rondo-shell-")]
    assert len(shell) == 1 and re.fullmatch(r"rondo-shell-[0-9a-f]{12}", shell[0])
    config = json.loads(re.search(r"^const CONFIG = (\{.*\});$", urllib.request.urlopen(
        server + "/sw.js", timeout=5).read().decode(), re.M).group(1))
    assert set(config["shell"]) <= set(caches[shell[0]])
    # Nothing fetched ahead: no tile was asked for, so none is kept (OSMF tile policy).
    assert not caches.get("rondo-tiles-v1")
    assert not any("/tiles/" in url for url in page.requests)


def test_offline_the_day_stays_readable_and_a_done_mark_waits(server, phone):
    page = phone
    view = _solved_day(server, WEDNESDAY, DAY_CLIENTS)
    planned = [v["name"] for v in view["plan"]["visits"]]
    page.goto(f"{server}/day?date={WEDNESDAY}")
    stops = page.locator("#stops > li[data-client-id]")
    expect(stops).to_have_count(len(DAY_CLIENTS))
    _ready(page)
    map_frame = page.locator("#map-slot iframe")
    has_map = map_frame.count() == 1

    # Offline: a reload shows the same order, the cautions and the map, marked as a copy.
    page.context_ref.set_offline(True)
    page.reload()
    expect(stops).to_have_count(len(DAY_CLIENTS))
    assert [n.strip() for n in stops.locator(".name").all_inner_texts()] == planned
    expect(page.locator("#caution")).to_be_visible()
    expect(page.locator("#caution")).to_contain_text("Never handle the phone while driving")
    bar = page.locator("#offline-bar")
    expect(bar).to_be_visible()
    expect(page.locator("#offline-line")).to_have_text(re.compile(
        r"^Offline · plan saved at \d\d:\d\d$"))
    if has_map:
        frame = page.frame_locator("#map-slot iframe")
        # One marker per visit plus home, and the loop drawn as a path (folium / Leaflet).
        expect(frame.locator(".leaflet-marker-icon")).to_have_count(len(DAY_CLIENTS) + 1)
        expect(frame.locator("path.leaflet-interactive").first).to_be_attached()
    _shot(page, "offline-01-day-from-phone-copy")
    page.locator("#plan").scroll_into_view_if_needed()
    _shot(page, "offline-01b-plan-from-phone-copy")
    if has_map:
        map_frame.scroll_into_view_if_needed()
        _shot(page, "offline-01c-map-from-phone-copy")

    # A done mark made offline waits in the outbox, survives a reload, reaches nobody yet.
    first = stops.nth(0)
    first_id = int(first.get_attribute("data-client-id"))
    first.locator(".done-btn").click()
    expect(page.locator("#done-dialog")).to_be_visible()
    page.locator('#done-form [name="arrived"]').fill("09:05")
    page.locator('#done-form [name="departed"]').fill("09:40")
    page.locator("#done-save").click()
    expect(page.locator("#toast")).to_contain_text("Kept on this phone")
    expect(bar).to_have_attribute("data-waiting", "1")
    expect(page.locator("#outbox-summary")).to_have_text("1 change waits to be sent")
    expect(first).to_have_class(re.compile(r"\bqueued\b"))
    expect(page.locator("#done-list")).to_contain_text(planned[0])
    assert live_api(server, "GET", f"/api/days/{WEDNESDAY}")["done"] == []
    page.reload()
    expect(bar).to_have_attribute("data-waiting", "1")
    expect(stops.nth(0)).to_have_class(re.compile(r"\bqueued\b"))

    # A last-minute visit noted offline joins the outbox behind it.
    page.locator("#outbox-summary").click()
    page.locator("#offline-visit-client").select_option(label=EXTRA_CLIENT)
    page.locator("#offline-visit-keep").click()
    expect(bar).to_have_attribute("data-waiting", "2")
    expect(page.locator("#chosen-list")).to_contain_text(EXTRA_CLIENT)
    expect(page.locator("#stale")).to_be_visible()  # the order no longer covers the day
    expect(page.locator("#outbox-list")).to_contain_text(f"Done: {planned[0]}, 09:05–09:40")
    expect(page.locator("#outbox-list")).to_contain_text(f"Last-minute visit: {EXTRA_CLIENT}")
    _shot(page, "offline-02-outbox-waiting")
    assert len(live_api(server, "GET", f"/api/days/{WEDNESDAY}")["choices"]) == len(DAY_CLIENTS)

    # Back online: both are sent in order, once, and the outbox says when.
    page.context_ref.set_offline(False)
    expect(bar).to_have_attribute("data-waiting", "0", timeout=SYNC_TIMEOUT_MS)
    expect(page.locator("#outbox-summary")).to_have_text(re.compile(
        r"^Sent: 2 changes, last at \d\d:\d\d$"))
    expect(page.locator("#outbox-list .sent")).to_have_count(2)
    day = live_api(server, "GET", f"/api/days/{WEDNESDAY}")
    assert [(d["client_id"], d["arrived"], d["departed"]) for d in day["done"]] == [
        (first_id, "09:05", "09:40")]
    extra = [c for c in day["choices"] if c["name"] == EXTRA_CLIENT]
    assert len(extra) == 1 and extra[0]["added_late"] is True
    assert len(day["choices"]) == len(DAY_CLIENTS) + 1
    expect(stops.nth(0)).not_to_have_class(re.compile(r"\bqueued\b"))
    assert page.evaluate("RondoOffline.outbox().filter((i) => i.state !== 'sent').length") == 0
    # The day was read again from the laptop; settings and the book on screen are still the
    # phone's copies until the rep refreshes.
    expect(page.locator("#offline-line")).to_have_text(re.compile(
        r"^Laptop back · on screen: copy saved at \d\d:\d\d$"))
    _shot(page, "offline-03-back-online-sent")
    page.locator("#offline-reload").click()
    expect(page.locator("#offline-line")).to_have_text("Laptop answers · all sent")
    expect(page.locator("#outbox-list .sent")).to_have_count(2)


def test_conflicts_stay_on_the_phone_marked_for_a_look(server, phone):
    page = phone
    _solved_day(server, THURSDAY, DAY_CLIENTS[:2])
    names = _ids(server, [*DAY_CLIENTS[:2], "Cabane à Outils", "Verger des Quatre Vents"])
    page.goto(f"{server}/clients")
    expect(page.locator("#client-list li").first).to_be_visible()
    _ready(page)
    page.goto(f"{server}/day?date={THURSDAY}")
    stops = page.locator("#stops > li[data-client-id]")
    expect(stops).to_have_count(2)
    page.context_ref.set_offline(True)

    # A done mark for a visit the laptop then takes off the day.
    gone = stops.filter(has_text=DAY_CLIENTS[0])
    gone.locator(".done-btn").click()
    page.locator("#done-save").click()
    expect(page.locator("#offline-bar")).to_have_attribute("data-waiting", "1")
    # Undo of a done mark that never left the phone takes it back out of the outbox.
    other = stops.filter(has_text=DAY_CLIENTS[1])
    other.locator(".done-btn").click()
    page.locator("#done-save").click()
    expect(page.locator("#offline-bar")).to_have_attribute("data-waiting", "2")
    page.get_by_role("button", name=f"Undo {DAY_CLIENTS[1]}").click()
    expect(page.locator("#offline-bar")).to_have_attribute("data-waiting", "1")
    expect(page.locator("#done-list")).not_to_contain_text(DAY_CLIENTS[1])

    # Two client edits: one field the laptop leaves alone, one the laptop changes too.
    page.goto(f"{server}/clients")
    for name, notes in (("Cabane à Outils", "Ring at the side door"),
                        ("Verger des Quatre Vents", "Ask for the orchard manager")):
        page.locator("#client-list li", has_text=name).get_by_role("button").click()
        page.locator('#client-form [name="notes"]').fill(notes)
        page.locator("#client-save").click()
        expect(page.locator("#toast")).to_contain_text("Kept on this phone")
    expect(page.locator("#offline-bar")).to_have_attribute("data-waiting", "3")

    # Meanwhile on the laptop.
    live_api(server, "PUT", f"/api/days/{THURSDAY}/visits", {"client_ids": [names[DAY_CLIENTS[1]]]})
    live_api(server, "PUT", f"/api/clients/{names['Cabane à Outils']}", {"visit_min": 35})
    live_api(server, "PUT", f"/api/clients/{names['Verger des Quatre Vents']}",
         {"notes": "Closed for stocktaking"})

    page.context_ref.set_offline(False)
    bar = page.locator("#offline-bar")
    expect(bar).to_have_attribute("data-waiting", "0", timeout=SYNC_TIMEOUT_MS)
    expect(bar).to_have_attribute("data-look", "2")
    expect(page.locator("#offline-line")).to_have_text("Laptop answers · 2 need a look")
    looks = page.locator("#outbox-list .look")
    expect(looks).to_have_count(2)
    expect(looks.filter(has_text=DAY_CLIENTS[0])).to_contain_text(
        "no longer has this visit on the day")
    clash = looks.filter(has_text="Verger des Quatre Vents")
    expect(clash).to_contain_text("Notes: the laptop has “Closed for stocktaking”")
    expect(clash).to_contain_text("you typed “Ask for the orchard manager”")
    _shot(page, "offline-04-needs-a-look")

    # What was sent: only the field the rep changed; the laptop's own change kept.
    cabane = live_api(server, "GET", f"/api/clients/{names['Cabane à Outils']}")
    assert (cabane["notes"], cabane["visit_min"]) == ("Ring at the side door", 35)
    verger = live_api(server, "GET", f"/api/clients/{names['Verger des Quatre Vents']}")
    assert verger["notes"] == "Closed for stocktaking"
    assert live_api(server, "GET", f"/api/days/{THURSDAY}")["done"] == []

    # The rep decides: send the note anyway; the done mark stays until dropped by hand.
    clash.get_by_role("button", name="Send mine anyway").click()
    expect(page.locator("#outbox-list .sent", has_text="Verger des Quatre Vents")).to_have_count(
        1, timeout=SYNC_TIMEOUT_MS)
    expect(bar).to_have_attribute("data-look", "1")
    verger = live_api(server, "GET", f"/api/clients/{names['Verger des Quatre Vents']}")
    assert verger["notes"] == "Ask for the orchard manager"
    kept = page.locator("#outbox-list .look")
    kept.get_by_role("button", name="Drop it").click()
    expect(kept).to_have_count(1)  # one tap arms, a second drops
    kept.get_by_role("button", name="Tap again to drop it").click()
    expect(page.locator("#outbox-list .look")).to_have_count(0)
    expect(bar).to_have_attribute("data-look", "0")


# ---- tiles: kept when viewed, at most the cap, least recently used out first ----

def _tile_upstream():
    """A loopback tile server: one small PNG for every address, and a log of what was asked."""
    import numpy as np

    tile = png_bytes(np.full((8, 8, 4), 200, dtype=np.uint8))
    asked: list[str] = []

    class Handler(http.server.BaseHTTPRequestHandler):
        def do_GET(self):  # noqa: N802 (the standard library's name)
            asked.append(self.path)
            self.send_response(200)
            self.send_header("Content-Type", "image/png")
            self.send_header("Content-Length", str(len(tile)))
            self.send_header("Cache-Control", "max-age=604800")
            self.end_headers()
            self.wfile.write(tile)

        def log_message(self, *args):
            pass

    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), Handler)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    return server, asked


@pytest.fixture(scope="module")
def tile_server(tmp_path_factory):
    upstream, asked = _tile_upstream()
    data = tmp_path_factory.mktemp("tiles") / "data"
    data.mkdir()
    (data / "config.py").write_text(
        f"TILE_UPSTREAM = 'http://127.0.0.1:{upstream.server_address[1]}/{{z}}/{{x}}/{{y}}.png'\n"
        "PWA_TILE_CACHE_MAX_COUNT = 3\n", encoding="utf-8")
    try:
        with running_server(data) as (base, log_path):
            yield base, asked, log_path
    finally:
        upstream.shutdown()
        upstream.server_close()


def test_viewed_tiles_are_kept_up_to_the_cap_and_nothing_else_is(tile_server, phone):
    base, asked, log_path = tile_server
    page = phone
    page.goto(base + "/day")
    _ready(page)
    assert asked == []  # nothing fetched ahead of being viewed
    tiles = [f"/tiles/12/{2048 + k}/1400.png" for k in range(4)]
    kept = page.evaluate("""async (tiles) => {
        const order = async () => {
            const cache = await caches.open("rondo-tiles-v1");
            return (await cache.keys()).map((r) => new URL(r.url).pathname);
        };
        const settle = async (want) => {
            for (let i = 0; i < 100; i++) {
                const now = await order();
                if (JSON.stringify(now) === JSON.stringify(want)) return now;
                await new Promise((r) => setTimeout(r, 50));
            }
            return order();
        };
        const view = async (url) => { const r = await fetch(url); await r.arrayBuffer(); };
        const [a, b, c, d] = tiles;
        await view(a); await view(b); await view(c);
        const first = await settle([a, b, c]);
        await view(a);                      // a is used again: now the most recent
        const touched = await settle([b, c, a]);
        await view(d);                      // one over the cap of 3: b, the least recent, goes
        const last = await settle([c, a, d]);
        return { first, touched, last };
    }""", tiles)
    assert kept == {"first": tiles[:3], "touched": [tiles[1], tiles[2], tiles[0]],
                    "last": [tiles[2], tiles[0], tiles[3]]}
    # The second look at the first tile came from the phone, not from the laptop.
    served = log_path.read_text(encoding="utf-8")
    assert served.count(f"GET {tiles[0]} ") == 1
    # Exports, job polls and the answers to writes are never kept.
    saved = page.evaluate("""async () => {
        const data = await caches.open("rondo-data-v1");
        const stamp = async () => {
            const copy = await data.match("/api/settings");
            return copy && copy.headers.get("X-Rondo-Copy-Saved-At");
        };
        const before = await stamp();
        await (await fetch("/api/clients.csv")).text();
        await fetch("/api/jobs/none");
        await new Promise((r) => setTimeout(r, 30));
        const put = await fetch("/api/settings", { method: "PUT",
            headers: { "Content-Type": "application/json" },
            body: JSON.stringify({ rep_name: "Tester" }) });
        await new Promise((r) => setTimeout(r, 200));
        return { before, after: await stamp(), put: put.status };
    }""")
    assert saved["put"] == 200 and saved["before"] and saved["after"] == saved["before"]
    kept_urls = [url for urls in _cached(page).values() for url in urls]
    assert not [u for u in kept_urls if u.startswith(("/api/clients.csv", "/api/jobs"))]
