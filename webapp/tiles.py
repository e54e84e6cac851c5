"""A caching proxy for the map tiles the rep actually looks at: no prefetch, HTTP expiry kept.

Mount with ``app.register_blueprint(tiles_bp)``; tiles appear at ``/tiles/<z>/<x>/<y>.png``
(the XYZ "slippy map" scheme). Config keys:

- ``TILE_UPSTREAM``: URL template with {z}, {x}, {y}; None (default) turns tiles off. For real
  use: ``OSM_TILE_TEMPLATE`` (https://tile.openstreetmap.org/{z}/{x}/{y}.png).
- ``TILE_CACHE_DIR``: folder of the cache (default ``<instance>/tiles``).
- ``TILE_CACHE_MAX_BYTES``: cap on cached tile bytes, least recently served evicted first.
- ``TILE_CONTACT``: an e-mail or URL put in the User-Agent; ``TILE_USER_AGENT`` replaces it all.
- ``TILE_TIMEOUT_S``: how long to wait for the upstream server.
- ``TILE_ATTRIBUTION``: the credit line the map shows for these tiles.

A stored tile is fresh for its HTTP lifetime (RFC 9111 §4.2.1), never less than 7 days; a stale
one is revalidated with If-None-Match / If-Modified-Since, and served marked stale when the
upstream server cannot be reached.
"""

from __future__ import annotations

import email.utils
import math
import os
import sqlite3
import threading
import time
import urllib.error
import urllib.request
from contextlib import closing
from dataclasses import dataclass
from pathlib import Path

from flask import Blueprint, current_app, jsonify, make_response

__all__ = [
    "tiles_bp",
    "TileCache",
    "CachedTile",
    "freshness_lifetime_s",
    "tile_map_settings",
    "user_agent",
    "OSM_TILE_TEMPLATE",
    "OSM_ATTRIBUTION",
    "MAX_ZOOM",
    "MIN_FRESH_S",
    "DEFAULT_CACHE_MAX_BYTES",
    "DEFAULT_USER_AGENT",
    "CACHE_STATUS_HEADER",
]

# OSMF Tile Usage Policy, https://operations.osmfoundation.org/policies/tiles/ ("Usage").
OSM_TILE_TEMPLATE = "https://tile.openstreetmap.org/{z}/{x}/{y}.png"
# OSMF Attribution Guidelines: credit "© OpenStreetMap contributors" on the map.
OSM_ATTRIBUTION = "© OpenStreetMap contributors"
MAX_ZOOM = 19  # highest zoom of tile.openstreetmap.org (from memory); x, y in 0..2**z - 1 (XYZ)
MIN_FRESH_S = 7 * 24 * 3600  # project rule: keep a tile at least 7 days, whatever it says
DEFAULT_CACHE_MAX_BYTES = 200 * 1024 * 1024
DEFAULT_TIMEOUT_S = 5.0
MAX_TILE_BYTES = 1024 * 1024  # a 256 px PNG tile is far smaller (common practice, no source)
UPSTREAM_CONNECTIONS = 2  # at most two fetches at once (older OSM policy text, from memory)
STALE_MAX_AGE_S = 60  # let the phone ask again soon for a tile served stale
DEFAULT_USER_AGENT = "Rondo/0.1 (+local visit planner; contact: set TILE_CONTACT)"
CACHE_STATUS_HEADER = "X-Tile-Cache"  # hit | miss | revalidated | stale

_SCHEMA = """
CREATE TABLE IF NOT EXISTS tiles (
    source TEXT NOT NULL,
    z INTEGER NOT NULL,
    x INTEGER NOT NULL,
    y INTEGER NOT NULL,
    data BLOB NOT NULL,
    content_type TEXT NOT NULL,
    size_bytes INTEGER NOT NULL,
    fetched_at_s REAL NOT NULL,
    expires_at_s REAL NOT NULL,
    accessed_at_s REAL NOT NULL,
    etag TEXT,
    last_modified TEXT,
    PRIMARY KEY (source, z, x, y)
);
CREATE INDEX IF NOT EXISTS tiles_by_access ON tiles (accessed_at_s);
"""

