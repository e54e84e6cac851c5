"""The tile proxy against a real local tile server (http.server on 127.0.0.1, no internet).

References named beside the checks: the XYZ / slippy-map tile scheme (z/x/y, x and y in
0..2**z - 1; https://wiki.openstreetmap.org/wiki/Slippy_map_tilenames), HTTP caching
RFC 9111, conditional requests RFC 9110 §13, the OSMF Tile Usage Policy (identifying
User-Agent, no no-cache headers), PNG (ISO/IEC 15948, W3C PNG spec) for the generated tile,
and an LRU model written in the test (OrderedDict) for eviction.
"""

from __future__ import annotations

import contextlib
import email.message
import email.utils
import random
import struct
import threading
import time
import zlib
from collections import OrderedDict
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest
from flask import Flask

from webapp import tiles
from webapp.tiles import (
    CACHE_STATUS_HEADER,
    DEFAULT_USER_AGENT,
    MIN_FRESH_S,
    OSM_ATTRIBUTION,
    TileCache,
    freshness_lifetime_s,
    tile_map_settings,
    tiles_bp,
)

DAY_S = 24 * 3600
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG spec §5.2


def png_bytes(width: int = 256, height: int = 256, *, grid_px: int = 32,
              paper=(244, 241, 232), ink=(196, 190, 176)) -> bytes:
    """A valid truecolour PNG (PNG spec §11.2.2, filter type 0, one zlib IDAT) with a grid."""
    rows = []
    for row in range(height):
        line = bytearray(b"\x00")  # filter type None
        for col in range(width):
            on_grid = row % grid_px == 0 or col % grid_px == 0
            line += bytes(ink if on_grid else paper)
        rows.append(bytes(line))

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    header = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)  # 8-bit RGB
    return (PNG_SIGNATURE + chunk(b"IHDR", header)
            + chunk(b"IDAT", zlib.compress(b"".join(rows), 9)) + chunk(b"IEND", b""))


class LocalTileServer:
    """A tiny tile server on 127.0.0.1 that records every request it gets."""

    def __init__(self, body: bytes | None = None):
        self.body = png_bytes() if body is None else body
        self.content_type = "image/png"
        self.headers = {"Cache-Control": "max-age=86400"}
        self.etag: str | None = '"tile-v1"'
        self.mode = "ok"  # ok | error | slow
        self.slow_s = 1.5
        self.requests: list[tuple[str, dict[str, str]]] = []
        self._lock = threading.Lock()
        server = self

        class Handler(BaseHTTPRequestHandler):
            def do_GET(self):  # noqa: N802 (http.server's name)
                with server._lock:
                    server.requests.append((self.path, dict(self.headers.items())))
                if server.mode == "error":
                    self.send_response(503)
                    self.send_header("Content-Length", "0")
                    self.end_headers()
                    return
                if server.mode == "slow":
                    time.sleep(server.slow_s)
                not_modified = server.etag is not None and \
                    self.headers.get("If-None-Match") == server.etag
                self.send_response(304 if not_modified else 200)
                for name, value in server.headers.items():
                    self.send_header(name, value)
                if server.etag is not None:
                    self.send_header("ETag", server.etag)
                if not_modified:
                    self.end_headers()
                    return
                self.send_header("Content-Type", server.content_type)
                self.send_header("Content-Length", str(len(server.body)))
                self.end_headers()
                # The proxy may have given up waiting already (timeout test).
                with contextlib.suppress(BrokenPipeError, ConnectionResetError):
                    self.wfile.write(server.body)

            def log_message(self, *args):
                pass

        self._server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.port = self._server.server_address[1]
        self.template = f"http://127.0.0.1:{self.port}/{{z}}/{{x}}/{{y}}.png"
        self._thread = threading.Thread(target=self._server.serve_forever, args=(0.02,),
                                        daemon=True)
        self._thread.start()
        self.running = True

    @property
    def count(self) -> int:
        with self._lock:
            return len(self.requests)

    def stop(self) -> None:
        """Close the port: later connections are refused."""
        if self.running:
            self._server.shutdown()
            self._server.server_close()
            self._thread.join(timeout=5)
            self.running = False


