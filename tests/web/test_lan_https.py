"""``rondo serve --lan``: the laptop's CA and server certificate, HTTPS as a real process, pairing
in Debian Chromium, and what an unpaired device gets.

Outside references, each named beside its check: RFC 5280 (X.509 profile) for the certificate
fields and path validation, done by cryptography's verifier and by OpenSSL through Python's ssl
module; RFC 6265 (§4.1.2.5 Secure, §4.1.2.6 HttpOnly) and RFC 6265bis (SameSite, __Host-) for
the cookie; RFC 9110 for status codes; RFC 6585 §4 for 429; the W3C Service Workers spec
(secure contexts only); zxing-cpp, an independent QR decoder, for the pairing code.
The server listens on 127.0.0.1 only; every browser request to another host is aborted and
recorded, and the test asserts there were none.
"""

from __future__ import annotations

import base64
import contextlib
import datetime as dt
import hashlib
import http.client
import ipaddress
import json
import re
import ssl
import stat
import subprocess
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from pathlib import Path

import pytest
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import ec, rsa
from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID
from cryptography.x509.verification import PolicyBuilder, Store, VerificationError

from webapp import lan
from webapp.access import COOKIE_NAME

from .browser import (  # noqa: E402
    ARTIFACTS,
    CHROMIUM,
    CHROMIUM_ARGS,
    PHONE,
    keep_on_loopback,
)
from .live_server import ROOT

_ADDRESS = re.compile(r"Rondo is at (https://127\.0\.0\.1:(\d+))/")
HOME_IFACES = [ipaddress.ip_interface("192.168.1.20/24"), ipaddress.ip_interface("127.0.0.1/8"),
               ipaddress.ip_interface("::1/128")]
NAMES = ["localhost", "laptop", "laptop.local"]


# --- the certificates, checked with cryptography (RFC 5280) -------------------------------

@pytest.fixture
def certs(tmp_path):
    return lan.prepare(tmp_path / "lan", interfaces=HOME_IFACES, names=NAMES)


def _ext(cert, kind):
    return cert.extensions.get_extension_for_class(kind)


def test_the_ca_is_a_ca_that_signs_certificates_only(certs):
    ca = certs.ca
    basic = _ext(ca, x509.BasicConstraints)
    # RFC 5280 §4.2.1.9: cA TRUE, and critical in a CA certificate.
    assert basic.critical and basic.value.ca is True
    usage = _ext(ca, x509.KeyUsage)
    # RFC 5280 §4.2.1.3: keyCertSign for a key that verifies certificate signatures; critical.
    assert usage.critical and usage.value.key_cert_sign and not usage.value.digital_signature
    # RFC 5280 §4.2.1.2: a CA certificate MUST carry a subject key identifier.
    assert _ext(ca, x509.SubjectKeyIdentifier).value.digest
    assert ca.issuer == ca.subject  # self-issued root
    ca.public_key().verify(ca.signature, ca.tbs_certificate_bytes,
                           ec.ECDSA(ca.signature_hash_algorithm))
    _strong_key(ca)
    assert isinstance(ca.signature_hash_algorithm, hashes.SHA256)
    # RFC 5280 §4.2.1.10: name constraints, marked critical.
    constraints = _ext(ca, x509.NameConstraints)
    assert constraints.critical


def _strong_key(cert):
    key = cert.public_key()
    if isinstance(key, rsa.RSAPublicKey):
        assert key.key_size >= 2048
    else:
        assert isinstance(key, ec.EllipticCurvePublicKey)
        assert key.curve.name == "secp256r1"  # NIST P-256


