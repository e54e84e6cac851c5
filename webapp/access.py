"""The server's door: security headers on every answer, same-origin writes only, and with
``rondo serve --lan`` a paired phone's cookie on every request.

The CSRF rule: a request that can change something (any method but GET, HEAD, OPTIONS) must
come from the page's own origin. A browser says where a request comes from in ``Origin``
(Fetch standard, "append a request Origin header") and ``Sec-Fetch-Site`` (W3C Fetch
Metadata); a foreign ``Origin``, ``Origin: null`` without ``Sec-Fetch-Site``, or a
``Sec-Fetch-Site`` other than ``same-origin``/``none`` is refused with 403. On the home network
a write must carry one of the two headers (every current browser does); on loopback, tools
that send neither still work as before. The cookie is ``SameSite=Strict`` as well, so another
site's page cannot even make the browser send it.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import ipaddress
import json
import math
import secrets
import threading
import time
import urllib.parse
from collections import deque

from flask import current_app, g, request
from werkzeug.datastructures import WWWAuthenticate
from werkzeug.exceptions import BadRequest, Forbidden, Unauthorized

from . import STATIC_DIR
from .db import get_db, transaction

__all__ = [
    "init_app",
    "lan_mode",
    "is_loopback",
    "PairingCodes",
    "RateLimit",
    "NotPaired",
    "CrossOrigin",
    "LaptopOnly",
    "CodeSpent",
    "new_device",
    "device_for",
    "current_device",
    "list_devices",
    "forget_device",
    "set_access_cookie",
    "public_static_files",
    "DEFAULT_CSP",
    "COOKIE_NAME",
    "COOKIE_MAX_AGE_S",
    "PAIRING_CODE_TTL_S",
    "PAIR_ATTEMPTS_PER_WINDOW",
    "PAIR_WINDOW_S",
]

# "__Host-": the browser keeps it only if Secure, Path=/ and without Domain, so no other host
# can set or shadow it (RFC 6265bis draft §4.1.3.2, cookie name prefixes; from memory).
COOKIE_NAME = "__Host-rondo-access"
# Browsers cap a cookie's lifetime at 400 days (RFC 6265bis draft §5.6.2; from memory);
# the cookie is renewed whenever the phone uses Rondo, so only an idle phone pairs again.
COOKIE_MAX_AGE_S = 400 * 24 * 3600
PAIRING_CODE_TTL_S = 10 * 60  # a code on the laptop screen is good for 10 minutes, once
PAIR_ATTEMPTS_PER_WINDOW = 5  # failed pairing attempts per client address ...
PAIR_WINDOW_S = 60  # ... per minute; after that 429 (RFC 6585 §4) until one is a minute old
SEEN_EVERY_S = 10 * 60  # write a device's last use at most this often
SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})  # RFC 9110 §9.2.1 safe methods
_SAME_ORIGIN_SITES = frozenset({"same-origin", "none"})  # "none": the user typed or tapped it
_DEFAULT_PORTS = {"http": 80, "https": 443}

# Everything the app sends, unless a route sets its own (the map pages do): only the app's
# own files, no inline script, framed only by itself (its day screen frames its map).
DEFAULT_CSP = ("default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
               "connect-src 'self'; frame-src 'self'; frame-ancestors 'self'; "
               "object-src 'none'; base-uri 'none'; form-action 'self'")
# Same-origin: the page fetches map tiles through this laptop, which names itself to the tile
# server in its own User-Agent, so no request of the page needs a Referer for another site.
REFERRER_POLICY = "same-origin"


class NotPaired(Unauthorized):
    """No valid access cookie: 401 with a challenge, as RFC 9110 §15.5.2 requires."""

    description = ("This device is not paired with the laptop. Open the pairing page on the "
                   "laptop and scan its code with this phone.")

    def __init__(self):
        super().__init__(www_authenticate=WWWAuthenticate("Pairing", {"realm": "Rondo"}))


class CrossOrigin(Forbidden):
    """A write that did not come from the page's own origin."""

    description = ("This change was sent from another site or origin and was refused; "
                   "make it from Rondo's own page.")


class LaptopOnly(Forbidden):
    """The pairing page on the laptop is not for other devices."""

    description = "The pairing page opens only on the laptop itself (127.0.0.1)."


class CodeSpent(Forbidden):
    """A pairing code that is unknown, used or out of date."""

    description = ("This pairing code is used up, out of date or wrong. Open the pairing page "
                   "on the laptop again and scan the new code.")


