"""Rondo web layer: HTTP, storage and pages around the pure solver package."""

from __future__ import annotations

import os
from pathlib import Path

from flask import Flask

__all__ = ["create_app", "STATIC_DIR"]

# The page's own JS/CSS/manifest live at the top of the repository, beside webapp/.
STATIC_DIR = Path(__file__).resolve().parent.parent / "static"


def create_app(test_config=None, *, instance_path=None):
    """Build the app: defaults, instance config or ``test_config``, db, then blueprints."""
    app = Flask(
        __name__,
        instance_relative_config=True,
        instance_path=os.path.abspath(instance_path) if instance_path else None,
        static_folder=str(STATIC_DIR),
        static_url_path="/static",
    )
    app.config.from_mapping(
        DATABASE=os.path.join(app.instance_path, "rondo.sqlite"),
        MAX_CONTENT_LENGTH=2 * 1024 * 1024,  # a CSV of a few thousand clients fits easily
        # Street-map tiles: off unless set, e.g. "https://tile.openstreetmap.org/{z}/{x}/{y}.png"
        # (credit "© OpenStreetMap contributors"; put an e-mail or URL in TILE_CONTACT so the
        # tile server sees who asks). See webapp/tiles.py for the other TILE_* keys.
        TILE_UPSTREAM=None,
        TILE_CONTACT=None,
    )
    if test_config is None:
        app.config.from_pyfile("config.py", silent=True)
    else:
        app.config.from_mapping(test_config)
    os.makedirs(app.instance_path, exist_ok=True)

    from . import api, db, errors, jobs, pages
    from .fields import IdConverter

    app.url_map.converters["id"] = IdConverter
    from . import access, pairing

    # First, so its checks run before any other hook: security headers on every answer,
    # same-origin writes, and with LAN_MODE (rondo serve --lan) a paired device's cookie.
    access.init_app(app)
    app.register_blueprint(pairing.bp)
    db.init_app(app)
    jobs.init_app(app)
    errors.init_app(app)
    app.register_blueprint(api.bp)
    app.register_blueprint(pages.bp)
    from .exports_api import exports_bp
    from .map_page import map_bp
    from .tiles import tiles_bp
    from .vendor import vendor_bp

    app.register_blueprint(exports_bp)
    app.register_blueprint(map_bp)
    app.register_blueprint(tiles_bp)
    app.register_blueprint(vendor_bp)
    from .pwa import pwa_bp

    app.register_blueprint(pwa_bp)
    from . import week_api

    week_api.init_app(app)
    return app