class Clock:
    """The proxy's clock, moved by the test."""

    def __init__(self):
        self.now_s = time.time()

    def __call__(self) -> float:
        return self.now_s

    def advance(self, seconds: float) -> None:
        self.now_s += seconds


@pytest.fixture
def upstream():
    server = LocalTileServer()
    yield server
    server.stop()


@pytest.fixture
def clock(monkeypatch):
    fake = Clock()
    monkeypatch.setattr(tiles, "_now_s", fake)
    return fake


@pytest.fixture(autouse=True)
def _no_proxies(monkeypatch):
    # urllib would send 127.0.0.1 through a configured proxy; these tests talk to it directly.
    for name in ("http_proxy", "HTTP_PROXY", "https_proxy", "HTTPS_PROXY", "all_proxy",
                 "ALL_PROXY"):
        monkeypatch.delenv(name, raising=False)


def make_app(tmp_path, upstream_template: str | None, **config) -> Flask:
    app = Flask("tile_test", instance_path=str(tmp_path / "instance"))
    settings = {"TESTING": True, "TILE_UPSTREAM": upstream_template,
                "TILE_CACHE_DIR": str(tmp_path / "tile-cache"), "TILE_TIMEOUT_S": 2}
    app.config.update({**settings, **config})
    app.register_blueprint(tiles_bp)
    return app


@pytest.fixture
def client(tmp_path, upstream, clock):
    return make_app(tmp_path, upstream.template).test_client()


def test_generated_png_is_well_formed():
    # PNG spec §5.2 signature, §11.2.2 IHDR fields, §5.3 CRC-32 over type and data.
    data = png_bytes(4, 3)
    assert data.startswith(PNG_SIGNATURE)
    length, kind = struct.unpack(">I4s", data[8:16])
    assert (length, kind) == (13, b"IHDR")
    assert struct.unpack(">II", data[16:24]) == (4, 3)
    crc = struct.unpack(">I", data[29:33])[0]
    assert crc == zlib.crc32(data[12:29]) & 0xFFFFFFFF


def test_first_request_goes_upstream_second_comes_from_the_cache(client, upstream):
    first = client.get("/tiles/3/4/2.png")
    assert first.status_code == 200
    assert first.data == upstream.body
    assert first.headers["Content-Type"] == "image/png"
    assert first.headers[CACHE_STATUS_HEADER] == "miss"
    # XYZ scheme: the upstream path is /{z}/{x}/{y}.png in that order.
    assert [path for path, _ in upstream.requests] == ["/3/4/2.png"]

    second = client.get("/tiles/3/4/2.png")
    assert second.status_code == 200
    assert second.data == upstream.body
    assert second.headers[CACHE_STATUS_HEADER] == "hit"
    assert upstream.count == 1


def test_only_requested_tiles_are_fetched(client, upstream):
    # No prefetch (OSMF Tile Usage Policy, bulk downloading): one request, one upstream fetch.
    client.get("/tiles/10/549/358.png")
    assert [path for path, _ in upstream.requests] == ["/10/549/358.png"]


def test_upstream_sees_an_identifying_user_agent_and_no_no_cache(client, upstream):
    # OSMF Tile Usage Policy: valid User-Agent identifying the application; do not send
    # no-cache headers.
    client.get("/tiles/0/0/0.png")
    _, headers = upstream.requests[0]
    assert headers["User-Agent"] == DEFAULT_USER_AGENT
    assert headers["User-Agent"].startswith("Rondo/0.1 (")
    assert "Python-urllib" not in headers["User-Agent"]
    assert "no-cache" not in headers.get("Cache-Control", "")
    assert "Pragma" not in headers


def test_contact_goes_into_the_user_agent(tmp_path, upstream, clock):
    app = make_app(tmp_path, upstream.template, TILE_CONTACT="rep@example.org\r\nX-Evil: 1")
    app.test_client().get("/tiles/0/0/0.png")
    agent = upstream.requests[0][1]["User-Agent"]
    assert agent == "Rondo/0.1 (+local visit planner; contact: rep@example.org  X-Evil: 1)"
    assert "X-Evil" not in upstream.requests[0][1]