def test_the_server_certificate_names_the_laptop_and_is_signed_by_the_ca(certs):
    server, ca = certs.server, certs.ca
    san = _ext(server, x509.SubjectAlternativeName).value  # RFC 5280 §4.2.1.6
    assert set(san.get_values_for_type(x509.IPAddress)) == {
        ipaddress.ip_address("192.168.1.20"), ipaddress.ip_address("127.0.0.1"),
        ipaddress.ip_address("::1")}
    assert set(san.get_values_for_type(x509.DNSName)) == set(NAMES)
    # RFC 5280 §4.2.1.12: for TLS servers only.
    assert list(_ext(server, x509.ExtendedKeyUsage).value) == [ExtendedKeyUsageOID.SERVER_AUTH]
    assert _ext(server, x509.BasicConstraints).value.ca is False
    lifetime = server.not_valid_after_utc - server.not_valid_before_utc
    assert lifetime <= dt.timedelta(days=825)  # what phones accept (from memory)
    assert isinstance(server.signature_hash_algorithm, hashes.SHA256)
    _strong_key(server)
    # RFC 5280 §4.1.2.2: a positive serial of at most 20 octets.
    assert 0 < server.serial_number < 2 ** 159
    # RFC 5280 §4.2.1.1: the authority key identifier is the CA's subject key identifier.
    assert (_ext(server, x509.AuthorityKeyIdentifier).value.key_identifier
            == _ext(ca, x509.SubjectKeyIdentifier).value.digest)
    assert server.issuer == ca.subject
    ca.public_key().verify(server.signature, server.tbs_certificate_bytes,
                           ec.ECDSA(server.signature_hash_algorithm))


def test_cryptographys_path_validation_accepts_every_name_in_the_certificate(certs):
    # cryptography's verifier implements RFC 5280 path validation with the CA/B web profile.
    store = Store([certs.ca])
    for subject in [x509.IPAddress(ipaddress.ip_address(a)) for a in
                    ("192.168.1.20", "127.0.0.1", "::1")] + [x509.DNSName(n) for n in NAMES]:
        chain = PolicyBuilder().store(store).build_server_verifier(subject).verify(
            certs.server, [])
        assert chain[-1] == certs.ca
    with pytest.raises(VerificationError):
        PolicyBuilder().store(store).build_server_verifier(
            x509.IPAddress(ipaddress.ip_address("192.168.1.21"))).verify(certs.server, [])


def test_the_name_constraints_stop_the_ca_from_vouching_for_a_public_site(certs):
    # Forge what a thief of the CA key could make; RFC 5280 §4.2.1.10 path validation refuses.
    ca_key = serialization.load_pem_private_key(certs.files.ca_key.read_bytes(), password=None)
    key = ec.generate_private_key(ec.SECP256R1())
    now = dt.datetime.now(dt.UTC)
    for name in (x509.DNSName("bank.example"), x509.IPAddress(ipaddress.ip_address("8.8.8.8"))):
        forged = (x509.CertificateBuilder()
                  .subject_name(x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, "x")]))
                  .issuer_name(certs.ca.subject).public_key(key.public_key())
                  .serial_number(x509.random_serial_number())
                  .not_valid_before(now - dt.timedelta(hours=1))
                  .not_valid_after(now + dt.timedelta(days=30))
                  .add_extension(x509.SubjectAlternativeName([name]), critical=False)
                  .add_extension(x509.ExtendedKeyUsage([ExtendedKeyUsageOID.SERVER_AUTH]),
                                 critical=False)
                  .add_extension(x509.AuthorityKeyIdentifier.from_issuer_public_key(
                      certs.ca.public_key()), critical=False)
                  .sign(ca_key, hashes.SHA256()))
        verifier = PolicyBuilder().store(Store([certs.ca])).build_server_verifier(name)
        with pytest.raises(VerificationError):
            verifier.verify(forged, [])


def test_private_keys_are_readable_by_the_owner_only(certs):
    for path in (certs.files.ca_key, certs.files.server_key):
        assert stat.S_IMODE(path.stat().st_mode) == 0o600, path
    assert stat.S_IMODE(certs.files.directory.stat().st_mode) == 0o700
    assert b"PRIVATE KEY" not in certs.files.ca_cert.read_bytes()


