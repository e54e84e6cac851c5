"""The day's map as its own page, framed by the day screen, with rules fitted to folium's output.

folium writes its map as inline scripts; instead of allowing every inline script, the page's
Content-Security-Policy lists the SHA-256 of each one it actually sends (CSP Level 3 §2.3.1
hash-source), so no other script can run in it. It is sandboxed (no forms, pop-ups, dialogs or
navigating the day screen) but keeps its origin: the app answers its assets and tiles to its
own origin only (Cross-Origin-Resource-Policy) and the LAN cookie is SameSite=Strict, so an
opaque-origin frame could load neither.
"""

from __future__ import annotations

import base64
import hashlib
import re

from flask import Blueprint, current_app, make_response

from . import plan_exports
from .db import get_db
from .fields import parse_date
from .maps import day_map_html
from .tiles import tile_map_settings

__all__ = ["map_bp", "map_policy", "map_response", "strict_headers", "CAUTION"]

map_bp = Blueprint("map_page", __name__)

CAUTION = ("Plan while parked; never handle the phone while driving. Times are "
           "estimates; obey road rules and local regulations.")

# Inline scripts: a <script> without a src attribute (folium writes them in lower case).
_INLINE_SCRIPT = re.compile(r"<script(?![^>]*\bsrc\s*=)[^>]*>(.*?)</script>", re.S | re.I)

# The map column and the caution line below it; folium sizes its map to 100 % of the body.
_LAYOUT = (
    "<style>body { display: flex; flex-direction: column; }"
    " .folium-map { flex: 1 1 0; height: auto !important; min-height: 0; }"
    " .rondo-map-caution { flex: 0 0 auto; margin: 0; padding: 6px 8px; color: #121212;"
    " background: #fffdf6; border-top: 2px dashed #121212;"
    " font: 600 12px/1.3 system-ui, sans-serif; }"
    # On a phone-wide map the credit line and the scale bar share the bottom edge: lift the bar.
    " .leaflet-bottom.leaflet-left .leaflet-control-scale { margin-bottom: 24px; }</style>")


def map_policy(page: str) -> str:
    """A Content-Security-Policy that lets exactly this page's own inline scripts run."""
    hashes = sorted({"'sha256-" + base64.b64encode(hashlib.sha256(
        body.encode("utf-8")).digest()).decode("ascii") + "'"
        for body in _INLINE_SCRIPT.findall(page)})
    # Styles: Leaflet and folium's marker icons set style attributes, so inline styles stay on.
    return ("default-src 'none'; script-src 'self' " + " ".join(hashes) + "; "
            "style-src 'self' 'unsafe-inline'; img-src 'self' data:; connect-src 'none'; "
            "font-src 'none'; object-src 'none'; base-uri 'none'; form-action 'none'; "
            "frame-ancestors 'self'; sandbox allow-scripts allow-same-origin")


def _with_caution(page: str) -> str:
    note = f'<p class="rondo-map-caution" role="note">{CAUTION}</p>'
    head, _, tail = page.rpartition("</body>")
    if not head:  # not the page shape folium writes: keep it whole, note at the end
        return page + _LAYOUT + note
    return head.replace("</head>", _LAYOUT + "</head>", 1) + note + "</body>" + tail


@map_bp.get("/days/<date_text>/map")
def day_map(date_text: str):
    """The latest stored plan of the date on a map: home, numbered stops, the loop."""
    date = parse_date(date_text)
    stops = plan_exports.map_stops(plan_exports.stored_day(get_db(), date))
    tile_url, attribution = tile_map_settings(current_app.config)
    page = _with_caution(day_map_html(stops, tile_url_template=tile_url,
                                      attribution=attribution))
    return map_response(page)


def map_response(page: str):
    """A rendered map page with its own script-hash CSP; never cached (plans change)."""
    response = make_response(page)
    response.headers["Content-Type"] = "text/html; charset=utf-8"
    response.headers["Content-Security-Policy"] = map_policy(page)
    response.headers["Cache-Control"] = "no-cache"  # a re-planned day must not show an old loop
    return response


def strict_headers(response):
    """Error pages of the map routes carry no inline script: the app's strict rules."""
    response.headers.setdefault("Content-Security-Policy", "default-src 'self'; "
                                "object-src 'none'; base-uri 'none'; frame-ancestors 'self'")
    response.headers.setdefault("X-Content-Type-Options", "nosniff")
    response.headers.setdefault("Referrer-Policy", "no-referrer")
    return response


map_bp.after_request(strict_headers)