def test_a_max_age_longer_than_the_floor_is_kept(client, upstream, clock):
    # RFC 9111 §4.2.1: freshness lifetime from max-age.
    upstream.headers = {"Cache-Control": "public, max-age=" + str(30 * DAY_S)}
    client.get("/tiles/5/10/12.png")
    clock.advance(29 * DAY_S)
    assert client.get("/tiles/5/10/12.png").headers[CACHE_STATUS_HEADER] == "hit"
    assert upstream.count == 1
    clock.advance(2 * DAY_S)
    response = client.get("/tiles/5/10/12.png")
    assert upstream.count == 2
    assert response.headers[CACHE_STATUS_HEADER] == "revalidated"


def test_a_short_max_age_is_raised_to_seven_days(client, upstream, clock):
    upstream.headers = {"Cache-Control": "max-age=60"}
    client.get("/tiles/5/10/12.png")
    clock.advance(MIN_FRESH_S - 60)
    hit = client.get("/tiles/5/10/12.png")
    assert hit.headers[CACHE_STATUS_HEADER] == "hit"
    assert 0 < int(hit.headers["Cache-Control"].removeprefix("max-age=")) <= 60
    assert upstream.count == 1
    clock.advance(61)
    client.get("/tiles/5/10/12.png")
    assert upstream.count == 2


def test_expires_minus_date_gives_the_lifetime(client, upstream, clock):
    # RFC 9111 §4.2.1: without max-age, the lifetime is Expires minus Date.
    date_s = clock.now_s
    upstream.headers = {
        "Expires": email.utils.formatdate(date_s + 20 * DAY_S, usegmt=True),
    }
    client.get("/tiles/6/33/21.png")
    clock.advance(19 * DAY_S)
    assert client.get("/tiles/6/33/21.png").headers[CACHE_STATUS_HEADER] == "hit"
    clock.advance(2 * DAY_S)
    client.get("/tiles/6/33/21.png")
    assert upstream.count == 2


def _headers(**fields: str) -> email.message.Message:
    message = email.message.Message()
    for name, value in fields.items():
        message[name.replace("_", "-")] = value
    return message


def test_freshness_lifetime_follows_rfc_9111():
    now_s = 1_700_000_000.0
    date = email.utils.formatdate(now_s, usegmt=True)
    in_a_day = email.utils.formatdate(now_s + DAY_S, usegmt=True)
    # §5.2.2.1 max-age; directive names are case-insensitive (§5.2).
    assert freshness_lifetime_s(_headers(Cache_Control="Max-Age=600"), now_s=now_s) == 600
    # §5.3: with max-age present, Expires is ignored.
    assert freshness_lifetime_s(_headers(Cache_Control="max-age=60", Expires=in_a_day,
                                         Date=date), now_s=now_s) == 60
    # §4.2.1: Expires minus Date.
    assert freshness_lifetime_s(_headers(Expires=in_a_day, Date=date), now_s=now_s) == DAY_S
    # §5.3: an invalid Expires such as "0" means already expired.
    assert freshness_lifetime_s(_headers(Expires="0"), now_s=now_s) == 0
    # §4.2.3: the Age the response already has counts against its lifetime.
    assert freshness_lifetime_s(_headers(Cache_Control="max-age=600", Age="100"),
                                now_s=now_s) == 500
    # §1.2.2: delta-seconds is digits only; anything else is not a max-age.
    assert freshness_lifetime_s(_headers(Cache_Control="max-age=-5"), now_s=now_s) == 0
    # §5.2.2.5: no-store forbids storing.
    assert freshness_lifetime_s(_headers(Cache_Control="no-store, max-age=600"),
                                now_s=now_s) is None
    assert freshness_lifetime_s(_headers(), now_s=now_s) == 0


def test_a_stale_tile_is_revalidated_with_its_etag(client, upstream, clock):
    # RFC 9110 §13.1.2 If-None-Match; RFC 9111 §4.3.4 a 304 freshens the stored response.
    client.get("/tiles/7/64/42.png")
    clock.advance(MIN_FRESH_S + 1)
    response = client.get("/tiles/7/64/42.png")
    assert response.status_code == 200
    assert response.headers[CACHE_STATUS_HEADER] == "revalidated"
    assert response.data == upstream.body
    assert upstream.requests[-1][1]["If-None-Match"] == '"tile-v1"'
    assert client.get("/tiles/7/64/42.png").headers[CACHE_STATUS_HEADER] == "hit"
    assert upstream.count == 2