def test_the_server_certificate_is_kept_until_the_addresses_change(certs, tmp_path):
    directory = tmp_path / "lan"
    before = certs.files.server_cert.read_bytes()
    again = lan.prepare(directory, interfaces=HOME_IFACES, names=NAMES)
    assert not again.made_ca and not again.issued_server
    assert certs.files.server_cert.read_bytes() == before
    moved = [ipaddress.ip_interface("192.168.1.37/24"), *HOME_IFACES[1:]]
    renewed = lan.prepare(directory, interfaces=moved, names=NAMES)
    assert renewed.issued_server and not renewed.made_ca
    assert renewed.ca.fingerprint(hashes.SHA256()) == certs.ca.fingerprint(hashes.SHA256())
    san = _ext(renewed.server, x509.SubjectAlternativeName).value
    assert ipaddress.ip_address("192.168.1.37") in san.get_values_for_type(x509.IPAddress)
    assert ipaddress.ip_address("192.168.1.20") not in san.get_values_for_type(x509.IPAddress)
    late = dt.datetime.now(dt.UTC) + dt.timedelta(days=810)
    assert lan.prepare(directory, interfaces=moved, names=NAMES, now=late).issued_server


def test_an_address_outside_the_cas_networks_is_left_out_not_certified(certs, tmp_path):
    # 198.51.100.0/24 (RFC 5737 documentation range) was not this laptop's when the CA was made.
    extra = [*HOME_IFACES, ipaddress.ip_interface("198.51.100.7/24")]
    later = lan.prepare(tmp_path / "lan", interfaces=extra, names=NAMES)
    assert later.left_out == (ipaddress.ip_address("198.51.100.7"),)
    san = _ext(later.server, x509.SubjectAlternativeName).value
    assert ipaddress.ip_address("198.51.100.7") not in san.get_values_for_type(x509.IPAddress)


# --- the real server ---------------------------------------------------------------------

@contextlib.contextmanager
def lan_server(data_dir: Path, timeout_s: float = 30.0):
    """``python -m webapp serve --lan --host 127.0.0.1 --port 0``; yields (base, CA file, log)."""
    log_path = data_dir.with_suffix(".log")
    cmd = [sys.executable, "-m", "webapp", "serve", "--lan", "--host", "127.0.0.1", "--port",
           "0", "--data", str(data_dir), "--demo"]
    with open(log_path, "w", encoding="utf-8") as log:
        proc = subprocess.Popen(cmd, cwd=ROOT, stdout=log, stderr=subprocess.STDOUT, text=True)
    try:
        base = _wait_until_up(proc, log_path, data_dir, timeout_s)
        yield base, data_dir / "lan" / "ca-cert.pem", log_path
    finally:
        proc.terminate()  # this process only, by its own id
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=10)


def _wait_until_up(proc, log_path: Path, data_dir: Path, timeout_s: float) -> str:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        text = log_path.read_text(encoding="utf-8")
        if proc.poll() is not None:
            raise AssertionError(f"the server stopped with {proc.returncode}:\n{text}")
        match = _ADDRESS.search(text)
        if match:
            try:
                _fetch(match.group(1), "/pair/done", data_dir / "lan" / "ca-cert.pem")
                return match.group(1)
            except (urllib.error.URLError, ConnectionError, ssl.SSLError):
                pass
        time.sleep(0.1)
    raise AssertionError(f"the server did not answer within {timeout_s} s:\n"
                         f"{log_path.read_text(encoding='utf-8')}")


def _tls(ca_file: Path) -> ssl.SSLContext:
    # OpenSSL verifies the chain to our CA and the IP address 127.0.0.1 against the SAN.
    context = ssl.create_default_context(cafile=str(ca_file))
    assert context.check_hostname and context.verify_mode == ssl.CERT_REQUIRED
    return context


class _Answer:
    def __init__(self, status, headers, body):
        self.status, self.headers, self.body = status, headers, body

    def json(self):
        return json.loads(self.body)