class PairingCodes:
    """One-time pairing codes held in memory: short-lived, single use, only digests kept."""

    def __init__(self, ttl_s: float = PAIRING_CODE_TTL_S):
        self.ttl_s = ttl_s
        self._codes: dict[str, float] = {}
        self._lock = threading.Lock()

    def issue(self, now_s: float | None = None) -> tuple[str, float]:
        """A new code and the time (epoch seconds) it stops working."""
        now_s = time.time() if now_s is None else now_s
        code = secrets.token_urlsafe(16)  # 128 random bits
        with self._lock:
            self._prune(now_s)
            self._codes[_digest(code)] = now_s + self.ttl_s
        return code, now_s + self.ttl_s

    def valid(self, code: str, now_s: float | None = None) -> bool:
        now_s = time.time() if now_s is None else now_s
        with self._lock:
            return self._codes.get(_digest(code), 0.0) > now_s

    def take(self, code: str, now_s: float | None = None) -> bool:
        """Use the code up; False if it is unknown, used or expired."""
        now_s = time.time() if now_s is None else now_s
        with self._lock:
            expires_s = self._codes.pop(_digest(code), 0.0)
            return expires_s > now_s

    def _prune(self, now_s: float) -> None:
        for key in [k for k, until in self._codes.items() if until <= now_s]:
            del self._codes[key]


class RateLimit:
    """At most ``attempts`` failures per ``window_s`` seconds per key (a sliding window); once
    there, every attempt is refused until the oldest failure leaves the window."""

    MAX_KEYS = 4096  # bound the memory a flood of addresses can take

    def __init__(self, attempts: int = PAIR_ATTEMPTS_PER_WINDOW,
                 window_s: float = PAIR_WINDOW_S):
        self.attempts, self.window_s = attempts, window_s
        self._fails: dict[str, deque] = {}
        self._lock = threading.Lock()

    def wait_s(self, key: str, now_s: float | None = None) -> int | None:
        """None if ``key`` may try now, else whole seconds until it may."""
        now_s = time.monotonic() if now_s is None else now_s
        with self._lock:
            fails = self._fails.get(key)
            if not fails:
                return None
            while fails and fails[0] <= now_s - self.window_s:
                fails.popleft()
            if len(fails) < self.attempts:
                return None
            return max(1, math.ceil(fails[0] + self.window_s - now_s))

    def failed(self, key: str, now_s: float | None = None) -> None:
        """Count one failed attempt of ``key``."""
        now_s = time.monotonic() if now_s is None else now_s
        with self._lock:
            self._fails.setdefault(key, deque()).append(now_s)
            if len(self._fails) > self.MAX_KEYS:
                self._fails.pop(next(iter(self._fails)))


def lan_mode() -> bool:
    return bool(current_app.config.get("LAN_MODE"))


def is_loopback(address: str | None) -> bool:
    try:
        return ipaddress.ip_address((address or "").split("%")[0]).is_loopback
    except ValueError:
        return False


def _digest(secret: str) -> str:
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def _now_text() -> str:
    return dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def new_device(db, *, user_agent: str, address: str) -> str:
    """Store a newly paired device; return its access token (only its digest is stored)."""
    token = secrets.token_urlsafe(32)  # 256 random bits
    with transaction(db):
        db.execute("INSERT INTO paired_devices (token_sha256, label, paired_from) "
                   "VALUES (?, ?, ?)", (_digest(token), device_label(user_agent), address[:64]))
    return token


def device_for(db, token: str | None):
    """The paired device this token belongs to, or None; notes when it was last used."""
    if not token or len(token) > 200:
        return None
    row = db.execute("SELECT * FROM paired_devices WHERE token_sha256 = ?",
                     (_digest(token),)).fetchone()
    if row is None:
        return None
    seen = dt.datetime.strptime(row["last_seen_at"], "%Y-%m-%dT%H:%M:%SZ").replace(
        tzinfo=dt.UTC)
    age_s = (dt.datetime.now(dt.UTC) - seen).total_seconds()
    if age_s > COOKIE_MAX_AGE_S:
        return None  # the browser dropped such a cookie already; so does the laptop
    if age_s > SEEN_EVERY_S:
        with transaction(db):
            db.execute("UPDATE paired_devices SET last_seen_at = ? WHERE id = ?",
                       (_now_text(), row["id"]))
        g.rondo_renew_cookie = token
    return row


def current_device():
    """The paired device making this request (cached for the request), or None."""
    if "rondo_device" not in g:
        g.rondo_device = device_for(get_db(), request.cookies.get(COOKIE_NAME))
    return g.rondo_device


def list_devices(db) -> list[dict]:
    rows = db.execute("SELECT id, label, paired_from, paired_at, last_seen_at "
                      "FROM paired_devices ORDER BY paired_at DESC, id DESC").fetchall()
    return [dict(r) for r in rows]


def forget_device(db, device_id: int) -> bool:
    with transaction(db):
        return db.execute("DELETE FROM paired_devices WHERE id = ?",
                          (device_id,)).rowcount == 1


def device_label(user_agent: str | None) -> str:
    """A short human name from the User-Agent, e.g. 'Android, Chrome' (a hint, not a proof)."""
    ua = user_agent or ""
    systems = (("iPhone", "iPhone"), ("iPad", "iPad"), ("Android", "Android"),
               ("Windows", "Windows"), ("Mac OS X", "Mac"), ("CrOS", "ChromeOS"),
               ("Linux", "Linux"))
    browsers = (("Firefox/", "Firefox"), ("FxiOS/", "Firefox"), ("EdgA/", "Edge"),
                ("Edg/", "Edge"), ("SamsungBrowser/", "Samsung Internet"),
                ("CriOS/", "Chrome"), ("Chrome/", "Chrome"), ("Safari/", "Safari"))
    system = next((name for key, name in systems if key in ua), "")
    browser = next((name for key, name in browsers if key in ua), "")
    return ", ".join(p for p in (system, browser) if p) or "a browser"