def test_a_changed_tile_replaces_the_stored_one(client, upstream, clock):
    client.get("/tiles/7/64/42.png")
    clock.advance(MIN_FRESH_S + 1)
    upstream.etag = '"tile-v2"'
    upstream.body = png_bytes(paper=(200, 230, 200))
    response = client.get("/tiles/7/64/42.png")
    assert response.headers[CACHE_STATUS_HEADER] == "miss"
    assert response.data == upstream.body
    assert client.get("/tiles/7/64/42.png").data == upstream.body


def test_least_recently_served_tiles_are_evicted_under_the_cap(tmp_path, upstream, clock):
    size = len(upstream.body)
    cap = 3 * size + size // 2  # room for three tiles
    client = make_app(tmp_path, upstream.template, TILE_CACHE_MAX_BYTES=cap).test_client()
    cache = TileCache(tmp_path / "tile-cache", cap)
    model: OrderedDict[tuple[int, int], None] = OrderedDict()  # LRU written here: oldest first
    rng = random.Random(20240601)
    for _ in range(60):
        x, y = rng.randrange(3), rng.randrange(3)
        clock.advance(1)
        before = upstream.count
        status = client.get(f"/tiles/2/{x}/{y}.png").headers[CACHE_STATUS_HEADER]
        if (x, y) in model:
            model.move_to_end((x, y))
            expected = "hit"
        else:
            model[(x, y)] = None
            if len(model) > 3:
                model.popitem(last=False)
            expected = "miss"
        assert status == expected, (x, y)
        assert upstream.count == before + (expected == "miss")
        assert cache.total_bytes() <= cap
        assert cache.count() == len(model)


def test_a_tile_larger_than_the_cap_is_served_but_not_stored(tmp_path, upstream, clock):
    client = make_app(tmp_path, upstream.template, TILE_CACHE_MAX_BYTES=100).test_client()
    assert client.get("/tiles/1/1/1.png").data == upstream.body
    assert client.get("/tiles/1/1/1.png").headers[CACHE_STATUS_HEADER] == "miss"
    assert TileCache(tmp_path / "tile-cache", 100).total_bytes() == 0


@pytest.mark.parametrize(("path", "field"), [
    ("/tiles/20/0/0.png", "z"),  # above the highest zoom
    ("/tiles/-1/0/0.png", "z"),
    ("/tiles/2/4/0.png", "x"),  # XYZ: x in 0..2**z - 1
    ("/tiles/2/0/4.png", "y"),
    ("/tiles/0/1/0.png", "x"),
    ("/tiles/3/-1/0.png", "x"),
    ("/tiles/19/524288/0.png", "x"),
])
def test_coordinates_outside_the_tile_grid_are_400(client, upstream, path, field):
    response = client.get(path)
    assert response.status_code == 400
    body = response.get_json()
    assert body["error"] == "invalid_tile"
    assert body["fields"][0]["field"] == field
    assert "out of range" in body["message"]
    assert upstream.count == 0


@pytest.mark.parametrize("path", [
    "/tiles/a/b/c.png",
    "/tiles/1/2.png",
    "/tiles/1/0/0.jpg",
    "/tiles/../../etc/passwd",
    "/tiles/%2e%2e/%2e%2e/etc/passwd",
    "/tiles/1/0/..%2f..%2fx.png",
])
def test_addresses_that_are_not_tiles_are_400(client, upstream, path):
    response = client.get(path)
    assert response.status_code == 400
    assert "expected /tiles/<z>/<x>/<y>.png" in response.get_json()["message"]
    assert upstream.count == 0


def test_the_corners_of_the_grid_are_valid(client, upstream):
    assert client.get("/tiles/0/0/0.png").status_code == 200
    last = 2**19 - 1
    assert client.get(f"/tiles/19/{last}/{last}.png").status_code == 200
    assert upstream.count == 2