class _NoRedirect(urllib.request.HTTPRedirectHandler):
    def redirect_request(self, *args, **kwargs):
        return None


def _fetch(base, path, ca_file, *, method="GET", body=None, headers=None) -> _Answer:
    data = json.dumps(body).encode() if body is not None else None
    request = urllib.request.Request(base + path, method=method, data=data,
                                     headers={"Content-Type": "application/json",
                                              **(headers or {})})
    opener = urllib.request.build_opener(urllib.request.HTTPSHandler(context=_tls(ca_file)),
                                         _NoRedirect())
    try:
        with opener.open(request, timeout=10) as response:
            return _Answer(response.status, response.headers, response.read())
    except urllib.error.HTTPError as err:
        return _Answer(err.code, err.headers, err.read())


def _raw_get(base, raw_path, ca_file, cookie=None) -> _Answer:
    """A GET whose path goes out exactly as written (urllib would not touch it either, but
    http.client makes that plain)."""
    parts = urllib.parse.urlsplit(base)
    conn = http.client.HTTPSConnection(parts.hostname, parts.port, context=_tls(ca_file),
                                       timeout=10)
    try:
        conn.putrequest("GET", raw_path, skip_accept_encoding=True)
        if cookie:
            conn.putheader("Cookie", f"{COOKIE_NAME}={cookie}")
        conn.endheaders()
        response = conn.getresponse()
        return _Answer(response.status, response.headers, response.read())
    finally:
        conn.close()


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    with lan_server(tmp_path_factory.mktemp("lan") / "data") as running:
        yield running


def _pair_without_browser(base, ca_file) -> str:
    page = _fetch(base, "/pair", ca_file).body.decode()
    url = re.search(r'class="pair-url">([^<]+)<', page).group(1)
    answer = _fetch(base, urllib.parse.urlsplit(url).path, ca_file, method="POST",
                    headers={"Origin": base})
    assert answer.status == 303, answer.body  # RFC 9110 §15.4.4 See Other
    cookie = answer.headers.get_all("Set-Cookie")[0]
    return cookie.split(";")[0].split("=", 1)[1]


def test_the_laptop_serves_https_that_openssl_verifies_against_its_ca(server):
    base, ca_file, log = server
    answer = _fetch(base, "/pair/done", ca_file)  # raises if the chain or the name fails
    assert answer.status == 200
    text = log.read_text()
    assert "https://127.0.0.1:" in text and "/pair" in text
    assert "there is no login" not in text


@pytest.fixture(scope="module")
def token(server):
    base, ca_file, _log = server
    return _pair_without_browser(base, ca_file)


def test_without_a_paired_cookie_nothing_is_read_or_changed(server, token):
    base, ca_file, _log = server
    before = _read_settings(base, ca_file, token)
    for cookie in (None, "not-a-token", "A" * 43):
        headers = {"Cookie": f"{COOKIE_NAME}={cookie}"} if cookie else {}
        for path in ("/", "/day", "/clients", "/setup", "/api/settings", "/api/clients",
                     "/api/days", "/static/js/common.js", "/static/js/day.js", "/sw.js",
                     "/tiles/12/2040/1400.png", "/api/openapi.json", "/no/such/page"):
            answer = _fetch(base, path, ca_file, headers=headers)
            assert answer.status == 401, (path, cookie, answer.status)
            # RFC 9110 §15.5.2: a 401 carries a WWW-Authenticate challenge.
            assert answer.headers["WWW-Authenticate"].startswith("Pairing"), path
            if path.startswith("/api/"):
                assert answer.json()["error"] == "unauthorized"
            assert b"Demo" not in answer.body and b"rep_name" not in answer.body, path
        for method, path, body in (("PUT", "/api/settings", {"rep_name": "Intruder"}),
                                   ("POST", "/api/clients", {"name": "Intruder",
                                                             "location": "47.3, 0.7"})):
            answer = _fetch(base, path, ca_file, method=method, body=body,
                            headers={**headers, "Origin": base})
            assert answer.status == 401, (path, answer.status)
    assert _read_settings(base, ca_file, token) == before


