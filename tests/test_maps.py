"""Day and week map pages and the vendored assets they load, offline.

References named beside the checks: HTML as parsed by the standard library's html.parser;
Leaflet 1.9's own API in the browser (map.eachLayer, Polyline.getLatLngs, Marker.getLatLng,
latLngToContainerPoint); Okabe & Ito (2008) for the day colours; WCAG 2.1 (relative luminance,
contrast ratio, SC 1.4.3) for badge text; RFC 9110 §13.1.2 (If-None-Match) and RFC 9111 §5.2
(Cache-Control) for the asset responses. Browser tests run the real page in Debian Chromium and
record every request: none may leave 127.0.0.1.
"""

from __future__ import annotations

import json
import re
import threading
from html.parser import HTMLParser
from pathlib import Path
from urllib.parse import urlsplit

import folium
import pytest
from flask import Flask
from werkzeug.serving import make_server

from solver.errors import InvalidInput
from tests.test_tiles import LocalTileServer
from tests.web.browser import CHROMIUM_ARGS
from webapp.maps import (
    DAY_COLOURS,
    DAY_DASHES,
    NO_TILES_BACKGROUND,
    OKABE_ITO,
    MapStop,
    contrast_ratio,
    day_map_html,
    map_asset_lists,
    week_map_html,
)
from webapp.tiles import OSM_ATTRIBUTION, tiles_bp
from webapp.vendor import (
    JQUERY_DIR,
    LEAFLET_DIR,
    LEAFLET_VERSION,
    vendor_asset_urls,
    vendor_bp,
)

ARTIFACTS = Path(__file__).resolve().parent.parent / "test-artifacts"
PHONE = {"width": 390, "height": 844}
HOSTILE = "<img src=x onerror=alert(1)>"

# An invented day: home and four visits a few km apart.
DAY = [
    {"name": "Home", "lat": 48.3069, "lon": 14.2858, "order": 0, "depart": "07:45",
     "arrive": "16:50"},
    {"name": "Bäckerei Sonnenhang", "lat": 48.3321, "lon": 14.3410, "order": 1,
     "arrive": "08:05", "depart": "08:50"},
    {"name": "Werkstatt Aubauer & Co", "lat": 48.2702, "lon": 14.3905, "order": 2,
     "arrive": "09:20", "depart": "10:30"},
    {"name": "Praxis am Kreisel", "lat": 48.2415, "lon": 14.3021, "order": 3,
     "arrive": "11:00", "depart": "11:40"},
    {"name": "Gärtnerei Linde", "lat": 48.2890, "lon": 14.2203, "order": 4,
     "arrive": "13:10", "depart": "14:00"},
]
HOSTILE_NAMES = [
    HOSTILE,
    "${window.__pwned = 2}",
    "`; window.__pwned = 3; `",
    "Back\\slash \\u0041 \\x41",
    "</script><script>window.__pwned = 4</script>",
]


def hostile_day() -> list[dict]:
    stops = [dict(DAY[0])]
    for order, name in enumerate(HOSTILE_NAMES, start=1):
        stops.append({"name": name, "lat": 48.28 + 0.015 * order, "lon": 14.31 + 0.03 * order,
                      "order": order, "arrive": "09:00", "depart": "09:30"})
    return stops


def week() -> list[tuple[str, list[dict]]]:
    home = DAY[0]
    monday = DAY
    tuesday = [home, {"name": "Hofladen Ebner", "lat": 48.36, "lon": 14.25, "order": 1,
                      "arrive": "08:20", "depart": "09:00"},
               {"name": "Kanzlei Rath", "lat": 48.38, "lon": 14.33, "order": 2,
                "arrive": "09:30", "depart": "10:15"}]
    wednesday = [home, {"name": "Tischlerei <Holz>", "lat": 48.25, "lon": 14.20, "order": 1,
                        "arrive": "08:30", "depart": "09:45"}]
    return [("Mon", monday), ("Tue", tuesday), ("Wed <b>", wednesday)]


class _References(HTMLParser):
    """Every URL-bearing attribute of the document, and each script's text."""

    def __init__(self):
        super().__init__()
        self.urls: list[tuple[str, str, str]] = []
        self.scripts: list[str] = []
        self._in_script = False

    def handle_starttag(self, tag, attrs):
        for name, value in attrs:
            if name in ("src", "href", "srcset", "poster", "data", "action") and value:
                self.urls.append((tag, name, value))
        self._in_script = tag == "script"

    def handle_endtag(self, tag):
        self._in_script = False

    def handle_data(self, data):
        if self._in_script:
            self.scripts.append(data)


