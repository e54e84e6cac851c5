"""The installable app without a browser: manifest, icons, the worker's script, replay keys.

Sources beside each check: W3C Web App Manifest (members, icon sizes and purposes, the
application/manifest+json media type); Chromium's installability criteria as it applies them
(name, start_url, display, 192 and 512 px icons; from memory); W3C Service Workers (a worker's
scope is at most its script's folder unless Service-Worker-Allowed says more, §"Register";
a JavaScript MIME type is required); PNG, ISO/IEC 15948 (§5.2 signature, §5.3 chunk layout and
CRC-32, §11.2.2 IHDR, §9 filters); RFC 9110 §9.2.2 (POST is not idempotent) and the IETF
HTTPAPI draft "The Idempotency-Key HTTP Header Field" (from memory) for replayed POSTs.
"""

from __future__ import annotations

import json
import re
import sqlite3
import struct
import zlib
from pathlib import Path

import numpy as np
import pytest

from webapp import STATIC_DIR, create_app, icon_art, pwa
from webapp.db import MIGRATIONS, SCHEMA_VERSION, connect, migrate
from webapp.request_keys import KEEP_DAYS
from webapp.vendor import vendor_asset_urls

from .helpers import WEDNESDAY, add_client, dump, set_home

MANIFEST = json.loads((STATIC_DIR / "manifest.webmanifest").read_text("utf-8"))
BASE_HTML = (STATIC_DIR.parent / "webapp" / "templates" / "base.html").read_text("utf-8")
CSS = (STATIC_DIR / "rondo.css").read_text("utf-8")
HEX_COLOUR = re.compile(r"^#[0-9a-f]{6}$")


# ---- PNG, read the way ISO/IEC 15948 lays it out ----

def _chunks(data: bytes):
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # §5.2 signature
    pos = 8
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + length]
        (crc,) = struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])
        assert crc == zlib.crc32(kind + body) & 0xFFFFFFFF, kind  # §5.3 CRC over type + data
        yield kind, body
        pos += 12 + length


def _ihdr(data: bytes) -> dict:
    kind, body = next(_chunks(data))
    assert kind == b"IHDR" and len(body) == 13  # IHDR comes first, 13 bytes (§11.2.2)
    width, height, depth, colour, compression, filtering, interlace = struct.unpack(
        ">IIBBBBB", body)
    return {"width": width, "height": height, "depth": depth, "colour": colour,
            "compression": compression, "filter": filtering, "interlace": interlace}


def _decode_rgba(data: bytes) -> np.ndarray:
    """8-bit RGBA, not interlaced, every row with filter type 0 (None, §9.2), as icon_art
    writes them: inflate IDAT and drop each row's filter byte."""
    head = _ihdr(data)
    assert (head["depth"], head["colour"], head["interlace"]) == (8, 6, 0)
    raw = zlib.decompress(b"".join(body for kind, body in _chunks(data) if kind == b"IDAT"))
    width, height = head["width"], head["height"]
    rows = np.frombuffer(raw, dtype=np.uint8).reshape(height, width * 4 + 1)
    assert (rows[:, 0] == 0).all()
    return rows[:, 1:].reshape(height, width, 4)


# ---- manifest ----

def test_the_manifest_has_what_installing_needs():
    # W3C Web App Manifest members; Chromium asks for a name, start_url, a standalone-like
    # display and 192 px and 512 px icons before it offers to install (from memory).
    for member in ("id", "name", "short_name", "description", "start_url", "scope", "display",
                   "icons", "theme_color", "background_color"):
        assert MANIFEST.get(member), member
    assert MANIFEST["display"] in ("standalone", "fullscreen", "minimal-ui")
    assert len(MANIFEST["short_name"]) <= 12  # fits under a home-screen icon (common practice)
    # start_url and id are same-origin paths, start_url inside scope (Manifest, "scope").
    assert MANIFEST["start_url"].startswith(MANIFEST["scope"]) and MANIFEST["scope"] == "/"
    assert MANIFEST["id"].startswith("/")
    sizes = {(i["sizes"], i.get("purpose", "any")) for i in MANIFEST["icons"]}
    assert {("192x192", "any"), ("512x512", "any"), ("512x512", "maskable")} <= sizes
    for icon in MANIFEST["icons"]:
        assert set(icon.get("purpose", "any").split()) <= {"any", "maskable", "monochrome"}