def set_access_cookie(response, token: str) -> None:
    """The access cookie: HttpOnly, Secure, SameSite=Strict (RFC 6265 §4.1.2.5-6; SameSite
    from RFC 6265bis), host-only with Path=/ as the __Host- prefix demands."""
    response.set_cookie(COOKIE_NAME, token, max_age=COOKIE_MAX_AGE_S, path="/", secure=True,
                        httponly=True, samesite="Strict")


def public_static_files() -> frozenset[str]:
    """Static files any device may fetch: the pairing page's sheet, and the manifest with its
    icons (browsers fetch a manifest without cookies: W3C Web App Manifest, "obtaining")."""
    names = {"rondo.css", "icon.svg", "manifest.webmanifest"}
    icons = STATIC_DIR / "icons"  # home-screen icons: iOS fetches its touch icon without cookies
    if icons.is_dir():
        names.update(f"icons/{p.name}" for p in icons.iterdir() if p.is_file())
    try:
        manifest = json.loads((STATIC_DIR / "manifest.webmanifest").read_text("utf-8"))
        for icon in manifest.get("icons", []):
            path = urllib.parse.urlsplit(str(icon.get("src", ""))).path
            if path.startswith("/static/"):
                names.add(path.removeprefix("/static/"))
    except (OSError, ValueError, AttributeError):
        pass
    return frozenset(names)


def _own_origin() -> str:
    return _normal_origin(f"{request.scheme}://{request.host}")


def _normal_origin(text: str) -> str:
    try:
        parts = urllib.parse.urlsplit(text.strip().lower())
        port = parts.port or _DEFAULT_PORTS.get(parts.scheme)
    except ValueError:
        return ""
    host = f"[{parts.hostname}]" if parts.hostname and ":" in parts.hostname else parts.hostname
    return f"{parts.scheme}://{host}:{port}"


def same_origin(*, strict: bool) -> bool:
    """Whether a write came from the page's own origin (the rule in this module's docstring)."""
    origin = request.headers.get("Origin")
    site = request.headers.get("Sec-Fetch-Site")
    if site is not None and site.strip().lower() not in _SAME_ORIGIN_SITES:
        return False
    if origin is not None and origin.strip() != "null":
        return _normal_origin(origin) == _own_origin()
    if origin is not None:  # "null": a sandboxed or privacy-stripped origin
        return site is not None
    return site is not None or not strict


def _has_dot_segment(path: str) -> bool:
    return any(part in ("..", ".") for part in path.replace("\\", "/").split("/"))


def _gate():
    # Paths like /static/../webapp/db.py: clients remove dot-segments (RFC 3986 §5.2.4), so
    # one that arrives still holding them is an attack; refuse it before any route sees it.
    if _has_dot_segment(request.path):
        raise BadRequest(f"the path {request.path!r} holds a '.' or '..' segment")
    lan = lan_mode()
    if request.method not in SAFE_METHODS and not same_origin(strict=lan):
        raise CrossOrigin()
    if not lan:
        return None
    endpoint = request.endpoint or ""
    if endpoint.startswith("pairing."):
        return None  # the pairing routes apply their own rules (laptop only, rate limit)
    if endpoint == "static" and (request.view_args or {}).get("filename") in _public_static():
        return None
    if current_device() is None:
        raise NotPaired()
    return None


def _public_static() -> frozenset[str]:
    names = current_app.extensions.get("rondo_public_static")
    if names is None:
        names = current_app.extensions["rondo_public_static"] = public_static_files()
    return names


def _headers(response):
    headers = response.headers
    policy = headers.get("Content-Security-Policy")
    if policy is None:
        headers["Content-Security-Policy"] = DEFAULT_CSP
    elif "frame-ancestors" not in policy:
        headers["Content-Security-Policy"] = policy.rstrip("; ") + "; frame-ancestors 'self'"
    headers.setdefault("X-Content-Type-Options", "nosniff")
    headers.setdefault("X-Frame-Options", "SAMEORIGIN")  # for browsers without frame-ancestors
    headers.setdefault("Referrer-Policy", REFERRER_POLICY)
    headers.setdefault("Cross-Origin-Opener-Policy", "same-origin")
    headers.setdefault("Cross-Origin-Resource-Policy", "same-origin")
    renew = g.pop("rondo_renew_cookie", None)
    already = any(c.startswith(COOKIE_NAME + "=") for c in headers.getlist("Set-Cookie"))
    if renew and lan_mode() and not already:
        set_access_cookie(response, renew)
    return response


def init_app(app) -> None:
    """Install the gate and the headers; LAN_MODE is read per request, so it may be set late."""
    app.config.setdefault("LAN_MODE", False)
    app.extensions["rondo_pairing_codes"] = PairingCodes()
    app.extensions["rondo_pair_limit"] = RateLimit()
    app.before_request(_gate)
    app.after_request(_headers)
