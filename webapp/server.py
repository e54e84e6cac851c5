"""``rondo serve``: the laptop server for the phone page."""

from __future__ import annotations

import ipaddress
import os
import sys

from werkzeug.serving import make_server

from . import create_app
from . import demo as demo_data
from .db import connect

__all__ = ["serve"]


def serve(*, host: str = "127.0.0.1", port: int = 8765, data_dir: str = "instance",
          demo: bool = False) -> None:
    """Serve until Ctrl+C; ``data_dir`` holds the database and all the app writes."""
    data_dir = os.path.abspath(data_dir)
    os.makedirs(data_dir, exist_ok=True)
    app = create_app(instance_path=data_dir)
    if demo:
        _load_demo(app.config["DATABASE"])
    try:
        server = make_server(host, port, app, threaded=True)
    except OSError as exc:
        raise SystemExit(f"rondo: cannot listen on {host}:{port}: {exc.strerror or exc}") from None
    if not _loopback(host):
        print(f"rondo: listening on {host}, reachable from other devices on this network; "
              "there is no login", file=sys.stderr)
    shown = f"[{host}]" if ":" in host else host
    print(f"Rondo is at http://{shown}:{server.server_port}/ (data in {data_dir}); "
          "Ctrl+C stops it", flush=True)
    try:
        server.serve_forever()
    except KeyboardInterrupt:
        pass
    finally:
        server.server_close()
        app.extensions["rondo_jobs"].join(timeout_s=1.0)


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