def test_the_manifest_colours_are_the_page_palette():
    assert HEX_COLOUR.match(MANIFEST["theme_color"]) and HEX_COLOUR.match(
        MANIFEST["background_color"])
    paper = re.search(r"--paper:\s*(#[0-9a-f]{6})", CSS).group(1)
    assert MANIFEST["background_color"] == paper
    meta = re.search(r'<meta name="theme-color" content="(#[0-9a-f]{6})">', BASE_HTML).group(1)
    assert MANIFEST["theme_color"] == meta


def test_the_manifest_is_served_as_a_manifest(client):
    # Media type registered by the W3C Web App Manifest (IANA application/manifest+json).
    with client.get("/static/manifest.webmanifest") as response:
        assert response.status_code == 200
        assert response.mimetype == "application/manifest+json"
        assert json.loads(response.get_data(as_text=True)) == MANIFEST
    page = client.get("/day").get_data(as_text=True)
    assert '<link rel="manifest" href="/static/manifest.webmanifest">' in page
    assert '<link rel="apple-touch-icon" href="/static/icons/rondo-touch-180.png">' in page


# ---- icons ----

@pytest.mark.parametrize("icon", [i for i in MANIFEST["icons"] if i["type"] == "image/png"],
                         ids=lambda i: i["src"])
def test_each_manifest_icon_is_a_png_of_the_stated_size(client, icon):
    with client.get(icon["src"]) as response:
        assert response.status_code == 200 and response.mimetype == "image/png"
        head = _ihdr(response.data)
    width, height = (int(n) for n in icon["sizes"].split("x"))
    assert (head["width"], head["height"]) == (width, height)
    assert (head["compression"], head["filter"]) == (0, 0)  # the only methods §11.2.2 defines


def test_the_home_screen_icon_for_ios_is_180_px_and_opaque():
    # Apple's home-screen icon is 180 x 180 and gets black corners if transparent (from memory).
    data = (STATIC_DIR / "icons" / "rondo-touch-180.png").read_bytes()
    assert (_ihdr(data)["width"], _ihdr(data)["height"]) == (180, 180)
    assert (_decode_rgba(data)[..., 3] == 255).all()


@pytest.mark.parametrize("spec", icon_art.ICONS, ids=lambda s: s.filename)
def test_the_icon_files_are_what_the_project_draws(spec):
    # Decoded pixels, not bytes: another zlib may compress the same pixels differently.
    stored = _decode_rgba((STATIC_DIR / "icons" / spec.filename).read_bytes())
    drawn = icon_art.draw(spec.size_px, full_bleed=spec.full_bleed)
    assert stored.shape == (spec.size_px, spec.size_px, 4)
    assert np.array_equal(stored, drawn)
    # ... and the writer's own output decodes back to the same pixels.
    assert np.array_equal(_decode_rgba(icon_art.png_bytes(drawn)), drawn)


def test_the_maskable_icon_keeps_its_art_in_the_safe_zone():
    # A maskable icon fills the square; what matters sits in the centred circle of radius 40 %
    # (W3C Web App Manifest, icon masks; from memory). Checked pixel by pixel.
    pixels = _decode_rgba((STATIC_DIR / "icons" / "rondo-maskable-512.png").read_bytes())
    assert (pixels[..., 3] == 255).all()
    background = pixels[0, 0, :3]
    art = np.any(pixels[..., :3] != background, axis=2)
    ys, xs = np.nonzero(art)
    size = pixels.shape[0]
    radius = np.hypot(xs + 0.5 - size / 2, ys + 0.5 - size / 2) / size
    assert art.sum() > 0.1 * size * size  # there is art, not a blank square
    assert radius.max() <= icon_art.SAFE_ZONE_RADIUS


def test_the_plain_icons_have_transparent_corners():
    pixels = _decode_rgba((STATIC_DIR / "icons" / "rondo-512.png").read_bytes())
    assert pixels[0, 0, 3] == 0 and pixels[-1, -1, 3] == 0
    assert pixels[256, 256, 3] == 255


# ---- the worker's script ----

def _worker_config(text: str) -> dict:
    match = re.search(r"^const CONFIG = (\{.*\});$", text, re.M)
    assert match, "the worker's CONFIG line is missing"
    return json.loads(match.group(1))


def test_the_worker_is_served_at_the_root_as_javascript(client):
    response = client.get("/sw.js")
    assert response.status_code == 200
    # A service worker script must have a JavaScript MIME type (Service Workers, "Update").
    assert response.mimetype == "text/javascript"
    # At /sw.js its scope may be "/"; the header says so explicitly (Service Workers, Register).
    assert response.headers["Service-Worker-Allowed"] == "/"
    # Revalidated on every update check (RFC 9111 §5.2.2.4 no-cache).
    assert response.headers["Cache-Control"] == "no-cache"
    text = response.get_data(as_text=True)
    assert pwa.CONFIG_PLACEHOLDER not in text
    assert not re.search(r"https?://", text)  # nothing off this laptop