def _read_settings(base, ca_file, token):
    headers = {"Cookie": f"{COOKIE_NAME}={token}"}
    settings = _fetch(base, "/api/settings", ca_file, headers=headers).json()
    book = _fetch(base, "/api/clients", ca_file, headers=headers).json()
    return settings, sorted(c["name"] for c in book)


def test_what_any_device_may_fetch_reveals_no_data(server):
    base, ca_file, _log = server
    der = _fetch(base, "/pair/rondo-laptop-ca.crt", ca_file)
    assert der.status == 200
    assert der.headers["Content-Type"] == "application/x-x509-ca-cert"
    ca = x509.load_pem_x509_certificate(ca_file.read_bytes())
    assert x509.load_der_x509_certificate(der.body) == ca
    pem = _fetch(base, "/pair/rondo-laptop-ca.pem", ca_file)
    assert pem.headers["Content-Type"] == "application/x-x509-ca-cert"
    assert x509.load_pem_x509_certificate(pem.body) == ca
    for answer in (der, pem):
        assert b"PRIVATE KEY" not in answer.body
    manifest = _fetch(base, "/static/manifest.webmanifest", ca_file)
    assert manifest.status == 200 and json.loads(manifest.body)["name"]


def test_a_write_from_another_origin_is_refused_even_with_the_cookie(server, token):
    base, ca_file, _log = server
    cookie = {"Cookie": f"{COOKIE_NAME}={token}"}
    name = _fetch(base, "/api/settings", ca_file, headers=cookie).json()["rep_name"]
    other = base.rsplit(":", 1)[0] + ":1"  # same site, another origin (RFC 6454 §4 tuple)
    refusals = [{"Origin": other}, {"Origin": "https://attacker.example"}, {"Origin": "null"},
                {"Sec-Fetch-Site": "same-site"}, {"Sec-Fetch-Site": "cross-site"}, {}]
    for extra in refusals:
        answer = _fetch(base, "/api/settings", ca_file, method="PUT",
                        body={"rep_name": "Forged"}, headers={**cookie, **extra})
        assert answer.status == 403, (extra, answer.status)  # RFC 9110 §15.5.4 Forbidden
    assert _fetch(base, "/api/settings", ca_file, headers=cookie).json()["rep_name"] == name
    ok = _fetch(base, "/api/settings", ca_file, method="PUT", body={"rep_name": name},
                headers={**cookie, "Origin": base})
    assert ok.status == 200


@pytest.mark.parametrize("raw_path", [
    "/static/../webapp/db.py", "/static/%2e%2e/webapp/db.py", "/static/..%2fwebapp%2fdb.py",
    "/static/js/../../webapp/lan.py", "/tiles/../../etc/passwd", "/tiles/..%2f..%2fetc/passwd",
    "/static/..\\webapp\\db.py", "/pair/../lan/ca-key.pem", "/vendor/leaflet/../../../etc/passwd",
])
def test_path_traversal_is_refused(server, token, raw_path):
    base, ca_file, _log = server
    for cookie in (None, token):
        answer = _raw_get(base, raw_path, ca_file, cookie=cookie)
        assert 400 <= answer.status < 500, (raw_path, answer.status)
        assert b"root:" not in answer.body and b"def " not in answer.body
        assert b"PRIVATE KEY" not in answer.body


# --- the phone, in Chromium ----------------------------------------------------------------

def _spki_sha256_b64(cert_path: Path) -> str:
    cert = x509.load_pem_x509_certificate(cert_path.read_bytes())
    spki = cert.public_key().public_bytes(serialization.Encoding.DER,
                                          serialization.PublicFormat.SubjectPublicKeyInfo)
    return base64.b64encode(hashlib.sha256(spki).digest()).decode()


