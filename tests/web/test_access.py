"""The server's door, on a real app and a real temporary SQLite file: who gets in with
``rondo serve --lan``, what a write from another origin gets, the pairing code's limits, and the
headers on every answer.

Outside references, named beside each check: RFC 9110 (§15.5.2 401 with WWW-Authenticate,
§15.5.4 403, §15.5.6 405 with Allow, §15.4.4 303, §10.2.3 Retry-After), RFC 6585 §4 (429),
RFC 6265 §4.1.2 and RFC 6265bis (cookie attributes, parsed with the standard library's
http.cookies), W3C CSP Level 3 (frame-ancestors), RFC 7034 (X-Frame-Options), the Fetch
standard (X-Content-Type-Options: nosniff; the Origin header) and W3C Fetch Metadata
(Sec-Fetch-Site). Client addresses other than 127.0.0.1 are only values in the WSGI environ of
the test client: no traffic goes anywhere.
"""

from __future__ import annotations

import http.cookies
import ipaddress
import re

import pytest

from webapp import STATIC_DIR, create_app, lan, pairing
from webapp.access import (
    COOKIE_MAX_AGE_S,
    COOKIE_NAME,
    PAIR_ATTEMPTS_PER_WINDOW,
    PairingCodes,
    RateLimit,
    public_static_files,
)
from webapp.db import connect

from .helpers import dump

BASE = "https://127.0.0.1:8765"
OWN = {"Origin": BASE}
PHONE_ADDRESS = "192.168.1.50"  # only a value in the test client's environ
SAMPLE_ARGS = {"int": "1", "id": "1", "date_text": "2026-03-04", "path": "x.js",
               "default": "x", "filename": "x"}


@pytest.fixture
def lan_app(tmp_path):
    lan.prepare(tmp_path / "lan", interfaces=[ipaddress.ip_interface("192.168.1.20/24")],
                names=["localhost", "laptop"])
    app = create_app({"TESTING": True, "DATABASE": str(tmp_path / "rondo.sqlite"),
                      "LAN_MODE": True, "LAN_DIR": str(tmp_path / "lan"),
                      "LAN_PAIR_HOSTS": ["192.168.1.20"]}, instance_path=str(tmp_path))
    yield app
    assert app.extensions["rondo_jobs"].join(timeout_s=60)


@pytest.fixture
def lan_client(lan_app):
    return lan_app.test_client()


def _code(client) -> str:
    page = client.get("/pair", base_url=BASE)
    assert page.status_code == 200
    return re.search(r"/pair/([A-Za-z0-9_-]{20,})<", page.get_data(as_text=True)).group(1)


def _pair(client) -> str:
    """Pair through the pages; return the access token the cookie carries."""
    response = client.post(f"/pair/{_code(client)}", base_url=BASE, headers=OWN)
    assert response.status_code == 303 and response.headers["Location"] == "/pair/done"
    return response.headers.getlist("Set-Cookie")[0].split(";")[0].split("=", 1)[1]


def _sample_url(rule) -> str:
    def fill(match):
        converter, name = match.group(1), match.group(2)
        return SAMPLE_ARGS.get(name) or SAMPLE_ARGS.get(converter or "default") or "x"
    return re.sub(r"<(?:(\w+)(?:\([^)]*\))?:)?(\w+)>", fill, rule.rule)


def test_every_route_but_pairing_refuses_an_unpaired_device(lan_app, lan_client):
    checked = 0
    for rule in lan_app.url_map.iter_rules():
        if rule.endpoint.startswith("pairing.") or rule.endpoint == "static":
            continue
        url = _sample_url(rule)
        for method in sorted(rule.methods - {"HEAD", "OPTIONS"}):
            response = lan_client.open(url, method=method, base_url=BASE, headers=OWN,
                                       json={} if method != "GET" else None)
            assert response.status_code == 401, (method, url, response.status_code)
            # RFC 9110 §15.5.2: a 401 MUST carry a WWW-Authenticate challenge.
            assert response.headers["WWW-Authenticate"].startswith("Pairing")
            checked += 1
    assert checked >= 20


def test_static_files_need_the_cookie_except_the_sheet_manifest_and_icons(lan_client):
    public = public_static_files()
    assert {"rondo.css", "manifest.webmanifest"} <= public
    assert not [name for name in public if not name.endswith((".css", ".svg", ".png",
                                                              ".webmanifest"))]
    files = [p.relative_to(STATIC_DIR).as_posix() for p in STATIC_DIR.rglob("*") if p.is_file()]
    assert any(f.endswith(".js") for f in files)
    for name in files:
        with lan_client.get(f"/static/{name}", base_url=BASE) as response:
            status = response.status_code
        assert status == (200 if name in public else 401), (name, status)