def references(page: str) -> _References:
    parser = _References()
    parser.feed(page)
    parser.close()
    return parser


# ---------------------------------------------------------------------------- static HTML


@pytest.mark.parametrize("template", [None, "/tiles/{z}/{x}/{y}.png",
                                      "https://tiles.example.org/{z}/{x}/{y}.png"])
def test_the_page_references_only_this_server(template):
    page = day_map_html(DAY, tile_url_template=template, attribution=OSM_ATTRIBUTION)
    found = references(page)
    assert found.urls, "the page must load Leaflet from somewhere"
    for tag, attribute, value in found.urls:
        parts = urlsplit(value)
        assert not parts.scheme and not parts.netloc, (tag, attribute, value)
        assert value.startswith("/vendor/"), (tag, attribute, value)
    assert [v for t, _, v in found.urls if t == "script"] == [
        f"/vendor/leaflet/leaflet.js?v={LEAFLET_VERSION}", "/vendor/jquery/jquery.min.js?v=3.7.1"]
    assert [v for t, _, v in found.urls if t == "link"] == [
        f"/vendor/leaflet/leaflet.css?v={LEAFLET_VERSION}"]
    rest = page.replace(template, "") if template else page
    assert "http://" not in rest and "https://" not in rest
    assert "//" not in "".join(v for _, _, v in found.urls)


def test_asset_base_moves_every_asset():
    page = day_map_html(DAY, tile_url_template=None, attribution="", asset_base="/app/vendor/")
    assert {v.split("?")[0] for _, _, v in references(page).urls} == {
        "/app/vendor/leaflet/leaflet.js", "/app/vendor/jquery/jquery.min.js",
        "/app/vendor/leaflet/leaflet.css"}


def test_folium_class_lists_stay_untouched():
    # The asset lists are set per map; folium's class lists are shared by every map.
    before_js, before_css = list(folium.Map.default_js), list(folium.Map.default_css)
    day_map_html(DAY, tile_url_template=None, attribution="")
    assert folium.Map.default_js == before_js
    assert folium.Map.default_css == before_css
    assert any("jsdelivr" in url for _, url in folium.Map.default_js)  # still folium's own
    js, css = map_asset_lists()
    assert [name for name, _ in js] == ["leaflet", "jquery"]
    assert [name for name, _ in css] == ["leaflet_css"]


def _polylines(page: str) -> list[list[list[float]]]:
    return [json.loads(m) for m in re.findall(r"L\.polyline\(\s*(\[\[.*?\]\]),", page, re.S)]


def test_markers_and_loop_follow_the_visit_order_whatever_the_input_order():
    shuffled = [DAY[3], DAY[0], DAY[4], DAY[1], DAY[2]]
    page = day_map_html(shuffled, tile_url_template=None, attribution="")
    titles = re.findall(r'"title": "(\d+)\. ', page)
    assert titles == ["1", "2", "3", "4"]
    expected = [[s["lat"], s["lon"]] for s in DAY] + [[DAY[0]["lat"], DAY[0]["lon"]]]
    casing, line = _polylines(page)
    assert line == expected == casing  # home, the visits in order, home again
    assert page.count("rondo-pin rondo-stop") == 4
    assert page.count("rondo-pin rondo-home") == 1


def test_map_stop_dataclass_and_return_home_stop_are_accepted():
    stops = [MapStop("Home", 48.3, 14.28, 0, depart="08:00"),
             MapStop("Kunde", 48.32, 14.31, 1, arrive="08:30", depart="9:05"),
             MapStop("Home", 48.3, 14.28, 2, arrive="12:00", kind="home")]
    page = day_map_html(stops, tile_url_template=None, attribution="")
    assert _polylines(page)[1] == [[48.3, 14.28], [48.32, 14.31], [48.3, 14.28]]
    assert page.count("rondo-pin rondo-home") == 1  # one house for leaving and coming back
    assert "Leave 08:00, back 12:00" in page
    assert "Leave 09:05" in page  # "9:05" read and written as HH:MM


def test_a_hostile_name_is_escaped_once_and_inert_in_the_script():
    page = day_map_html(hostile_day(), tile_url_template=None, attribution="")
    assert "<img" not in page
    assert "&lt;img src=x onerror=alert(1)&gt;" in page
    assert "<script>window.__pwned" not in page
    # folium puts popup HTML in JS template literals: no backtick, "${" or backslash inside.
    literals = re.findall(r"\$\(`(.*?)`\)\[0\]", page, re.S)
    assert len(literals) == 1 + len(HOSTILE_NAMES)
    for literal in literals:
        assert literal.endswith("</div></div>")
        assert "${" not in literal and "\\" not in literal


