"""The installable app: the service worker at /sw.js, so its scope may be the whole app.

The worker's source is static/sw.js; this module fills in its configuration: a version that
changes whenever a file of the app shell changes, the shell's URLs and the tile count cap
(``PWA_TILE_CACHE_MAX_COUNT``, default 400). The manifest stays a static file
(/static/manifest.webmanifest), which the LAN gate lets any device fetch, as browsers fetch a
manifest without cookies.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

from flask import Blueprint, Response, current_app, jsonify, url_for

from . import STATIC_DIR
from .pages import SCREENS

__all__ = ["pwa_bp", "shell_urls", "shell_version", "worker_source", "TILE_CACHE_MAX_COUNT",
           "CONFIG_PLACEHOLDER"]

TILE_CACHE_MAX_COUNT = 400  # about 400 x 20 kB = 8 MB of tiles on the phone (common practice)
CONFIG_PLACEHOLDER = '{"filled": "by webapp/pwa.py"}'
_SHELL_SUFFIXES = (".css", ".js", ".png", ".svg", ".webmanifest")
_TEMPLATES = Path(__file__).resolve().parent / "templates"

pwa_bp = Blueprint("pwa", __name__)


def _shell_files() -> list[str]:
    """Static files the page may load, relative to static/ (the worker itself excluded)."""
    return sorted(p.relative_to(STATIC_DIR).as_posix() for p in STATIC_DIR.rglob("*")
                  if p.is_file() and p.suffix in _SHELL_SUFFIXES and p.name != "sw.js")


def shell_urls() -> tuple[list[str], list[str]]:
    """(screen URLs, every shell URL) the worker fetches at install."""
    screens = [url_for(endpoint) for endpoint, _label in SCREENS]
    files = [url_for("static", filename=name) for name in _shell_files()]
    vendor = []
    if "vendor" in current_app.blueprints:  # the map assets, once the map pages are mounted
        from .vendor import vendor_asset_urls

        vendor = vendor_asset_urls()
    return screens, [*screens, *files, *vendor]


def shell_version(paths, extra: str = "") -> str:
    """12 hex digits of SHA-256 over the files' names and bytes: new files, new version."""
    digest = hashlib.sha256(extra.encode())
    for path in sorted(paths, key=str):
        digest.update(str(path).encode() + b"\0" + path.read_bytes() + b"\0")
    return digest.hexdigest()[:12]


def _tile_cap() -> int | None:
    cap = current_app.config.get("PWA_TILE_CACHE_MAX_COUNT", TILE_CACHE_MAX_COUNT)
    if isinstance(cap, bool) or not isinstance(cap, int) or not 1 <= cap <= 100_000:
        return None
    return cap


def worker_source(tile_cap: int) -> str:
    """static/sw.js with its configuration written in."""
    source = (STATIC_DIR / "sw.js").read_text("utf-8")
    screens, shell = shell_urls()
    templates = sorted(_TEMPLATES.glob("*.html"))
    files = [STATIC_DIR / "sw.js", *(STATIC_DIR / name for name in _shell_files()), *templates]
    config = {"screens": screens, "shell": shell, "tileCap": tile_cap}
    config["version"] = shell_version(files, extra=json.dumps(config, sort_keys=True))
    return source.replace(CONFIG_PLACEHOLDER, json.dumps(config, separators=(",", ":")), 1)


@pwa_bp.get("/sw.js")
def service_worker():
    """The worker at the root, so its scope may be the whole app."""
    cap = _tile_cap()
    if cap is None:
        response = jsonify({"error": "pwa_misconfigured", "message":
                            "PWA_TILE_CACHE_MAX_COUNT must be a whole number 1..100000"})
        response.status_code = 503
        return response
    response = Response(worker_source(cap), mimetype="text/javascript")
    # Updates are checked on each visit; an old worker must never be served from a cache.
    response.headers["Cache-Control"] = "no-cache"
    response.headers["Service-Worker-Allowed"] = "/"
    response.headers["X-Content-Type-Options"] = "nosniff"
    return response

