"""Day and week maps as whole HTML pages (folium/Leaflet) that load nothing from the internet.

Scripts and styles come from ``vendor_bp`` under ``asset_base``; the street map, if any, from
``tile_url_template`` (normally this app's own ``/tiles/{z}/{x}/{y}.png``). With no template
the map has a plain background and still shows the stops, the loop and the scale bar.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import folium
from branca.element import Element
from folium.template import Template

from solver.clock import format_clock, parse_clock
from solver.coordinates import check_position
from solver.errors import InvalidInput
from solver.export_stops import clean_text

from .vendor import JQUERY_VERSION, LEAFLET_VERSION

__all__ = [
    "MapStop",
    "day_map_html",
    "week_map_html",
    "map_asset_lists",
    "contrast_ratio",
    "OKABE_ITO",
    "DAY_COLOURS",
    "DAY_DASHES",
]

# Okabe M., Ito K. (2008), "Color Universal Design (CUD): how to make figures and presentations
# that are friendly to colorblind people", https://jfly.uni-koeln.de/color/ (sRGB hex values).
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
# One colour per day of a week, Monday first; black is kept for text.
DAY_COLOURS = tuple(OKABE_ITO[name] for name in (
    "blue", "vermillion", "bluish_green", "reddish_purple", "orange", "sky_blue", "yellow"))
# A second cue besides colour: each day's loop has its own SVG stroke-dasharray (px).
DAY_DASHES = (None, "12 6", "2 7", "14 5 2 5", "7 7", "1 5", "18 8")

STOP_FILL = "#1e3a8a"  # numbered visit badge on the day map
LOOP_COLOUR = "#0072B2"  # Okabe-Ito blue
HOME_FILL = "#b45309"
START_FILL = "#047857"
NO_TILES_BACKGROUND = "#e5e7eb"  # neutral grey under the loop when there is no street map
TILE_MAX_ZOOM = 19  # highest zoom the tile proxy serves
FIT_MAX_ZOOM = 16  # fitting one stop must not zoom to street-door level
FIT_PADDING_PX = (36, 36)
POPUP_MAX_WIDTH_PX = 260

_KINDS = ("home", "start", "visit")
_ASSET_BASE = re.compile(r"^(?!//)[A-Za-z0-9._~/-]*$")  # a path on this server, never a host


@dataclass(frozen=True)
class MapStop:
    """One stop of a day: ``order`` 0 is where the day starts (home unless ``kind`` = "start").

    ``kind`` "home" on the last stop marks the return home; ``arrive``/``depart`` are "HH:MM".
    """

    name: str
    lat: float
    lon: float
    order: int
    arrive: str | None = None
    depart: str | None = None
    kind: str | None = None


def map_asset_lists(asset_base: str = "/vendor") -> tuple[list, list]:
    """The (default_js, default_css) lists a map page needs, all on this server."""
    base = _check_asset_base(asset_base)
    js = [
        ("leaflet", f"{base}/leaflet/leaflet.js?v={LEAFLET_VERSION}"),
        # folium's popups build their content with jQuery's $(...).
        ("jquery", f"{base}/jquery/jquery.min.js?v={JQUERY_VERSION}"),
    ]
    css = [("leaflet_css", f"{base}/leaflet/leaflet.css?v={LEAFLET_VERSION}")]
    return js, css


def day_map_html(
    stops: Sequence,
    *,
    tile_url_template: str | None,
    attribution: str,
    asset_base: str = "/vendor",
) -> str:
    """One day's loop: home, numbered visits in order, the drive back home; a whole HTML page."""
    day = _read_stops(stops, field="stops")
    fmap = _base_map(tile_url_template, attribution, asset_base, title="Day map")
    if not day:
        _add_note(fmap, "No stops to show for this day.")
        return fmap.get_root().render()
    _add_loop(fmap, _loop_path(day), LOOP_COLOUR, None)
    _add_homes(fmap, [("", day)])
    for stop in day:
        if stop.kind == "visit":
            _add_visit(fmap, stop, fill=STOP_FILL, title=f"{stop.order}. {stop.name}",
                       heading=f"{stop.order}. {stop.name}")
    _fit(fmap, [(s.lat, s.lon) for s in day])
    return fmap.get_root().render()


