"""``rondo serve``: the laptop server for the phone page."""

from __future__ import annotations

import ipaddress
import os
import sys
import urllib.parse

from werkzeug.serving import make_server

from . import create_app
from . import demo as demo_data
from .db import connect

__all__ = ["serve"]


def serve(*, host: str = "127.0.0.1", port: int = 8765, data_dir: str = "instance",
          demo: bool = False, tiles: str | None = None, tile_contact: str | None = None,
          lan: bool = False) -> None:
    """Serve until Ctrl+C; ``data_dir`` holds the database and all the app writes.

    ``lan``: HTTPS with this laptop's own CA, and only paired devices get in (webapp/pairing.py).

    ``tiles`` / ``tile_contact`` override TILE_UPSTREAM / TILE_CONTACT of the instance config.
    """
    if tiles is not None:
        _check_tiles(tiles)
    data_dir = os.path.abspath(data_dir)
    os.makedirs(data_dir, exist_ok=True)
    app = create_app(instance_path=data_dir)
    if tiles is not None:
        app.config["TILE_UPSTREAM"] = tiles
    if tile_contact is not None:
        app.config["TILE_CONTACT"] = tile_contact
    if app.config.get("TILE_UPSTREAM"):
        print("rondo: street-map tiles are fetched through this laptop from "
              f"{urllib.parse.urlsplit(app.config['TILE_UPSTREAM']).hostname}, only those viewed, "
              "and kept in a local cache", file=sys.stderr)
    if demo:
        _load_demo(app.config["DATABASE"])
    ssl_context = None
    if lan:
        from .pairing import prepare_server

        ssl_context = prepare_server(app, data_dir, host)
    try:
        server = make_server(host, port, app, threaded=True, ssl_context=ssl_context)
    except OSError as exc:
        raise SystemExit(f"rondo: cannot listen on {host}:{port}: {exc.strerror or exc}") from None
    if not _loopback(host) and not lan:
        print(f"rondo: listening on {host}, reachable from other devices on this network; "
              "there is no login", file=sys.stderr)
    shown = f"[{host}]" if ":" in host else host
    print(f"Rondo is at {'https' if lan else 'http'}://{shown}:{server.server_port}/ "
          f"(data in {data_dir}); Ctrl+C stops it", flush=True)
    if lan:
        laptop = "127.0.0.1" if host in ("0.0.0.0", "::") else shown
        print(f"rondo: to pair a phone, open https://{laptop}:{server.server_port}/pair in a "
              "browser on this laptop; only paired devices get in", flush=True)
    try:
        server.serve_forever()
    except KeyboardInterrupt:
        pass
    finally:
        server.server_close()
        app.extensions["rondo_jobs"].join(timeout_s=1.0)


def _check_tiles(template: str) -> None:
    """A tile URL template must be http(s) and hold {z}, {x} and {y}."""
    missing = [part for part in ("{z}", "{x}", "{y}") if part not in template]
    if not template.startswith(("http://", "https://")) or missing:
        raise SystemExit(f"rondo: --tiles {template!r} is not an http(s) tile URL template with "
                         "{z}, {x} and {y}, such as "
                         "https://tile.openstreetmap.org/{z}/{x}/{y}.png")


def _load_demo(database: str) -> None:
    conn = connect(database)
    try:
        if demo_data.fill_if_empty(conn):
            print("rondo: the empty database now holds the demo scenario", flush=True)
        else:
            print("rondo: the database already holds data; the demo was not loaded", flush=True)
    finally:
        conn.close()


def _loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False