def test_api_refusals_are_json_and_pages_get_a_short_page(lan_client):
    api = lan_client.get("/api/settings", base_url=BASE)
    assert api.status_code == 401 and api.json["error"] == "unauthorized"
    page = lan_client.get("/day", base_url=BASE)
    assert page.status_code == 401 and page.mimetype == "text/html"
    text = page.get_data(as_text=True)
    assert "not paired" in text and "tabbar" not in text
    bogus = {"Cookie": f"{COOKIE_NAME}=made-up"}
    assert lan_client.get("/api/settings", base_url=BASE, headers=bogus).status_code == 401


def test_the_access_cookie_is_secure_httponly_strict_and_host_only(lan_client):
    response = lan_client.post(f"/pair/{_code(lan_client)}", base_url=BASE, headers=OWN)
    cookie = http.cookies.SimpleCookie(response.headers["Set-Cookie"])[COOKIE_NAME]
    assert cookie["secure"] is True  # RFC 6265 §4.1.2.5
    assert cookie["httponly"] is True  # RFC 6265 §4.1.2.6
    assert cookie["samesite"] == "Strict"  # RFC 6265bis §4.1.2.7
    # RFC 6265bis §4.1.3.2: a __Host- cookie is Secure, Path=/ and has no Domain.
    assert COOKIE_NAME.startswith("__Host-") and cookie["path"] == "/" and not cookie["domain"]
    assert 0 < int(cookie["max-age"]) <= COOKIE_MAX_AGE_S == 400 * 24 * 3600
    assert len(cookie.value) >= 43  # 256 bits in URL-safe base64


def test_a_paired_device_gets_in_until_the_laptop_forgets_it(lan_app, lan_client):
    token = _pair(lan_client)
    conn = connect(lan_app.config["DATABASE"])
    stored = [r["token_sha256"] for r in conn.execute("SELECT token_sha256 FROM paired_devices")]
    conn.close()
    assert token not in stored and len(stored) == 1  # only a digest is kept
    lan_client.set_cookie(COOKIE_NAME, token, domain="127.0.0.1")
    assert lan_client.get("/api/settings", base_url=BASE).status_code == 200
    assert lan_client.get("/day", base_url=BASE).status_code == 200
    device_id = int(re.search(r"/pair/devices/(\d+)/forget",
                              lan_client.get("/pair", base_url=BASE).get_data(as_text=True))[1])
    away = lan_client.post(f"/pair/devices/{device_id}/forget", base_url=BASE, headers=OWN,
                           environ_base={"REMOTE_ADDR": PHONE_ADDRESS})
    assert away.status_code == 403  # only the laptop forgets devices
    forget = lan_client.post(f"/pair/devices/{device_id}/forget", base_url=BASE, headers=OWN)
    assert forget.status_code == 303  # RFC 9110 §15.4.4
    assert lan_client.get("/api/settings", base_url=BASE).status_code == 401


def test_the_cookie_is_renewed_when_used_and_dropped_when_idle_for_400_days(lan_app,
                                                                           lan_client):
    token = _pair(lan_client)
    lan_client.set_cookie(COOKIE_NAME, token, domain="127.0.0.1")
    fresh = lan_client.get("/api/settings", base_url=BASE)
    assert fresh.status_code == 200 and "Set-Cookie" not in fresh.headers
    conn = connect(lan_app.config["DATABASE"])
    conn.execute("UPDATE paired_devices SET last_seen_at = '2020-01-01T00:00:00Z'")
    assert lan_client.get("/api/settings", base_url=BASE).status_code == 401
    conn.execute("UPDATE paired_devices SET last_seen_at = strftime('%Y-%m-%dT%H:%M:%SZ', "
                 "'now', '-1 hour')")
    used = lan_client.get("/api/settings", base_url=BASE)
    assert used.status_code == 200
    renewed = http.cookies.SimpleCookie(used.headers["Set-Cookie"])[COOKIE_NAME]
    assert renewed.value == token and int(renewed["max-age"]) == COOKIE_MAX_AGE_S
    seen = conn.execute("SELECT last_seen_at FROM paired_devices").fetchone()[0]
    assert seen >= conn.execute(
        "SELECT strftime('%Y-%m-%dT%H:%M:%SZ', 'now', '-1 minute')").fetchone()[0]
    conn.close()


def test_the_pairing_page_opens_on_the_laptop_only(lan_app, lan_client):
    away = lan_client.get("/pair", base_url=BASE, environ_base={"REMOTE_ADDR": PHONE_ADDRESS})
    assert away.status_code == 403 and b"<svg" not in away.data
    lan_app.config["LAN_OWN_ADDRESSES"] = ["192.168.1.20"]  # the laptop on its own LAN address
    own = lan_client.get("/pair", base_url=BASE, environ_base={"REMOTE_ADDR": "192.168.1.20"})
    assert own.status_code == 200 and b"<svg" in own.data
    assert own.headers["Cache-Control"] == "no-store"
    assert "https://192.168.1.20:8765/pair/" in own.get_data(as_text=True)