def test_upstream_down_serves_the_stale_copy_marked_stale(client, upstream, clock):
    client.get("/tiles/4/8/5.png")
    clock.advance(MIN_FRESH_S + DAY_S)
    upstream.stop()
    response = client.get("/tiles/4/8/5.png")
    assert response.status_code == 200
    assert response.data == upstream.body
    assert response.headers[CACHE_STATUS_HEADER] == "stale"
    assert response.headers["Cache-Control"] == "max-age=60"
    assert int(response.headers["Age"]) >= MIN_FRESH_S + DAY_S  # RFC 9111 §5.1


def test_upstream_error_serves_the_stale_copy(client, upstream, clock):
    client.get("/tiles/4/8/5.png")
    clock.advance(MIN_FRESH_S + 1)
    upstream.mode = "error"
    response = client.get("/tiles/4/8/5.png")
    assert response.status_code == 200
    assert response.headers[CACHE_STATUS_HEADER] == "stale"
    assert upstream.count == 2


def test_upstream_down_and_nothing_stored_is_503_json(client, upstream):
    upstream.stop()
    response = client.get("/tiles/4/8/5.png")
    assert response.status_code == 503
    body = response.get_json()
    assert body["error"] == "tiles_unreachable"
    assert "4/8/5" in body["message"]


def test_upstream_too_slow_and_nothing_stored_is_504_json(tmp_path, upstream, clock):
    upstream.mode = "slow"
    client = make_app(tmp_path, upstream.template, TILE_TIMEOUT_S=0.3).test_client()
    response = client.get("/tiles/4/8/5.png")
    assert response.status_code == 504
    assert response.get_json()["error"] == "tiles_unreachable"


def test_upstream_error_and_nothing_stored_is_502_json(client, upstream):
    upstream.mode = "error"
    response = client.get("/tiles/4/8/5.png")
    assert response.status_code == 502
    assert "HTTP 503" in response.get_json()["message"]


def test_an_answer_that_is_not_an_image_is_not_stored(client, upstream):
    upstream.content_type = "text/html"
    upstream.body = b"<html>blocked</html>"
    assert client.get("/tiles/4/8/5.png").status_code == 502
    assert client.get("/tiles/4/8/5.png").status_code == 502
    assert upstream.count == 2


def test_no_store_is_passed_on_and_not_kept(client, upstream):
    # RFC 9111 §5.2.2.5.
    upstream.headers = {"Cache-Control": "no-store"}
    first = client.get("/tiles/4/8/5.png")
    assert first.headers["Cache-Control"] == "no-store"
    client.get("/tiles/4/8/5.png")
    assert upstream.count == 2


def test_tiles_off_is_404_json_and_asks_nobody(tmp_path, upstream):
    response = make_app(tmp_path, None).test_client().get("/tiles/1/0/0.png")
    assert response.status_code == 404
    assert response.get_json()["error"] == "tiles_off"
    assert upstream.count == 0


@pytest.mark.parametrize("template", [
    "ftp://127.0.0.1/{z}/{x}/{y}.png",
    "http://127.0.0.1/{z}/{x}.png",
    "file:///etc/{z}/{x}/{y}",
])
def test_a_bad_upstream_template_is_503_json(tmp_path, template):
    response = make_app(tmp_path, template).test_client().get("/tiles/1/0/0.png")
    assert response.status_code == 503
    assert response.get_json()["error"] == "tiles_misconfigured"


def test_the_cache_lives_under_the_instance_folder_by_default(tmp_path, upstream, clock):
    app = Flask("tile_test", instance_path=str(tmp_path / "instance"))
    app.config.update(TILE_UPSTREAM=upstream.template)
    app.register_blueprint(tiles_bp)
    assert app.test_client().get("/tiles/1/0/0.png").status_code == 200
    assert (tmp_path / "instance" / "tiles" / "tiles.sqlite3").is_file()


def test_map_settings_point_maps_at_this_proxy():
    assert tile_map_settings({}) == (None, OSM_ATTRIBUTION)
    assert tile_map_settings({"TILE_UPSTREAM": "https://tile.openstreetmap.org/{z}/{x}/{y}.png"}) \
        == ("/tiles/{z}/{x}/{y}.png", "© OpenStreetMap contributors")