tiles_bp = Blueprint("tiles", __name__, url_prefix="/tiles")
_upstream_slots = threading.BoundedSemaphore(UPSTREAM_CONNECTIONS)
_schema_lock = threading.Lock()
_schema_ready: set[str] = set()


def _now_s() -> float:
    """Wall-clock seconds; the one clock of this module (tests move it)."""
    return time.time()


@dataclass(frozen=True)
class CachedTile:
    """One stored tile and what its HTTP headers said about it."""

    data: bytes
    content_type: str
    fetched_at_s: float
    expires_at_s: float
    etag: str | None
    last_modified: str | None


class TileCache:
    """Tiles in one SQLite file under ``directory``, at most ``max_bytes`` of tile data."""

    def __init__(self, directory: str | os.PathLike, max_bytes: int):
        self.path = Path(directory) / "tiles.sqlite3"
        self.max_bytes = max_bytes
        with _schema_lock:
            if str(self.path) not in _schema_ready or not self.path.exists():
                self.path.parent.mkdir(parents=True, exist_ok=True)
                with closing(self._connect()) as conn:
                    conn.execute("PRAGMA auto_vacuum = INCREMENTAL")  # before the first table
                    conn.executescript(_SCHEMA)
                _schema_ready.add(str(self.path))

    def _connect(self) -> sqlite3.Connection:
        conn = sqlite3.connect(self.path, timeout=10, isolation_level=None)
        conn.execute("PRAGMA journal_mode = WAL")
        return conn

    def get(self, source: str, z: int, x: int, y: int) -> CachedTile | None:
        """The stored tile, fresh or not, or None."""
        with closing(self._connect()) as conn:
            row = conn.execute(
                "SELECT data, content_type, fetched_at_s, expires_at_s, etag, last_modified "
                "FROM tiles WHERE source = ? AND z = ? AND x = ? AND y = ?",
                (source, z, x, y)).fetchone()
        return None if row is None else CachedTile(bytes(row[0]), *row[1:])

    def touch(self, source: str, z: int, x: int, y: int, *, now_s: float) -> None:
        """Record that the tile was served now (the eviction order)."""
        with closing(self._connect()) as conn:
            conn.execute("UPDATE tiles SET accessed_at_s = ? WHERE source = ? AND z = ? AND "
                         "x = ? AND y = ?", (now_s, source, z, x, y))

    def refresh(self, source: str, z: int, x: int, y: int, *, expires_at_s: float,
                etag: str | None, last_modified: str | None, now_s: float) -> None:
        """A revalidated tile: new expiry and validators, same bytes (RFC 9111 §4.3.4)."""
        with closing(self._connect()) as conn:
            conn.execute(
                "UPDATE tiles SET expires_at_s = ?, fetched_at_s = ?, accessed_at_s = ?, "
                "etag = COALESCE(?, etag), last_modified = COALESCE(?, last_modified) "
                "WHERE source = ? AND z = ? AND x = ? AND y = ?",
                (expires_at_s, now_s, now_s, etag, last_modified, source, z, x, y))

    def put(self, source: str, z: int, x: int, y: int, tile: CachedTile, *,
            now_s: float) -> bool:
        """Store ``tile``, evicting least recently served tiles to stay under the cap.

        Returns False (and stores nothing) for a tile larger than the whole cap.
        """
        size = len(tile.data)
        if size > self.max_bytes:
            return False
        with closing(self._connect()) as conn:
            conn.execute("BEGIN IMMEDIATE")
            try:
                conn.execute("DELETE FROM tiles WHERE source = ? AND z = ? AND x = ? AND y = ?",
                             (source, z, x, y))
                total = conn.execute("SELECT COALESCE(SUM(size_bytes), 0) FROM tiles").fetchone()
                excess = total[0] + size - self.max_bytes
                if excess > 0:
                    victims = []
                    for rowid, victim_size in conn.execute(
                            "SELECT rowid, size_bytes FROM tiles ORDER BY accessed_at_s, rowid"):
                        victims.append((rowid,))
                        excess -= victim_size
                        if excess <= 0:
                            break
                    conn.executemany("DELETE FROM tiles WHERE rowid = ?", victims)
                conn.execute(
                    "INSERT INTO tiles (source, z, x, y, data, content_type, size_bytes, "
                    "fetched_at_s, expires_at_s, accessed_at_s, etag, last_modified) "
                    "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                    (source, z, x, y, tile.data, tile.content_type, size, tile.fetched_at_s,
                     tile.expires_at_s, now_s, tile.etag, tile.last_modified))
                conn.execute("COMMIT")
            except BaseException:
                conn.execute("ROLLBACK")
                raise
            conn.execute("PRAGMA incremental_vacuum")
        return True

    def total_bytes(self) -> int:
        """Bytes of tile data stored."""
        with closing(self._connect()) as conn:
            return conn.execute("SELECT COALESCE(SUM(size_bytes), 0) FROM tiles").fetchone()[0]

    def count(self) -> int:
        """Number of tiles stored."""
        with closing(self._connect()) as conn:
            return conn.execute("SELECT COUNT(*) FROM tiles").fetchone()[0]