def test_a_pairing_code_works_once_and_for_ten_minutes():
    codes = PairingCodes()
    code, until_s = codes.issue(now_s=1000.0)
    assert until_s == 1600.0
    assert codes.valid(code, now_s=1599.0) and not codes.valid(code, now_s=1600.0)
    assert codes.take(code, now_s=1200.0) and not codes.take(code, now_s=1200.0)
    late, _ = codes.issue(now_s=1000.0)
    assert not codes.take(late, now_s=1601.0)
    assert not codes.take("never-issued", now_s=1000.0)


def test_a_used_code_is_refused_and_stores_nothing(lan_app, lan_client):
    code = _code(lan_client)
    assert lan_client.post(f"/pair/{code}", base_url=BASE, headers=OWN).status_code == 303
    again = lan_client.post(f"/pair/{code}", base_url=BASE, headers=OWN)
    assert again.status_code == 403 and "used up" in again.get_data(as_text=True)
    conn = connect(lan_app.config["DATABASE"])
    assert conn.execute("SELECT count(*) FROM paired_devices").fetchone()[0] == 1
    conn.close()


def test_wrong_codes_are_limited_per_address(lan_client):
    phone = {"REMOTE_ADDR": PHONE_ADDRESS}
    for i in range(PAIR_ATTEMPTS_PER_WINDOW):
        response = lan_client.get(f"/pair/wrong-{i}", base_url=BASE, environ_base=phone)
        assert response.status_code == 403, i
    limited = lan_client.get("/pair/wrong-last", base_url=BASE, environ_base=phone)
    assert limited.status_code == 429  # RFC 6585 §4
    assert 1 <= int(limited.headers["Retry-After"]) <= 60  # RFC 9110 §10.2.3
    good = _code(lan_client)
    blocked = lan_client.post(f"/pair/{good}", base_url=BASE, headers=OWN, environ_base=phone)
    assert blocked.status_code == 429
    other = lan_client.get("/pair/wrong-x", base_url=BASE,
                           environ_base={"REMOTE_ADDR": "192.168.1.51"})
    assert other.status_code == 403
    assert lan_client.post(f"/pair/{good}", base_url=BASE, headers=OWN).status_code == 303


def test_the_limit_lifts_once_the_oldest_failure_is_a_minute_old():
    limit = RateLimit(attempts=5, window_s=60)
    for t in range(5):
        assert limit.wait_s("a", now_s=100.0 + t) is None
        limit.failed("a", now_s=100.0 + t)
    assert limit.wait_s("a", now_s=110.0) == 50
    assert limit.wait_s("b", now_s=110.0) is None
    assert limit.wait_s("a", now_s=160.0) is None  # the failure at 100 s left the window


@pytest.mark.parametrize(("headers", "allowed"), [
    ({}, True),  # a tool on the laptop (curl, the tests): no browser, no forgery
    ({"Origin": "http://localhost"}, True),
    ({"Sec-Fetch-Site": "same-origin"}, True),
    ({"Origin": "null", "Sec-Fetch-Site": "same-origin"}, True),
    ({"Origin": "https://attacker.example"}, False),
    ({"Origin": "http://localhost:8080"}, False),  # another origin (RFC 6454 §4: port counts)
    ({"Origin": "null"}, False),
    ({"Sec-Fetch-Site": "cross-site"}, False),
    ({"Sec-Fetch-Site": "same-site"}, False),
    ({"Origin": "http://localhost", "Sec-Fetch-Site": "cross-site"}, False),
])
def test_loopback_writes_from_another_origin_are_refused(client, conn, headers, allowed):
    before = dump(conn)
    response = client.put("/api/settings", json={"rep_name": "Changed"}, headers=headers)
    if allowed:
        assert response.status_code == 200, response.json
    else:
        assert response.status_code == 403 and response.json["error"] == "forbidden"
        assert dump(conn) == before


def test_on_the_home_network_a_write_must_say_where_it_comes_from(lan_app, lan_client):
    token = _pair(lan_client)
    lan_client.set_cookie(COOKIE_NAME, token, domain="127.0.0.1")
    conn = connect(lan_app.config["DATABASE"])
    before = dump(conn)
    for headers in ({}, {"Origin": "https://127.0.0.1:9999"}, {"Origin": "null"},
                    {"Origin": "http://127.0.0.1:8765"}):  # scheme counts too (RFC 6454 §4)
        response = lan_client.put("/api/settings", json={"rep_name": "Forged"}, base_url=BASE,
                                  headers=headers)
        assert response.status_code == 403, headers  # RFC 9110 §15.5.4
    assert dump(conn) == before
    ok = lan_client.put("/api/settings", json={"rep_name": "Mine"}, base_url=BASE,
                        headers={"Sec-Fetch-Site": "same-origin"})
    assert ok.status_code == 200
    conn.close()