def test_without_tiles_the_map_has_a_plain_ground_and_says_so():
    page = day_map_html(DAY, tile_url_template=None, attribution="")
    assert "L.tileLayer" not in page
    assert re.search(r"#map_[0-9a-f]+ \{ background: " + NO_TILES_BACKGROUND, page)
    assert "No street map: stops and route only." in page
    assert "L.control.scale()" in page


def test_with_tiles_the_layer_carries_the_template_and_attribution():
    page = day_map_html(DAY, tile_url_template="/tiles/{z}/{x}/{y}.png",
                        attribution=OSM_ATTRIBUTION)
    assert 'L.tileLayer(\n                "/tiles/{z}/{x}/{y}.png"' in page
    assert json.dumps(OSM_ATTRIBUTION) in page  # "\u00a9 OpenStreetMap contributors"
    assert "No street map" not in page


def test_an_empty_day_still_renders_a_map():
    page = day_map_html([], tile_url_template=None, attribution="")
    assert "L.map(" in page and "No stops to show for this day." in page


@pytest.mark.parametrize(("stops", "kwargs", "field"), [
    ([DAY[1]], {}, "stops"),  # no order 0
    ([DAY[0], DAY[1], DAY[1]], {}, "stops"),  # order repeated
    ([DAY[0], {**DAY[1], "arrive": "25:00"}], {}, "stops[1].arrive"),
    ([DAY[0], {**DAY[1], "lat": 95.0}], {}, "stops[1]"),
    ([DAY[0], {**DAY[1], "order": True}], {}, "stops[1].order"),
    ([DAY[0], {**DAY[1], "kind": "start"}], {}, "stops[1].kind"),
    ([DAY[0], {**DAY[1], "name": 7}], {}, "stops[1].name"),
    (DAY, {"asset_base": "https://cdn.example.org"}, "asset_base"),
    (DAY, {"asset_base": "//cdn.example.org"}, "asset_base"),
    (DAY, {"tile_url_template": "/tiles/{z}/{x}.png"}, "tile_url_template"),
    (DAY, {"tile_url_template": "OpenStreetMap"}, "tile_url_template"),
    (DAY, {"tile_url_template": "/tiles/{z}/{x}/{y}.png", "attribution": " "}, "attribution"),
])
def test_bad_input_is_refused_naming_the_field(stops, kwargs, field):
    arguments = {"tile_url_template": None, "attribution": OSM_ATTRIBUTION, **kwargs}
    with pytest.raises(InvalidInput) as raised:
        day_map_html(stops, **arguments)
    assert raised.value.field == field


def test_okabe_ito_values_match_the_published_rgb():
    # Okabe & Ito (2008), Fig. 16, as 0-255 RGB.
    published = {"black": (0, 0, 0), "orange": (230, 159, 0), "sky_blue": (86, 180, 233),
                 "bluish_green": (0, 158, 115), "yellow": (240, 228, 66),
                 "blue": (0, 114, 178), "vermillion": (213, 94, 0),
                 "reddish_purple": (204, 121, 167)}
    for name, rgb in published.items():
        hex_value = OKABE_ITO[name]
        assert tuple(int(hex_value[i:i + 2], 16) for i in (1, 3, 5)) == rgb, name
    assert len(set(DAY_COLOURS)) == 7 and "#000000" not in DAY_COLOURS
    assert len(set(DAY_DASHES)) == 7