def freshness_lifetime_s(headers, *, now_s: float) -> float | None:
    """Seconds a response stays fresh per RFC 9111 §4.2.1 (max-age, else Expires - Date), less
    its Age (§4.2.3); 0 without either. None when ``no-store`` forbids storing (§5.2.2.5).
    """
    directives = _cache_control(headers.get_all("Cache-Control") or [])
    if "no-store" in directives:
        return None
    lifetime = _seconds(directives.get("max-age"))
    if lifetime is None and headers.get("Expires") is not None:
        expires = _http_date(headers.get("Expires"))
        date = _http_date(headers.get("Date")) or now_s
        # An Expires that is not a valid date means "already expired" (RFC 9111 §5.3).
        lifetime = 0.0 if expires is None else max(0.0, expires - date)
    if lifetime is None:
        lifetime = 0.0
    age = _seconds(headers.get("Age")) or 0.0
    return max(0.0, lifetime - age)


def _cache_control(values: list[str]) -> dict[str, str | None]:
    """Cache-Control directives, names lower-cased (RFC 9111 §5.2); first one of a name wins."""
    directives: dict[str, str | None] = {}
    for value in values:
        for part in value.split(","):
            name, _, argument = part.strip().partition("=")
            if name:
                directives.setdefault(name.strip().lower(), argument.strip().strip('"') or None)
    return directives


def _seconds(value: str | None) -> float | None:
    """A delta-seconds value (RFC 9111 §1.2.2): digits only, else None."""
    if value is None or not value.strip().isdigit():
        return None
    return float(value.strip())


def _http_date(value: str | None) -> float | None:
    try:
        parsed = email.utils.parsedate_to_datetime(value)
    except (TypeError, ValueError, IndexError):
        return None
    return None if parsed.tzinfo is None else parsed.timestamp()


def user_agent(config) -> str:
    """The User-Agent sent upstream: TILE_USER_AGENT, else Rondo's name with TILE_CONTACT."""
    if config.get("TILE_USER_AGENT"):
        return _header_text(config["TILE_USER_AGENT"])
    contact = config.get("TILE_CONTACT")
    if not contact:
        return DEFAULT_USER_AGENT
    return f"Rondo/0.1 (+local visit planner; contact: {_header_text(contact)})"


def _header_text(value: object) -> str:
    """``value`` as one header line: control characters become spaces (RFC 9110 §5.5)."""
    return "".join(" " if ord(c) < 32 or ord(c) == 127 else c for c in str(value)).strip()


def tile_map_settings(config) -> tuple[str | None, str]:
    """(tile_url_template, attribution) for maps.day_map_html: this proxy, or None when off."""
    attribution = config.get("TILE_ATTRIBUTION") or OSM_ATTRIBUTION
    if not config.get("TILE_UPSTREAM"):
        return None, attribution
    return "/tiles/{z}/{x}/{y}.png", attribution


class _Unreachable(Exception):
    """The upstream server did not answer (refused, DNS, timeout)."""

    def __init__(self, message: str, *, timed_out: bool):
        super().__init__(message)
        self.timed_out = timed_out