@pytest.fixture(scope="module")
def browser(server):
    if not Path(CHROMIUM).exists():
        pytest.skip(f"{CHROMIUM} is not installed (apt-get install chromium)")
    playwright_api = pytest.importorskip("playwright.sync_api")
    _base, ca_file, _log = server
    # Chromium trusts exactly this server certificate's key, nothing else.
    trust = _spki_sha256_b64(ca_file.parent / "server-cert.pem")
    with playwright_api.sync_playwright() as p:
        # Every host but 127.0.0.1 resolves to nothing, so not even a request the
        # routing below cannot see (a service worker's) could leave the machine by name.
        chromium = p.chromium.launch(executable_path=CHROMIUM, args=[
            *CHROMIUM_ARGS, f"--ignore-certificate-errors-spki-list={trust}",
            "--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE 127.0.0.1"])
        yield chromium
        chromium.close()


@contextlib.contextmanager
def _device(browser):
    """A phone-sized context; yields (page, outside, responses)."""
    context = browser.new_context(**PHONE)
    responses: list = []
    outside = keep_on_loopback(context)
    page = context.new_page()
    page.on("response", lambda response: responses.append(response))
    try:
        yield page, outside, responses
    finally:
        context.close()
    assert outside == [], f"requests left 127.0.0.1: {outside}"


def _shot(page, name: str) -> None:
    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / f"{name}.png"), full_page=True)


_QR_PIXELS = """(svg) => new Promise((resolve, reject) => {
  const img = new Image();
  img.onload = () => {
    const size = 600, canvas = document.createElement("canvas");
    canvas.width = canvas.height = size;
    const ctx = canvas.getContext("2d");
    ctx.fillStyle = "#fff"; ctx.fillRect(0, 0, size, size); ctx.drawImage(img, 0, 0, size, size);
    const rgba = ctx.getImageData(0, 0, size, size).data, grey = [];
    for (let i = 0; i < rgba.length; i += 4) grey.push(rgba[i]);
    resolve(grey);
  };
  img.onerror = reject;
  img.src = "data:image/svg+xml;base64," + btoa(new XMLSerializer().serializeToString(svg));
})"""


def _read_qr(page) -> list[str]:
    """Decode every QR code on the page with zxing-cpp (independent of the encoder)."""
    np = pytest.importorskip("numpy")
    zxingcpp = pytest.importorskip("zxingcpp")
    texts = []
    for svg in page.locator(".qr svg").element_handles():
        grey = np.array(page.evaluate(_QR_PIXELS, svg), dtype=np.uint8).reshape(600, 600)
        texts += [code.text for code in zxingcpp.read_barcodes(grey)]
    return texts