def test_contrast_ratio_matches_wcag_reference_points():
    # WCAG 2.1 definition: black on white is 21:1, a colour on itself 1:1; #767676 on white is
    # the lightest grey passing 4.5:1 (4.54, WebAIM contrast checker, from memory).
    assert contrast_ratio("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast_ratio("#0072B2", "#0072B2") == pytest.approx(1.0)
    assert contrast_ratio("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)
    assert contrast_ratio("#777777", "#ffffff") < 4.5


def test_week_map_gives_each_day_its_colour_dash_and_legend():
    page = week_map_html(week(), tile_url_template=None, attribution="")
    lines = re.findall(r'"className": "rondo-loop", "color": "(#[0-9A-Fa-f]{6})", '
                       r'"dashArray": (null|"[^"]*")', page)
    assert [colour for colour, _ in lines] == list(DAY_COLOURS[:3])
    assert [json.loads(dash) for _, dash in lines] == list(DAY_DASHES[:3])
    # Legend names are HTML in Leaflet's layer control: the label is escaped text.
    assert "Wed &lt;b&gt;" in page and "Wed <b>" not in page
    assert "Tischlerei &lt;Holz&gt;" in page
    badges = re.findall(r"background:(#[0-9A-Fa-f]{6});color:(#[0-9a-f]{6})", page)
    assert badges
    for fill, ink in badges:
        assert contrast_ratio(fill, ink) >= 4.5, (fill, ink)  # WCAG 2.1 SC 1.4.3
    assert page.count("rondo-pin rondo-home") == 1  # the same house every day


def test_week_map_refuses_more_days_than_colours():
    eight = [(f"D{i}", DAY) for i in range(8)]
    with pytest.raises(InvalidInput) as raised:
        week_map_html(eight, tile_url_template=None, attribution="")
    assert raised.value.field == "days"


# ---------------------------------------------------------------------------- vendor files


@pytest.fixture
def vendor_client():
    app = Flask("vendor_test")
    app.register_blueprint(vendor_bp)
    return app.test_client()


def test_leaflet_and_jquery_come_from_the_packages(vendor_client):
    response = vendor_client.get(f"/vendor/leaflet/leaflet.js?v={LEAFLET_VERSION}")
    assert response.status_code == 200
    assert response.data == Path(LEAFLET_DIR, "leaflet.js").read_bytes()
    assert f"Leaflet {LEAFLET_VERSION}".encode() in response.data[:200]  # the file's banner
    assert "javascript" in response.headers["Content-Type"]
    jquery = vendor_client.get("/vendor/jquery/jquery.min.js?v=3.7.1")
    assert jquery.data == Path(JQUERY_DIR, "jquery.min.js").read_bytes()
    assert b"jQuery v3.7.1" in jquery.data[:100]
    response.close()
    jquery.close()


def test_versioned_assets_are_cached_long_others_a_day(vendor_client):
    # RFC 9111 §5.2.2.1 max-age; RFC 8246 immutable.
    versioned = vendor_client.get(f"/vendor/leaflet/leaflet.css?v={LEAFLET_VERSION}")
    assert versioned.cache_control.max_age == 365 * 24 * 3600
    assert versioned.cache_control.public and versioned.cache_control.immutable
    plain = vendor_client.get("/vendor/leaflet/leaflet.css")
    assert plain.cache_control.max_age == 24 * 3600
    assert not plain.cache_control.immutable
    # RFC 9110 §13.1.2: a matching If-None-Match gets 304 without a body.
    again = vendor_client.get("/vendor/leaflet/leaflet.css",
                              headers={"If-None-Match": plain.headers["ETag"]})
    assert again.status_code == 304 and again.data == b""
    for response in (versioned, plain, again):
        response.close()


@pytest.mark.parametrize("path", [
    "/vendor/leaflet/../__init__.py",
    "/vendor/leaflet/..%2f__init__.py",
    "/vendor/jquery/%2e%2e/%2e%2e/leaflet/__init__.py",
    "/vendor/leaflet/images/../../__init__.py",
    "/vendor/leaflet/%2fetc%2fpasswd",
    "/vendor/leaflet/no-such-file.js",
])
def test_paths_outside_the_packages_are_404(vendor_client, path):
    # Werkzeug first answers "//" with a 308 to the merged-slash path; follow it.
    response = vendor_client.get(path, follow_redirects=True)
    assert response.status_code == 404
    assert b"import" not in response.data and b"root:" not in response.data


def test_every_listed_asset_is_served(vendor_client):
    for url in vendor_asset_urls():
        response = vendor_client.get(url)
        assert response.status_code == 200, url
        response.close()


# ---------------------------------------------------------------------------- in the browser


@pytest.fixture(scope="module")
def map_server(tmp_path_factory):
    """The map pages, the vendor files and the tile proxy on 127.0.0.1, over a local upstream."""
    upstream = LocalTileServer()
    app = Flask("map_test", instance_path=str(tmp_path_factory.mktemp("instance")))
    app.config.update(TILE_UPSTREAM=upstream.template,
                      TILE_CACHE_DIR=str(tmp_path_factory.mktemp("tiles")))
    app.register_blueprint(vendor_bp)
    app.register_blueprint(tiles_bp)
    pages = {
        "/day-plain": lambda: day_map_html(DAY, tile_url_template=None, attribution=""),
        "/day-tiles": lambda: day_map_html(DAY, tile_url_template="/tiles/{z}/{x}/{y}.png",
                                           attribution=OSM_ATTRIBUTION),
        "/day-hostile": lambda: day_map_html(hostile_day(), tile_url_template=None,
                                             attribution=""),
        "/week": lambda: week_map_html(week(), tile_url_template="/tiles/{z}/{x}/{y}.png",
                                       attribution=OSM_ATTRIBUTION),
    }
    for path, render in pages.items():
        app.add_url_rule(path, path.strip("/"), render)
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, args=(0.05,), daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_port}", upstream
    server.shutdown()
    server.server_close()
    thread.join(timeout=5)
    upstream.stop()


@pytest.fixture(scope="module")
def browser():
    sync_api = pytest.importorskip("playwright.sync_api")
    with sync_api.sync_playwright() as playwright:
        chromium = playwright.chromium.launch(executable_path="/usr/bin/chromium",
                                              args=CHROMIUM_ARGS)
        yield chromium
        chromium.close()


class Visit:
    """A phone-sized page that records every request, response error and script error."""

    def __init__(self, browser, base: str):
        self.context = browser.new_context(viewport=PHONE, device_scale_factor=2)
        self.requests: list[str] = []
        self.failures: list[str] = []
        self.errors: list[str] = []
        self.dialogs: list[str] = []
        self.context.route("**/*", self._only_loopback)
        self.page = self.context.new_page()
        self.page.set_default_timeout(10_000)
        self.page.on("request", lambda request: self.requests.append(request.url))
        self.page.on("response", lambda r: r.status >= 400 and self.failures.append(r.url))
        self.page.on("pageerror", lambda error: self.errors.append(str(error)))
        self.page.on("dialog", self._dialog)
        self.base = base

    def _only_loopback(self, route):
        if urlsplit(route.request.url).hostname == "127.0.0.1":
            route.continue_()
        else:
            route.abort()

    def _dialog(self, dialog):
        self.dialogs.append(dialog.message)
        dialog.dismiss()

    def open(self, path: str):
        self.page.goto(self.base + path, wait_until="load")
        self.page.wait_for_selector(".rondo-pin")
        self.page.wait_for_load_state("networkidle")
        return self.page

    def assert_stayed_local(self):
        assert self.requests
        outside = [url for url in self.requests
                   if urlsplit(url).scheme != "data" and urlsplit(url).hostname != "127.0.0.1"]
        assert outside == []
        assert self.failures == []
        assert self.errors == []

    def screenshot(self, name: str) -> Path:
        ARTIFACTS.mkdir(exist_ok=True)
        path = ARTIFACTS / name
        self.page.screenshot(path=str(path))
        return path

    def close(self):
        self.context.close()


@pytest.fixture
def visit(browser, map_server):
    base, _ = map_server
    opened = Visit(browser, base)
    yield opened
    opened.close()


# Leaflet's own API, read in the page: the loop's vertices, each marker and where it is drawn.
_LAYERS_JS = """() => {
    const map = window[Object.keys(window).find(k => /^map_[0-9a-f]+$/.test(k))];
    const size = map.getSize();
    const out = {width: size.x, height: size.y, loops: [], markers: []};
    map.eachLayer(layer => {
        if (layer instanceof L.Polyline && layer.options.className === "rondo-loop") {
            out.loops.push(layer.getLatLngs().map(p => [p.lat, p.lng]));
        } else if (layer instanceof L.Marker) {
            const point = map.latLngToContainerPoint(layer.getLatLng());
            out.markers.push({title: layer.options.title, x: point.x, y: point.y,
                              latlng: [layer.getLatLng().lat, layer.getLatLng().lng]});
        }
    });
    return out;
}"""


@pytest.mark.browser
def test_day_map_without_tiles_on_a_phone(visit):
    page = visit.open("/day-plain")
    stops = page.locator(".leaflet-marker-icon.rondo-stop")
    assert stops.count() == len(DAY) - 1
    assert stops.all_inner_texts() == ["1", "2", "3", "4"]
    assert page.locator(".leaflet-marker-icon.rondo-home").count() == 1
    loop = page.locator("path.rondo-loop")
    assert loop.count() == 1
    assert re.match(r"^M[-\d. ]+(L[-\d. ]+){5}$", loop.get_attribute("d").replace(" L", "L"))
    assert page.locator(".leaflet-control-scale .leaflet-control-scale-line").count() >= 1
    assert re.fullmatch(r"\d+ k?m", page.locator(".leaflet-control-scale-line").first
                        .inner_text())
    assert page.locator("img.leaflet-tile").count() == 0
    assert page.locator(".rondo-note").inner_text() == "No street map: stops and route only."
    background = page.eval_on_selector(".folium-map", "e => getComputedStyle(e).backgroundColor")
    assert background == "rgb(229, 231, 235)"  # NO_TILES_BACKGROUND #e5e7eb

    layers = page.evaluate(_LAYERS_JS)
    expected = [[s["lat"], s["lon"]] for s in DAY] + [[DAY[0]["lat"], DAY[0]["lon"]]]
    assert layers["loops"] == [expected]
    for marker in layers["markers"]:  # fitted: every stop is on the screen
        assert 0 <= marker["x"] <= layers["width"] and 0 <= marker["y"] <= layers["height"]
    visit.screenshot("day-map-no-tiles.png")
    visit.assert_stayed_local()


@pytest.mark.browser
def test_day_map_with_tiles_through_the_local_proxy(visit, map_server):
    _, upstream = map_server
    page = visit.open("/day-tiles")
    page.wait_for_function("document.querySelectorAll('img.leaflet-tile-loaded').length > 0")
    tiles = page.eval_on_selector_all(
        "img.leaflet-tile-loaded", "els => els.map(e => [e.src, e.naturalWidth])")
    for src, natural_width in tiles:
        assert re.fullmatch(r"http://127\.0\.0\.1:\d+/tiles/\d+/\d+/\d+\.png", src)
        assert natural_width == 256  # the generated PNG decoded
    assert upstream.count >= 1
    assert all(headers["User-Agent"].startswith("Rondo/0.1") for _, headers in upstream.requests)
    attribution = page.locator(".leaflet-control-attribution").inner_text()
    assert "© OpenStreetMap contributors" in attribution
    assert page.locator(".rondo-note").count() == 0
    assert page.locator(".leaflet-marker-icon.rondo-stop").count() == len(DAY) - 1
    visit.screenshot("day-map-tiles.png")
    visit.assert_stayed_local()


@pytest.mark.browser
def test_hostile_names_show_as_text_and_run_nothing(visit):
    page = visit.open("/day-hostile")
    stops = page.locator(".leaflet-marker-icon.rondo-stop")
    assert stops.count() == len(HOSTILE_NAMES)
    for index, name in enumerate(HOSTILE_NAMES):
        marker = stops.nth(index)
        assert marker.get_attribute("title") == f"{index + 1}. {name}"
        marker.click()
        popup = page.locator(".leaflet-popup-content .rondo-popup")
        popup.wait_for()
        assert popup.locator("strong").inner_text() == f"{index + 1}. {name}"
        assert popup.locator("img, script").count() == 0
        if index == 0:  # after Leaflet's fade-in, so the shot shows the popup as the rep does
            page.wait_for_function(
                "getComputedStyle(document.querySelector('.leaflet-popup')).opacity === '1'")
            visit.screenshot("day-map-hostile-popup.png")
        page.locator(".leaflet-popup-close-button").click()
        popup.wait_for(state="detached")
    assert page.evaluate("typeof window.__pwned") == "undefined"
    assert visit.dialogs == []
    assert not any(urlsplit(url).path == "/x" for url in visit.requests)
    visit.assert_stayed_local()


@pytest.mark.browser
def test_week_map_on_a_phone(visit):
    page = visit.open("/week")
    loops = page.locator("path.rondo-loop")
    assert loops.count() == 3
    strokes = loops.evaluate_all("els => els.map(e => e.getAttribute('stroke'))")
    assert [s.lower() for s in strokes] == [c.lower() for c in DAY_COLOURS[:3]]
    labels = page.locator(".leaflet-control-layers-overlays label").all_inner_texts()
    assert [label.strip() for label in labels] == ["Mon", "Tue", "Wed <b>"]
    visible = page.locator(".leaflet-marker-icon.rondo-stop")
    assert visible.count() == 4 + 2 + 1
    page.locator(".leaflet-control-layers-overlays input").nth(0).uncheck()
    assert page.locator(".leaflet-marker-icon.rondo-stop").count() == 3
    assert page.locator("path.rondo-loop").count() == 2
    page.locator(".leaflet-control-layers-overlays input").nth(0).check()
    visit.screenshot("week-map.png")
    visit.assert_stayed_local()