class _BadAnswer(Exception):
    """The upstream server answered, but not with a tile."""

    def __init__(self, message: str, *, status: int):
        super().__init__(message)
        self.status = status


@dataclass(frozen=True)
class _Fetched:
    status: int
    headers: object
    data: bytes


def _error(status: int, error: str, message: str, **extra):
    response = jsonify({"error": error, "message": message, **extra})
    response.status_code = status
    response.headers["Cache-Control"] = "no-store"
    return response


def _bad_tile(field: str, value: int, message: str):
    return _error(400, "invalid_tile", message,
                  fields=[{"field": field, "message": message, "value": value}])


def _check_tile(z: int, x: int, y: int):
    if not 0 <= z <= MAX_ZOOM:
        return _bad_tile("z", z, f"zoom {z} is out of range; expected 0..{MAX_ZOOM}")
    limit = 2**z - 1
    for name, value in (("x", x), ("y", y)):
        if not 0 <= value <= limit:
            return _bad_tile(name, value, f"tile {name} {value} is out of range at zoom {z}; "
                             f"expected 0..{limit}")
    return None


def _settings():
    """(upstream, cache, user agent, timeout) from app.config, or an error response."""
    config = current_app.config
    upstream = config.get("TILE_UPSTREAM")
    if not upstream:
        return None, _error(404, "tiles_off", "map tiles are off: TILE_UPSTREAM is not set")
    if not isinstance(upstream, str) or not upstream.startswith(("http://", "https://")) or \
            not all(part in upstream for part in ("{z}", "{x}", "{y}")):
        return None, _error(503, "tiles_misconfigured", "TILE_UPSTREAM is not an http(s) URL "
                            "template with {z}, {x} and {y}")
    max_bytes = config.get("TILE_CACHE_MAX_BYTES", DEFAULT_CACHE_MAX_BYTES)
    timeout_s = config.get("TILE_TIMEOUT_S", DEFAULT_TIMEOUT_S)
    if isinstance(max_bytes, bool) or not isinstance(max_bytes, int) or max_bytes < 0:
        return None, _error(503, "tiles_misconfigured", "TILE_CACHE_MAX_BYTES must be a whole "
                            "number of bytes >= 0")
    if isinstance(timeout_s, bool) or not isinstance(timeout_s, int | float) or \
            not math.isfinite(timeout_s) or timeout_s <= 0:
        return None, _error(503, "tiles_misconfigured", "TILE_TIMEOUT_S must be seconds > 0")
    directory = config.get("TILE_CACHE_DIR") or os.path.join(current_app.instance_path, "tiles")
    cache = TileCache(directory, max_bytes)
    return (upstream, cache, user_agent(config), float(timeout_s)), None


def _fetch(url: str, *, agent: str, timeout_s: float, cached: CachedTile | None) -> _Fetched:
    """GET one tile, conditionally when a stored copy has validators (RFC 9110 §13.1)."""
    request = urllib.request.Request(url, headers={"User-Agent": agent,
                                                   "Accept": "image/png,image/*;q=0.8"})
    if cached is not None and cached.etag:
        request.add_header("If-None-Match", cached.etag)
    if cached is not None and cached.last_modified:
        request.add_header("If-Modified-Since", cached.last_modified)
    try:
        with _upstream_slots, urllib.request.urlopen(request, timeout=timeout_s) as answer:
            data = answer.read(MAX_TILE_BYTES + 1)
            return _Fetched(answer.status, answer.headers, data)
    except urllib.error.HTTPError as err:
        with closing(err):
            if err.code == 304:
                return _Fetched(304, err.headers, b"")
            raise _BadAnswer(f"the tile server answered HTTP {err.code}", status=err.code) \
                from None
    except (TimeoutError, urllib.error.URLError, OSError) as err:
        reason = getattr(err, "reason", err)
        timed_out = isinstance(reason, TimeoutError) or "timed out" in str(reason)
        raise _Unreachable(f"the tile server could not be reached ({reason})",
                           timed_out=timed_out) from None


