"""Pairing a phone with the laptop on the home network: the laptop's page shows a QR code with
a one-time code; the phone that opens it gets a long-lived access cookie and the laptop's CA.

Steps: the laptop opens ``/pair`` (loopback only) and shows the code; the phone scans it,
opens ``/pair/<code>`` and taps "Pair this phone" (a POST, so a link preview cannot use the
code up); the laptop stores a digest of a new access token and sets it as the cookie; the
phone lands on ``/pair/done`` to install the CA certificate.
"""

from __future__ import annotations

import os
import ssl
import threading
import time
import urllib.parse
from typing import TYPE_CHECKING

from flask import Blueprint, current_app, make_response, redirect, render_template, request
from werkzeug.exceptions import NotFound, TooManyRequests

from . import access
from .db import get_db

if TYPE_CHECKING:
    from .lan import CertificateSet

# The certificate and QR code packages load only when something of --lan runs, so plain
# loopback use starts as fast as before.

__all__ = ["bp", "prepare_server", "pairing_urls", "CA_CONTENT_TYPE", "CA_DER_NAME",
           "CA_PEM_NAME"]

bp = Blueprint("pairing", __name__, url_prefix="/pair")

# The type mobile browsers hand to their certificate installer (a de facto type, from memory;
# RFC 2585 §4.1 registers application/pkix-cert for DER certificates in general).
CA_CONTENT_TYPE = "application/x-x509-ca-cert"
CA_DER_NAME = "rondo-laptop-ca.crt"
CA_PEM_NAME = "rondo-laptop-ca.pem"
_REISSUE_LOCK = threading.Lock()
QR_DARK, QR_LIGHT = "#121212", "#ffffff"  # the page's ink on white: the best contrast to scan


def _lan_dir() -> str:
    return current_app.config.get("LAN_DIR") or f"{current_app.instance_path}/lan"


def _require_lan() -> None:
    if not access.lan_mode():
        raise NotFound("pairing is only used when the laptop runs `rondo serve --lan`")


def _require_laptop() -> None:
    # The laptop reaches itself on loopback, or on one of its own addresses when bound to one;
    # no other device on the network can have those.
    own = current_app.config.get("LAN_OWN_ADDRESSES") or ()
    if not (access.is_loopback(request.remote_addr) or request.remote_addr in own):
        raise access.LaptopOnly()


def prepare_server(app, data_dir: str, host: str) -> ssl.SSLContext:
    """Make or load the certificates for ``rondo serve --lan``, switch the gate on and return
    the TLS context for the server."""
    from . import lan

    certs = lan.prepare(os.path.join(data_dir, "lan"))
    _configure(app, certs, host)
    context = lan.ssl_context(certs.files)
    app.extensions["rondo_lan"] = {"context": context, "host": host}
    if certs.made_ca:
        print(f"rondo: made this laptop's certificate authority in {certs.files.directory}; "
              "phones install it once", flush=True)
    elif certs.issued_server:
        print("rondo: this laptop's addresses changed; issued a new server certificate",
              flush=True)
    return context


def _configure(app, certs: CertificateSet, host: str) -> None:
    bound = None if host in ("0.0.0.0", "::", "") else host
    addresses = [str(a) for a in certs.addresses if not a.is_loopback]
    ipv4 = [a for a in addresses if ":" not in a]
    app.config.update(
        LAN_MODE=True,
        LAN_DIR=str(certs.files.directory),
        LAN_PAIR_HOSTS=[bound] if bound else (ipv4 or addresses or ["127.0.0.1"]),
        LAN_OWN_ADDRESSES=[str(a) for a in certs.addresses] + [str(a) for a in certs.left_out],
        LAN_LEFT_OUT=[str(a) for a in certs.left_out],
    )
    app.debug = False  # never the interactive debugger on a network
    app.config["PROPAGATE_EXCEPTIONS"] = False


def _refresh_certificate() -> None:
    """Re-issue the server certificate if the laptop's addresses changed since it started;
    connections made after that get the new one."""
    state = current_app.extensions.get("rondo_lan")
    if not state:
        return
    from . import lan

    with _REISSUE_LOCK:  # two pages at once must not write a key of one and a cert of the other
        certs = lan.prepare(_lan_dir())
        if certs.issued_server:
            lan.ssl_context(certs.files, state["context"])
            _configure(current_app, certs, state["host"])


def _check_limit() -> None:
    wait_s = current_app.extensions["rondo_pair_limit"].wait_s(request.remote_addr or "?")
    if wait_s is not None:
        raise TooManyRequests(f"Too many wrong pairing codes from this device; wait {wait_s} s "
                              "and scan a fresh code from the laptop.", retry_after=wait_s)


def _spent() -> access.CodeSpent:
    current_app.extensions["rondo_pair_limit"].failed(request.remote_addr or "?")
    return access.CodeSpent()