def test_the_worker_precaches_the_whole_shell_and_every_url_answers(app, client):
    config = _worker_config(client.get("/sw.js").get_data(as_text=True))
    with app.test_request_context():
        from flask import url_for

        from webapp.pages import SCREENS

        screens = [url_for(endpoint) for endpoint, _ in SCREENS]
    assert config["screens"] == screens
    expected = set(screens) | {f"/static/{p.relative_to(STATIC_DIR).as_posix()}"
                               for p in STATIC_DIR.rglob("*")
                               if p.suffix in (".js", ".css", ".png", ".svg", ".webmanifest")
                               and p.name != "sw.js"}
    if "vendor" in app.blueprints:
        expected |= set(vendor_asset_urls())
    assert set(config["shell"]) == expected
    assert "/sw.js" not in config["shell"]
    assert config["tileCap"] == pwa.TILE_CACHE_MAX_COUNT == 400
    assert re.fullmatch(r"[0-9a-f]{12}", config["version"])
    for url in config["shell"]:
        with client.get(url) as response:
            assert response.status_code == 200, url


def test_the_version_follows_the_shell_files(tmp_path):
    one, two = tmp_path / "a.js", tmp_path / "b.css"
    one.write_text("let a = 1;")
    two.write_text("body {}")
    first = pwa.shell_version([one, two])
    assert pwa.shell_version([two, one]) == first  # order of listing does not matter
    two.write_text("body { color: red; }")
    assert pwa.shell_version([one, two]) != first
    assert pwa.shell_version([one, two], extra="cap 3") != pwa.shell_version([one, two])


def test_the_tile_cap_is_configurable_and_checked(tmp_path):
    app = create_app({"DATABASE": str(tmp_path / "a.sqlite"), "PWA_TILE_CACHE_MAX_COUNT": 3},
                     instance_path=str(tmp_path))
    assert _worker_config(app.test_client().get("/sw.js").get_data(as_text=True))["tileCap"] == 3
    bad = create_app({"DATABASE": str(tmp_path / "b.sqlite"), "PWA_TILE_CACHE_MAX_COUNT": "lots"},
                     instance_path=str(tmp_path))
    response = bad.test_client().get("/sw.js")
    assert response.status_code == 503
    assert "PWA_TILE_CACHE_MAX_COUNT" in response.json["message"]


def test_the_page_scripts_load_the_outbox_before_the_screens(client):
    page = client.get("/day").get_data(as_text=True)
    common = page.index("/static/js/common.js")
    offline = page.index("/static/js/offline.js")
    assert common < offline < page.index("/static/js/day.js")
    assert 'id="offline-bar"' in page
    for path in ("/static/js/offline.js", "/static/offline.css"):
        with client.get(path) as response:
            body = response.get_data(as_text=True)
        assert not re.search(r"https?://", body), path


# ---- replayed last-minute visits ----

@pytest.fixture
def wednesday(client):
    set_home(client)
    return [add_client(client, name, pos)["id"] for name, pos in
            (("Atelier Sable", "47.3700, 0.7000"), ("Forge du Quai", "47.3900, 0.6900"))]


def _add(client, client_id, key=None, date=WEDNESDAY, **extra):
    headers = {"Idempotency-Key": key} if key is not None else {}
    return client.post(f"/api/days/{date}/visits", json={"client_id": client_id, **extra},
                       headers=headers)


def test_a_replayed_visit_is_applied_once(client, conn, wednesday):
    key = '"3f0c1d52-7a0e-4c1b-9a57-0e4b8f9e2d11"'
    first = _add(client, wednesday[0], key)
    assert first.status_code == 201
    before = dump(conn)
    again = _add(client, wednesday[0], key)
    # The same answer as the first time, and nothing stored changed (RFC 9110 §9.2.2: a POST
    # is not idempotent by itself; the key makes the replay safe).
    assert again.status_code == 201
    assert again.json["choices"] == first.json["choices"]
    assert dump(conn) == before
    assert [c["client_id"] for c in again.json["choices"]] == [wednesday[0]]
    # Quoted (the draft's sf-string) and bare forms are the same key.
    assert _add(client, wednesday[0], key.strip('"')).status_code == 201
    assert dump(conn) == before