def _tile_response(tile: CachedTile, status: str, *, now_s: float):
    response = make_response(tile.data)
    response.headers["Content-Type"] = tile.content_type
    response.headers[CACHE_STATUS_HEADER] = status
    response.headers["Age"] = str(max(0, int(now_s - tile.fetched_at_s)))  # RFC 9111 §5.1
    fresh_for_s = max(0, int(tile.expires_at_s - now_s))
    response.headers["Cache-Control"] = (
        f"max-age={STALE_MAX_AGE_S}" if status == "stale" else f"max-age={fresh_for_s}")
    return response


@tiles_bp.get("/<int(signed=True):z>/<int(signed=True):x>/<int(signed=True):y>.png")
def tile(z: int, x: int, y: int):
    """One XYZ tile: from the cache while fresh, else from upstream, else stale if stored."""
    problem = _check_tile(z, x, y)
    if problem is not None:
        return problem
    settings, problem = _settings()
    if problem is not None:
        return problem
    upstream, cache, agent, timeout_s = settings
    now_s = _now_s()
    cached = cache.get(upstream, z, x, y)
    if cached is not None and cached.expires_at_s > now_s:
        cache.touch(upstream, z, x, y, now_s=now_s)
        return _tile_response(cached, "hit", now_s=now_s)
    url = upstream.replace("{z}", str(z)).replace("{x}", str(x)).replace("{y}", str(y))
    try:
        fetched = _fetch(url, agent=agent, timeout_s=timeout_s, cached=cached)
        return _store(cache, upstream, (z, x, y), fetched, cached, now_s=now_s)
    except (_Unreachable, _BadAnswer) as err:
        if cached is not None:
            cache.touch(upstream, z, x, y, now_s=now_s)
            return _tile_response(cached, "stale", now_s=now_s)
        if isinstance(err, _Unreachable):
            return _error(504 if err.timed_out else 503, "tiles_unreachable",
                          f"{err}; no copy of tile {z}/{x}/{y} is stored yet")
        status = 404 if err.status == 404 else 502
        return _error(status, "tiles_bad_answer", f"{err} for tile {z}/{x}/{y}")


def _store(cache: TileCache, upstream: str, key: tuple[int, int, int], fetched: _Fetched,
           cached: CachedTile | None, *, now_s: float):
    lifetime_s = freshness_lifetime_s(fetched.headers, now_s=now_s)
    expires_at_s = now_s + max(lifetime_s or 0.0, MIN_FRESH_S)
    etag = fetched.headers.get("ETag")
    last_modified = fetched.headers.get("Last-Modified")
    if fetched.status == 304 and cached is not None:
        cache.refresh(upstream, *key, expires_at_s=expires_at_s, etag=etag,
                      last_modified=last_modified, now_s=now_s)
        tile = CachedTile(cached.data, cached.content_type, now_s, expires_at_s,
                          etag or cached.etag, last_modified or cached.last_modified)
        return _tile_response(tile, "revalidated", now_s=now_s)
    content_type = (fetched.headers.get("Content-Type") or "").split(";")[0].strip().lower()
    if fetched.status != 200 or not content_type.startswith("image/"):
        raise _BadAnswer(f"the tile server answered HTTP {fetched.status} with "
                         f"{content_type or 'no content type'}, not an image", status=502)
    if not fetched.data or len(fetched.data) > MAX_TILE_BYTES:
        raise _BadAnswer(f"the tile server sent {len(fetched.data)} bytes; expected 1.."
                         f"{MAX_TILE_BYTES}", status=502)
    tile = CachedTile(fetched.data, content_type, now_s, expires_at_s, etag, last_modified)
    if lifetime_s is None:  # no-store: pass it on, keep nothing
        response = _tile_response(tile, "miss", now_s=now_s)
        response.headers["Cache-Control"] = "no-store"
        return response
    cache.put(upstream, *key, tile, now_s=now_s)
    return _tile_response(tile, "miss", now_s=now_s)


@tiles_bp.route("/<path:rest>")
def not_a_tile(rest: str):
    """Anything else under /tiles/: say what a tile address looks like."""
    return _error(400, "invalid_tile", f"{rest!r} is not a tile address; expected "
                  "/tiles/<z>/<x>/<y>.png with whole numbers")