def week_map_html(
    days: Sequence | Mapping,
    *,
    tile_url_template: str | None,
    attribution: str,
    asset_base: str = "/vendor",
) -> str:
    """Several days on one map, each in its own Okabe-Ito colour and dash, with a day legend.

    ``days`` is a sequence of (label, stops) pairs or a mapping label -> stops, Monday first.
    """
    pairs = list(days.items()) if isinstance(days, Mapping) else list(days)
    if len(pairs) > len(DAY_COLOURS):
        raise InvalidInput(f"days has {len(pairs)} entries; a week map shows at most "
                           f"{len(DAY_COLOURS)}", field="days", value=len(pairs))
    week: list[tuple[str, list[MapStop]]] = []
    for index, pair in enumerate(pairs):
        if not isinstance(pair, Sequence) or isinstance(pair, str) or len(pair) != 2:
            raise InvalidInput(f"days[{index}] is not a (label, stops) pair",
                               field=f"days[{index}]", value=pair)
        label = clean_text(pair[0], field=f"days[{index}].label").strip() or f"Day {index + 1}"
        week.append((label, _read_stops(pair[1], field=f"days[{index}].stops")))
    fmap = _base_map(tile_url_template, attribution, asset_base, title="Week map")
    points = [(s.lat, s.lon) for _, day in week for s in day]
    if not points:
        _add_note(fmap, "No stops to show for this week.")
        return fmap.get_root().render()
    for index, (label, day) in enumerate(week):
        fill, dash = DAY_COLOURS[index], DAY_DASHES[index]
        swatch = (f'<span class="rondo-swatch" style="display:inline-block;width:14px;'
                  f'height:14px;border-radius:3px;vertical-align:-2px;background:{fill}">'
                  f'</span> ')
        group = folium.FeatureGroup(name=swatch + _text(label), overlay=True, control=True)
        group.add_to(fmap)
        if day:
            _add_loop(group, _loop_path(day), fill, dash)
        for stop in day:
            if stop.kind == "visit":
                _add_visit(group, stop, fill=fill, title=f"{label} {stop.order}. {stop.name}",
                           heading=f"{label} · {stop.order}. {stop.name}")
    _add_homes(fmap, week)
    folium.LayerControl(position="topright", collapsed=False).add_to(fmap)
    _fit(fmap, points)
    return fmap.get_root().render()


def contrast_ratio(fill: str, ink: str) -> float:
    """WCAG 2.1 contrast ratio of two "#rrggbb" colours (1.0 to 21.0)."""
    lighter, darker = sorted((_luminance(fill), _luminance(ink)), reverse=True)
    return (lighter + 0.05) / (darker + 0.05)