def test_without_a_key_a_second_post_is_refused_as_before(client, wednesday):
    assert _add(client, wednesday[0]).status_code == 201
    response = _add(client, wednesday[0])
    assert response.status_code == 422
    assert response.json["fields"][0]["field"] == "client_id"


@pytest.mark.parametrize("change", ["other client", "other date", "other late"])
def test_a_key_reused_for_another_request_is_refused(client, conn, wednesday, change):
    key = "a1b2c3d4-reuse"
    assert _add(client, wednesday[0], key).status_code == 201
    before = dump(conn)
    if change == "other client":
        response = _add(client, wednesday[1], key)
    elif change == "other date":
        response = _add(client, wednesday[0], key, date="2026-03-11")
    else:
        response = _add(client, wednesday[0], key, late=False)
    # Reusing a key with a different request is an error (the draft: 422).
    assert response.status_code == 422
    assert response.json["fields"][0]["field"] == "Idempotency-Key"
    assert "a1b2c3d4-reuse" in response.json["message"]
    assert dump(conn) == before


@pytest.mark.parametrize("key", ["short", "x" * 101, "has space inside", '"unclosed', "é" * 10])
def test_a_malformed_key_is_named_and_changes_nothing(client, conn, wednesday, key):
    before = dump(conn)
    response = _add(client, wednesday[0], key)
    assert response.status_code == 400
    assert response.json["fields"][0]["field"] == "Idempotency-Key"
    assert dump(conn) == before


def test_a_refused_visit_keeps_no_key(client, conn, wednesday):
    # Client 999 does not exist: nothing is added, and the key stays free for a good request.
    assert _add(client, 999, "k-000-refused").status_code == 404
    assert conn.execute("SELECT count(*) FROM request_keys").fetchone()[0] == 0
    assert _add(client, wednesday[0], "k-000-refused").status_code == 201


def test_keys_older_than_the_keeping_time_are_forgotten(client, conn, wednesday):
    conn.execute("INSERT INTO request_keys (key, target, body_sha256, created_at) VALUES "
                 "('old-key-0001', 'POST /x', ?, strftime('%Y-%m-%dT%H:%M:%SZ', 'now', ?))",
                 ("0" * 64, f"-{KEEP_DAYS + 1} days"))
    assert _add(client, wednesday[0], "new-key-0001").status_code == 201
    keys = {r[0] for r in conn.execute("SELECT key FROM request_keys")}
    assert keys == {"new-key-0001"}


def test_the_request_key_step_migrates_a_database_of_the_step_before(tmp_path):
    # PRAGMA user_version marks how far a file is (SQLite docs); step 5 adds one table only.
    path = str(tmp_path / "step4.sqlite")
    conn = connect(path)
    step = MIGRATIONS.index("migration_005_request_keys.sql") + 1
    from importlib import resources

    from webapp.db import _statements

    for k in range(step - 1):
        script = resources.files("webapp").joinpath(MIGRATIONS[k]).read_text("utf-8")
        for statement in _statements(script):
            conn.execute(statement)
    conn.execute(f"PRAGMA user_version = {step - 1}")
    conn.execute("INSERT INTO clients (name, lat, lon, visit_min) VALUES ('Kept', 47.0, 0.7, 20)")
    migrate(conn)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert conn.execute("SELECT name FROM clients").fetchall()[0][0] == "Kept"
    columns = {r[1] for r in conn.execute("PRAGMA table_info(request_keys)")}
    assert columns == {"key", "target", "body_sha256", "created_at"}
    with pytest.raises(sqlite3.IntegrityError):
        conn.execute("INSERT INTO request_keys (key, target, body_sha256) VALUES ('k', 't', 'x')")
    conn.close()


def test_the_api_description_names_the_key_header(client):
    op = client.get("/api/openapi.json").json["paths"]["/api/days/{date_text}/visits"]["post"]
    headers = [p for p in op["parameters"] if p["in"] == "header"]
    assert [h["name"] for h in headers] == ["Idempotency-Key"]
    assert re.fullmatch(headers[0]["schema"]["pattern"], '"3f0c1d52-7a0e-4c1b"')


def test_icon_art_writes_every_icon(tmp_path):
    written = icon_art.write_icons(tmp_path)
    assert [p.name for p in written] == [s.filename for s in icon_art.ICONS]
    for path, spec in zip(written, icon_art.ICONS, strict=True):
        head = _ihdr(Path(path).read_bytes())
        assert (head["width"], head["height"]) == (spec.size_px, spec.size_px)