@pytest.mark.browser
def test_a_phone_pairs_by_the_qr_code_and_gets_its_service_worker(server, browser):
    base, ca_file, _log = server
    with _device(browser) as (laptop, _outside, _responses):
        laptop.goto(base + "/pair")
        _shot(laptop, "lan-01-laptop-pairing-page")
        shown = laptop.locator(".pair-url").all_inner_texts()
        decoded = _read_qr(laptop)
        assert decoded == shown and len(decoded) == 1, (decoded, shown)
        pair_url = decoded[0]
        assert re.fullmatch(re.escape(base) + r"/pair/[A-Za-z0-9_-]{20,}", pair_url)

    with _device(browser) as (phone, _outside, responses):
        phone.goto(pair_url)
        _shot(phone, "lan-02-phone-confirm")
        phone.locator("#pair-button").click()
        phone.wait_for_url(base + "/pair/done")
        assert phone.locator("#paired").is_visible()
        _shot(phone, "lan-03-phone-paired")
        set_cookie = next(r for r in responses if r.request.method == "POST").all_headers()
        attributes = [a.strip().lower() for a in set_cookie["set-cookie"].split(";")]
        assert attributes[0].startswith(COOKIE_NAME.lower() + "=")
        assert "secure" in attributes  # RFC 6265 §4.1.2.5
        assert "httponly" in attributes  # RFC 6265 §4.1.2.6
        assert "samesite=strict" in attributes  # RFC 6265bis §4.1.2.7
        assert "path=/" in attributes and not any(a.startswith("domain=") for a in attributes)
        kept = {c["name"]: c for c in phone.context.cookies()}[COOKIE_NAME]
        assert kept["httpOnly"] and kept["secure"] and kept["sameSite"] == "Strict"
        assert COOKIE_NAME not in phone.evaluate("document.cookie")  # HttpOnly: hidden from JS

        # A second use of the same code fails: one-time.
        again = phone.evaluate("async (url) => (await fetch(url, {method: 'POST'})).status",
                               pair_url)
        assert again == 403

        phone.goto(base + "/day")
        assert phone.evaluate("window.isSecureContext") is True
        # W3C Service Workers §register: only a secure context may register a worker.
        scope = phone.evaluate("""async () => {
            const reg = await navigator.serviceWorker.register("/sw.js", {scope: "/"});
            await navigator.serviceWorker.ready;
            return reg.scope;
        }""")
        assert scope == base + "/"
        _shot(phone, "lan-04-phone-day")

        # Another origin of the same site, whose page the phone opens: its write is refused
        # although the browser sends the cookie along (same site, RFC 6265bis §5.2).
        attacker = base.rsplit(":", 1)[0] + ":1/"
        page_html = (f'<form id="f" method="post" action="{base}/api/clients" '
                     'enctype="text/plain"><input name=\'{"name":"x","location":"47,0.7","a\' '
                     'value=\'"}\'></form>')
        phone.context.route(attacker, lambda route: route.fulfill(
            status=200, content_type="text/html", body=page_html))
        phone.goto(attacker)
        with phone.expect_response(base + "/api/clients") as caught:
            phone.evaluate("document.getElementById('f').submit()")
        forged = caught.value
        assert forged.status == 403, forged.status
        assert COOKIE_NAME in forged.request.all_headers().get("cookie", "")
        phone.wait_for_url(base + "/api/clients")
        assert "forbidden" in phone.content()
        phone.goto(base + "/clients")
        names = phone.evaluate("async () => (await (await fetch('/api/clients')).json())"
                               ".map((c) => c.name)")
        assert names and "x" not in names


@pytest.mark.browser
def test_an_unpaired_phone_gets_a_short_page_that_says_how_to_pair(server, browser):
    base, _ca_file, _log = server
    with _device(browser) as (phone, _outside, responses):
        answer = phone.goto(base + "/day")
        assert answer.status == 401
        assert "not paired" in phone.locator("#refusal").inner_text()
        assert phone.locator(".tabbar").count() == 0
        _shot(phone, "lan-05-phone-not-paired")
        served = [r for r in responses if r.url.startswith(base)]
        assert {r.url for r in served if r.status == 200} <= {
            base + "/static/rondo.css", base + "/static/icon.svg"}


def test_wrong_pairing_codes_are_rate_limited(server):
    # Last in this module: the browser test above spent one wrong attempt of this address.
    base, ca_file, _log = server
    statuses = [_fetch(base, f"/pair/wrong-code-{i}", ca_file).status for i in range(7)]
    first = statuses.index(429)  # RFC 6585 §4 Too Many Requests
    assert 4 <= first <= 5 and set(statuses[:first]) == {403}, statuses
    assert set(statuses[first:]) == {429}, statuses
    limited = _fetch(base, "/pair/wrong-code-again", ca_file)
    assert int(limited.headers["Retry-After"]) >= 1  # RFC 9110 §10.2.3
    # A good code is refused too while the limit holds.
    page = _fetch(base, "/pair", ca_file).body.decode()
    url = re.search(r'class="pair-url">([^<]+)<', page).group(1)
    answer = _fetch(base, urllib.parse.urlsplit(url).path, ca_file, method="POST",
                    headers={"Origin": base})
    assert answer.status == 429