def _port() -> int:
    return urllib.parse.urlsplit(request.host_url).port or 443


def pairing_urls(code: str, hosts: list[str], port: int) -> list[str]:
    """The address a phone opens, once per host the laptop can be reached at."""
    out = []
    for host in hosts:
        shown = f"[{host}]" if ":" in host else host
        suffix = "" if port == 443 else f":{port}"
        out.append(f"https://{shown}{suffix}/pair/{urllib.parse.quote(code, safe='')}")
    return out


def _qr_svg(url: str) -> str:
    # Error level M (about 15 % recoverable) survives a glossy laptop screen; ISO/IEC 18004
    # asks for a quiet zone of 4 modules round the code.
    import segno

    return segno.make(url, error="m").svg_inline(scale=6, dark=QR_DARK, light=QR_LIGHT,
                                                 border=4, omitsize=True,
                                                 title="Pairing code for a phone")


def _ca_facts() -> dict:
    from . import lan

    ca = lan.load_ca(_lan_dir())
    return {"fingerprint": lan.fingerprint_sha256(ca), "ca_name": ca.subject.rfc4514_string(),
            "der_name": CA_DER_NAME, "pem_name": CA_PEM_NAME}


@bp.get("")
def laptop():
    """The laptop's pairing page: a fresh one-time code as QR codes, and the paired devices."""
    _require_laptop()
    if not access.lan_mode():
        return render_template("pair.html", view="off")
    _refresh_certificate()
    codes = current_app.extensions["rondo_pairing_codes"]
    code, until_s = codes.issue()
    own_code, _ = codes.issue()
    this_host = urllib.parse.urlsplit(request.host_url).hostname or "127.0.0.1"
    hosts = list(current_app.config.get("LAN_PAIR_HOSTS") or [this_host])
    port = _port()
    phones = [{"url": url, "svg": _qr_svg(url)} for url in pairing_urls(code, hosts, port)]
    here = pairing_urls(own_code, [this_host], port)[0]
    response = make_response(render_template(
        "pair.html", view="laptop", phones=phones, laptop_url=here,
        until=time.strftime("%H:%M", time.localtime(until_s)),
        minutes=access.PAIRING_CODE_TTL_S // 60, devices=access.list_devices(get_db()),
        left_out=current_app.config.get("LAN_LEFT_OUT") or [], port=port, **_ca_facts()))
    response.headers["Cache-Control"] = "no-store"  # a code must never come back from a cache
    return response


@bp.post("/devices/<int:device_id>/forget")
def forget(device_id: int):
    """Forget a paired device: its cookie stops working at once."""
    _require_laptop()
    _require_lan()
    if not access.forget_device(get_db(), device_id):
        raise NotFound(f"no paired device has id {device_id}")
    return redirect("/pair", code=303)  # RFC 9110 §15.4.4: see the page again, as a GET


@bp.get("/done")
def done():
    """After pairing: install the laptop's CA, then open Rondo."""
    _require_lan()
    paired = access.current_device() is not None
    return render_template("pair.html", view="done", paired=paired, **_ca_facts())


@bp.get(f"/{CA_DER_NAME}")
def ca_der():
    """The CA certificate, DER: what phones install (the public part only)."""
    _require_lan()
    from . import lan

    body = lan.ca_bytes(_lan_dir(), der=True)
    return _download(body, CA_DER_NAME)


@bp.get(f"/{CA_PEM_NAME}")
def ca_pem():
    """The same CA certificate as PEM text, for laptops and other tools."""
    _require_lan()
    from . import lan

    body = lan.ca_bytes(_lan_dir(), der=False)
    return _download(body, CA_PEM_NAME)


def _download(body: bytes, name: str):
    response = make_response(body)
    response.headers["Content-Type"] = CA_CONTENT_TYPE
    response.headers["Content-Disposition"] = f'attachment; filename="{name}"'  # RFC 6266 §4
    return response


@bp.get("/<code>")
def confirm(code: str):
    """The phone opened a pairing code: ask before using it up."""
    _require_lan()
    _check_limit()
    if not current_app.extensions["rondo_pairing_codes"].valid(code):
        raise _spent()
    response = make_response(render_template("pair.html", view="confirm"))
    response.headers["Cache-Control"] = "no-store"
    return response


@bp.post("/<code>")
def pair(code: str):
    """Use the code up, remember this device, and give it its access cookie."""
    _require_lan()
    _check_limit()
    if not current_app.extensions["rondo_pairing_codes"].take(code):
        raise _spent()
    token = access.new_device(get_db(), user_agent=request.headers.get("User-Agent", ""),
                              address=request.remote_addr or "")
    response = redirect("/pair/done", code=303)
    access.set_access_cookie(response, token)
    response.headers["Cache-Control"] = "no-store"
    return response