def _luminance(colour: str) -> float:
    """WCAG 2.1 relative luminance of an sRGB "#rrggbb" colour."""
    channels = [int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def _ink(fill: str) -> str:
    """Black or white text, whichever contrasts more with ``fill``."""
    return max(("#000000", "#ffffff"), key=lambda ink: contrast_ratio(fill, ink))


def _text(value: str) -> str:
    """``value`` as HTML text that stays text inside folium's JS template literals too."""
    escaped = html.escape(value, quote=True)
    return escaped.replace("\\", "&#92;").replace("`", "&#96;").replace("$", "&#36;")


def _check_asset_base(asset_base: str) -> str:
    if not isinstance(asset_base, str) or not _ASSET_BASE.match(asset_base):
        raise InvalidInput(f"asset_base {asset_base!r} is not a path on this server such as "
                           "'/vendor'", field="asset_base", value=asset_base)
    return asset_base.rstrip("/")


def _read_stops(stops: Sequence, *, field: str) -> list[MapStop]:
    """Validated stops sorted by order; order 0 must be present once the list is not empty."""
    if isinstance(stops, str | bytes | Mapping) or not isinstance(stops, Sequence):
        raise InvalidInput(f"{field} is a {type(stops).__name__}; expected a list of stops",
                           field=field, value=None)
    read = [_read_stop(stop, field=f"{field}[{i}]") for i, stop in enumerate(stops)]
    read.sort(key=lambda stop: stop.order)
    orders = [stop.order for stop in read]
    if len(set(orders)) != len(orders):
        raise InvalidInput(f"{field} repeats an order: {orders}", field=field, value=orders)
    if read and read[0].order != 0:
        raise InvalidInput(f"{field} has no stop with order 0 (where the day starts)",
                           field=field, value=orders)
    for stop in read[1:-1]:
        if stop.kind == "home":
            raise InvalidInput(f"{field}: only the last stop can be the return home, not order "
                               f"{stop.order}", field=field, value=stop.order)
    return read


def _read_stop(stop: object, *, field: str) -> MapStop:
    def get(key: str):
        return stop.get(key) if isinstance(stop, Mapping) else getattr(stop, key, None)

    order = get("order")
    if isinstance(order, bool) or not isinstance(order, int) or order < 0:
        raise InvalidInput(f"{field}.order {order!r} is not a whole number >= 0",
                           field=f"{field}.order", value=order)
    position = check_position(get("lat"), get("lon"), field=field)
    kind = get("kind")
    if kind is None:
        kind = "home" if order == 0 else "visit"
    if kind not in _KINDS or (kind == "start" and order != 0) or (kind == "visit" and order == 0):
        raise InvalidInput(f"{field}.kind {kind!r} does not fit order {order}; expected "
                           "home/start at order 0, visit after it, home last",
                           field=f"{field}.kind", value=kind)
    name = get("name")
    name = "" if name is None else clean_text(name, field=f"{field}.name").strip()
    if not name:
        name = {"home": "Home", "start": "Start"}.get(kind, f"Stop {order}")
    return MapStop(name=name, lat=position.lat, lon=position.lon, order=order,
                   arrive=_clock(get("arrive"), field=f"{field}.arrive"),
                   depart=_clock(get("depart"), field=f"{field}.depart"), kind=kind)


def _clock(value: object, *, field: str) -> str | None:
    if value is None or value == "":
        return None
    return format_clock(parse_clock(value, field=field))  # type: ignore[arg-type]


def _base_map(tile_url_template: str | None, attribution: str, asset_base: str, *, title: str):
    """A folium Map with app-local assets, a scale bar and either tiles or a plain ground."""
    default_js, default_css = map_asset_lists(asset_base)
    fmap = folium.Map(location=None, tiles=None, control_scale=True, zoom_start=12)
    # Per instance: the class-level lists (CDN URLs) are shared by every map in the process.
    fmap.default_js = default_js
    fmap.default_css = default_css
    fmap.options["maxZoom"] = TILE_MAX_ZOOM
    root = fmap.get_root()
    root.title = title
    style = (f"<style>#{fmap.get_name()} {{ background: {NO_TILES_BACKGROUND}; }}"
             ".rondo-pin { background: none; border: none; }"
             ".rondo-popup { font: 14px/1.4 system-ui, sans-serif; }"
             ".rondo-note { background: rgba(255,255,255,.92); padding: 4px 8px;"
             " border-radius: 4px; font: 13px/1.3 system-ui, sans-serif; color: #1f2937;"
             " box-shadow: 0 1px 4px rgba(0,0,0,.3); max-width: 220px; }</style>")
    root.header.add_child(Element(style), name="rondo_map_style")
    if tile_url_template is None:
        _add_note(fmap, "No street map: stops and route only.")
    else:
        _add_tiles(fmap, tile_url_template, attribution)
    fmap.add_child(_NoLinkOut())
    return fmap


class _NoLinkOut(folium.MacroElement):
    """Drop Leaflet's own credit link: tapped inside the map frame it would leave the laptop.

    The tile attribution (a required credit) stays; only the library's prefix goes.
    """

    _template = Template(
        "{% macro script(this, kwargs) %}"
        "{{ this._parent.get_name() }}.attributionControl.setPrefix(false);"
        "{% endmacro %}"
    )


def _add_tiles(fmap, tile_url_template: str, attribution: str) -> None:
    template_ok = isinstance(tile_url_template, str) and all(
        part in tile_url_template for part in ("{z}", "{x}", "{y}"))
    if not template_ok or not re.match(r"^(/(?!/)|https?://)", tile_url_template):
        raise InvalidInput(f"tile_url_template {tile_url_template!r} is not a tile URL with "
                           "{z}, {x} and {y}", field="tile_url_template", value=tile_url_template)
    if not isinstance(attribution, str) or not attribution.strip():
        raise InvalidInput("attribution is required with a street map (e.g. '© OpenStreetMap "
                           "contributors')", field="attribution", value=attribution)
    layer = folium.TileLayer(tiles=tile_url_template, attr=_text(attribution.strip()),
                             min_zoom=0, max_zoom=TILE_MAX_ZOOM, max_native_zoom=TILE_MAX_ZOOM,
                             name="streets", control=False)
    if layer.tiles != tile_url_template:  # folium looks names up in xyzservices first
        raise InvalidInput(f"tile_url_template {tile_url_template!r} names a tile provider; "
                           "give a URL", field="tile_url_template", value=tile_url_template)
    layer.add_to(fmap)


class _Note(folium.MacroElement):
    """A small text box in a map corner (plain text, set with textContent)."""

    _template = Template("""
        {% macro script(this, kwargs) %}
        (function (map) {
            var note = L.control({position: "topright"});
            note.onAdd = function () {
                var box = L.DomUtil.create("div", "rondo-note");
                box.textContent = {{ this.text|tojson }};
                return box;
            };
            note.addTo(map);
        })({{ this._parent.get_name() }});
        {% endmacro %}
    """)

    def __init__(self, text: str):
        super().__init__()
        self._name = "RondoNote"
        self.text = text


def _add_note(fmap, text: str) -> None:
    _Note(text).add_to(fmap)


def _loop_path(day: list[MapStop]) -> list[tuple[float, float]]:
    """Positions in visit order, closed back to the start unless the last stop is home."""
    path = [(stop.lat, stop.lon) for stop in day]
    if day[-1].kind != "home" or len(day) == 1:
        path.append(path[0])
    return path


def _add_loop(parent, path, colour: str, dash: str | None) -> None:
    """The drive as a line with a white casing so it reads on any background."""
    folium.PolyLine(path, color="#ffffff", weight=8, opacity=0.9,
                    class_name="rondo-loop-casing").add_to(parent)
    folium.PolyLine(path, color=colour, weight=4, opacity=1.0, dash_array=dash,
                    class_name="rondo-loop").add_to(parent)


def _badge(label: str, fill: str) -> str:
    return (f'<div style="min-width:26px;height:26px;padding:0 4px;box-sizing:border-box;'
            f"border-radius:13px;background:{fill};color:{_ink(fill)};border:2px solid #fff;"
            "box-shadow:0 1px 3px rgba(0,0,0,.5);font:700 13px/22px system-ui,sans-serif;"
            f'text-align:center">{_text(label)}</div>')


def _add_visit(parent, stop: MapStop, *, fill: str, title: str, heading: str) -> None:
    lines = [f"<strong>{_text(heading)}</strong>",
             f"Arrive {_text(stop.arrive or '–')}", f"Leave {_text(stop.depart or '–')}"]
    icon = folium.DivIcon(html=_badge(str(stop.order), fill), icon_size=(26, 26),
                          icon_anchor=(13, 13), popup_anchor=(0, -12),
                          class_name="rondo-pin rondo-stop")
    folium.Marker([stop.lat, stop.lon], icon=icon, title=title, riseOnHover=True,
                  popup=_popup(lines)).add_to(parent)


def _popup(lines: list[str]) -> folium.Popup:
    """A popup from lines that are already escaped HTML."""
    content = '<div class="rondo-popup">' + "<br>".join(lines) + "</div>"
    return folium.Popup(content, parse_html=False, max_width=POPUP_MAX_WIDTH_PX)


_HOME_SVG = ('<svg width="30" height="30" viewBox="0 0 30 30" aria-hidden="true">'
             '<path d="M15 3 L28 14.5 H24.5 V27 H5.5 V14.5 H2 Z" fill="{fill}" stroke="#fff" '
             'stroke-width="2" stroke-linejoin="round"/>'
             '<rect x="12.5" y="18" width="5" height="9" fill="#fff"/></svg>')
_START_SVG = ('<svg width="30" height="30" viewBox="0 0 30 30" aria-hidden="true">'
              '<path d="M15 2 L28 15 L15 28 L2 15 Z" fill="{fill}" stroke="#fff" '
              'stroke-width="2" stroke-linejoin="round"/><circle cx="15" cy="15" r="4" '
              'fill="#fff"/></svg>')


def _add_homes(fmap, days: list[tuple[str, list[MapStop]]]) -> None:
    """One house per distinct home position, with each day's leave and return times."""
    homes: dict[tuple[float, float], dict] = {}
    for label, day in days:
        for stop in day:
            if stop.kind == "start":
                _add_start(fmap, stop, label)
                continue
            if stop.kind != "home":
                continue
            key = (round(stop.lat, 6), round(stop.lon, 6))
            entry = homes.setdefault(key, {"stop": stop, "times": {}})
            leave, back = entry["times"].get(label, (None, None))
            if stop.order == 0:
                leave = stop.depart
                back = back or stop.arrive
            else:
                back = stop.arrive or back
            entry["times"][label] = (leave, back)
    for entry in homes.values():
        stop = entry["stop"]
        lines = [f"<strong>{_text(stop.name)}</strong>"]
        for label, (leave, back) in entry["times"].items():
            parts = [f"leave {leave}" if leave else "", f"back {back}" if back else ""]
            text = ", ".join(part for part in parts if part)
            if text and label:
                lines.append(f"{_text(label)}: {_text(text)}")
            elif text:
                lines.append(_text(text[0].upper() + text[1:]))
        icon = folium.DivIcon(html=_HOME_SVG.format(fill=HOME_FILL), icon_size=(30, 30),
                              icon_anchor=(15, 15), popup_anchor=(0, -14),
                              class_name="rondo-pin rondo-home")
        folium.Marker([stop.lat, stop.lon], icon=icon, title=stop.name, zIndexOffset=-500,
                      popup=_popup(lines)).add_to(fmap)


def _add_start(fmap, stop: MapStop, label: str) -> None:
    heading = f"{label} · start: {stop.name}" if label else f"Start: {stop.name}"
    lines = [f"<strong>{_text(heading)}</strong>", f"Leave {_text(stop.depart or '–')}"]
    icon = folium.DivIcon(html=_START_SVG.format(fill=START_FILL), icon_size=(30, 30),
                          icon_anchor=(15, 15), popup_anchor=(0, -14),
                          class_name="rondo-pin rondo-start")
    folium.Marker([stop.lat, stop.lon], icon=icon, title=heading, zIndexOffset=900,
                  popup=_popup(lines)).add_to(fmap)


def _fit(fmap, points: list[tuple[float, float]]) -> None:
    lats = [lat for lat, _ in points]
    lons = [lon for _, lon in points]
    south_west, north_east = [min(lats), min(lons)], [max(lats), max(lons)]
    fmap.location = [(south_west[0] + north_east[0]) / 2, (south_west[1] + north_east[1]) / 2]
    fmap.fit_bounds([south_west, north_east], padding=FIT_PADDING_PX, max_zoom=FIT_MAX_ZOOM)