def _assert_guarded(response, where):
    headers = response.headers
    assert headers["X-Content-Type-Options"] == "nosniff", where  # Fetch standard
    assert headers["X-Frame-Options"] == "SAMEORIGIN", where  # RFC 7034 §2.1
    policy = headers["Content-Security-Policy"]
    assert "frame-ancestors 'self'" in policy, where  # CSP Level 3 §6.4.2
    assert headers["Referrer-Policy"] in ("same-origin", "no-referrer"), where


def test_every_answer_carries_the_security_headers(lan_client, client):
    token = _pair(lan_client)
    lan_client.set_cookie(COOKIE_NAME, token, domain="127.0.0.1")
    for path in ("/day", "/api/settings", "/static/rondo.css", "/pair", "/pair/done",
                 "/pair/rondo-laptop-ca.crt", "/no-such-page", "/api/no-such", "/pair/wrong"):
        with lan_client.get(path, base_url=BASE) as response:
            _assert_guarded(response, ("lan", path))
        with client.get(path) as response:
            _assert_guarded(response, ("loopback", path))
    fresh = lan_client.application.test_client()
    for path in ("/day", "/api/clients", "/static/js/common.js"):
        with fresh.get(path, base_url=BASE) as response:
            _assert_guarded(response, ("unpaired", path))
    plain = client.get("/api/settings").headers["Content-Security-Policy"]
    script = next(d for d in plain.split(";") if d.strip().startswith(("script-src",
                                                                        "default-src")))
    assert "'unsafe-inline'" not in script


def test_the_ca_certificate_downloads_as_a_ca_certificate(lan_app, lan_client):
    der = lan_client.get("/pair/rondo-laptop-ca.crt", base_url=BASE)
    assert der.status_code == 200 and der.mimetype == "application/x-x509-ca-cert"
    assert der.headers["Content-Disposition"].startswith("attachment")  # RFC 6266 §4.2
    assert der.data[0] == 0x30  # a DER SEQUENCE (X.690 §8.9)
    pem = lan_client.get("/pair/rondo-laptop-ca.pem", base_url=BASE)
    assert pem.data.startswith(b"-----BEGIN CERTIFICATE-----")  # RFC 7468 §5.1


def test_405_names_the_allowed_methods(client):
    response = client.delete("/api/settings")
    assert response.status_code == 405
    assert {"GET", "PUT"} <= {m.strip() for m in response.headers["Allow"].split(",")}


def test_pairing_is_off_without_lan_mode(client):
    assert b"rondo serve --lan" in client.get("/pair").data
    assert client.get("/pair/rondo-laptop-ca.crt").status_code == 404
    assert client.get("/api/settings").status_code == 200  # loopback use stays as it was


def test_prepare_server_switches_the_gate_on_without_debug(tmp_path):
    app = create_app({"DATABASE": str(tmp_path / "r.sqlite")}, instance_path=str(tmp_path))
    context = pairing.prepare_server(app, str(tmp_path), "127.0.0.1")
    assert app.config["LAN_MODE"] is True and app.debug is False
    assert app.config["LAN_PAIR_HOSTS"] == ["127.0.0.1"]
    assert context.minimum_version.name in ("TLSv1_2", "TLSv1_3")

    def broken():
        raise RuntimeError("secret internals")

    app.add_url_rule("/broken", "broken", broken)
    fresh = app.test_client()
    token = _pair(fresh)
    fresh.set_cookie(COOKIE_NAME, token, domain="127.0.0.1")
    response = fresh.get("/broken", base_url=BASE)
    assert response.status_code == 500
    assert b"secret" not in response.data and b"Traceback" not in response.data
    assert app.extensions["rondo_jobs"].join(timeout_s=10)


def test_local_interfaces_hold_loopback_and_no_link_local():
    found = lan.local_interfaces()
    addresses = {i.ip for i in found}
    assert {ipaddress.ip_address("127.0.0.1"), ipaddress.ip_address("::1")} <= addresses
    assert not [a for a in addresses if a.is_link_local]
    for name in lan.host_names():  # RFC 1123 §2.1 labels
        assert all(re.fullmatch(r"(?!-)[a-z0-9-]{1,63}(?<!-)", label) for label in
                   name.split(".")), name
