"""Leaflet and jQuery served from their pip packages, so map pages never need the internet.

Mount with ``app.register_blueprint(vendor_bp)``: files appear under ``/vendor/leaflet/`` and
``/vendor/jquery/``. A request whose ``v`` query equals the package version may be cached for a
year (the URL changes when the package does); any other request is cached for a day.
"""

from __future__ import annotations

import xstatic.pkg.jquery as xstatic_jquery
import xstatic.pkg.leaflet as xstatic_leaflet
from flask import Blueprint, request, send_from_directory

__all__ = [
    "vendor_bp",
    "LEAFLET_DIR",
    "JQUERY_DIR",
    "LEAFLET_VERSION",
    "JQUERY_VERSION",
    "vendor_asset_urls",
]

LEAFLET_DIR = xstatic_leaflet.BASE_DIR
JQUERY_DIR = xstatic_jquery.BASE_DIR
LEAFLET_VERSION = xstatic_leaflet.VERSION
JQUERY_VERSION = xstatic_jquery.VERSION

VERSIONED_MAX_AGE_S = 365 * 24 * 3600  # one year: common practice for versioned assets
UNVERSIONED_MAX_AGE_S = 24 * 3600  # one day, then revalidated by ETag (RFC 9110 §13.1.2)

# Files a map page loads: the scripts and sheet, and the images leaflet.css points at.
_LEAFLET_FILES = (
    "leaflet.js",
    "leaflet.css",
    "images/layers.png",
    "images/layers-2x.png",
    "images/marker-icon.png",
    "images/marker-icon-2x.png",
    "images/marker-shadow.png",
)
_JQUERY_FILES = ("jquery.min.js",)

vendor_bp = Blueprint("vendor", __name__, url_prefix="/vendor")


def vendor_asset_urls(asset_base: str = "/vendor") -> list[str]:
    """Every vendor URL a map page may load, for a service worker to pre-cache."""
    base = asset_base.rstrip("/")
    return [f"{base}/leaflet/{name}?v={LEAFLET_VERSION}" for name in _LEAFLET_FILES] + [
        f"{base}/jquery/{name}?v={JQUERY_VERSION}" for name in _JQUERY_FILES
    ]


def _send(directory: str, path: str, version: str):
    """One packaged file; ``send_from_directory`` answers 404 for anything outside it."""
    versioned = request.args.get("v") == version
    max_age_s = VERSIONED_MAX_AGE_S if versioned else UNVERSIONED_MAX_AGE_S
    response = send_from_directory(directory, path, max_age=max_age_s)
    response.cache_control.public = True
    if versioned:
        response.cache_control.immutable = True
    return response


@vendor_bp.get("/leaflet/<path:path>")
def leaflet_file(path: str):
    """A file of the xstatic-leaflet package."""
    return _send(LEAFLET_DIR, path, LEAFLET_VERSION)


@vendor_bp.get("/jquery/<path:path>")
def jquery_file(path: str):
    """A file of the xstatic-jquery package."""
    return _send(JQUERY_DIR, path, JQUERY_VERSION)
