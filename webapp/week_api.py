"""The week over the API: spread the clients due over the working days, move, pin, price, map.

Every solve runs as a background job (webapp.jobs); its answer is stored in one transaction:
the week (webapp.weeks) and each touched day's visits and plan (webapp.plans), so every
working day opens in the day screen.
"""

from __future__ import annotations

import datetime as dt
import time

from flask import Blueprint, current_app, jsonify, request, url_for

from . import clients, plan_exports, planning, plans, weeks
from .db import get_db, transaction
from .errors import FieldErrors, NotFound
from .fields import json_object
from .jobs import Job, registry
from .map_page import CAUTION, map_response, strict_headers
from .maps import DAY_COLOURS, DAY_DASHES, week_map_html
from .tiles import tile_map_settings

__all__ = ["bp", "map_bp", "init_app"]

bp = Blueprint("week_api", __name__, url_prefix="/api/weeks")
map_bp = Blueprint("week_map", __name__)

# The map fills the frame above one caution line (folium sizes its map to the body).
_MAP_LAYOUT = (
    "<style>body { display: flex; flex-direction: column; }"
    " .folium-map { flex: 1 1 0; height: auto !important; min-height: 0; }"
    " .rondo-week-caution { flex: 0 0 auto; margin: 0; padding: 6px 8px; color: #121212;"
    " background: #fffdf6; border-top: 2px dashed #121212;"
    " font: 600 13px/1.3 system-ui, sans-serif; }"
    # The day legend is open on the map; small type keeps it off most of a phone's map.
    " .leaflet-control-layers-expanded { padding: 3px 6px; font: 12px/1.25 system-ui,"
    " sans-serif; } .leaflet-control-layers-selector { margin: 2px 4px 2px 0; }</style>")


def init_app(app) -> None:
    """Register the week API and the week's map page."""
    app.register_blueprint(bp)
    app.register_blueprint(map_bp)


def _key(monday) -> str:
    return f"week:{monday.isoformat()}"


def _view(conn, monday) -> dict:
    view = weeks.week_view(conn, monday)
    for day in view["days"]:
        # The same colour and dash as the day's loop on the week map (maps.week_map_html).
        day["colour"], day["dash"] = DAY_COLOURS[day["index"]], DAY_DASHES[day["index"]]
    # Built by hand: job commits run on a worker thread, outside any request.
    view["map_url"] = f"/weeks/{monday.isoformat()}/map"
    return view


def _with_job(monday) -> dict:
    view = _view(get_db(), monday)
    job = registry().active(_key(monday))
    view["job"] = job.as_json() if job else None
    return view


def _start(kind: str, key: str, job_input, compute, commit):
    job = registry().submit(Job(kind=kind, key=key, time_limit_s=job_input.time_limit_s,
                                compute=compute, commit=commit))
    response = jsonify(job.as_json())
    response.status_code = 202
    response.headers["Location"] = url_for("api.get_job", job_id=job.id)
    return response


def _stored(conn, monday) -> weeks.WeekSpec:
    spec = weeks.load_spec(conn, monday)
    if spec is None:
        raise NotFound("week plan", monday.isoformat())
    return spec


def _store_day(conn, job_input, day: int, ids, plan) -> None:
    if plan is not None:
        plans.store_solve(conn, job_input.dates[day], kind="day",
                          inputs=planning.week_day_inputs(job_input, day, ids),
                          outcome={"plan": plan.as_dict(), "seconds": plan.seconds})


@bp.get("/<monday_text>")
def get_week(monday_text: str):
    return jsonify(_with_job(weeks.parse_monday(monday_text)))


@bp.post("/<monday_text>/solve")
def solve_week(monday_text: str):
    """Work out the whole week; an empty body works the stored week out again (pins kept)."""
    monday = weeks.parse_monday(monday_text)
    conn = get_db()
    body = json_object(allowed=weeks.FIELDS) if request.get_data() else {}
    stored = weeks.load_spec(conn, monday)
    late = frozenset(c.client_id for c in stored.clients if c.added_late) if stored else None
    if not body:
        if stored is None:
            raise FieldErrors.one("clients", f"no week is stored for {monday.isoformat()}; "
                                  "send the clients due")
        body = weeks.spec_body(stored)
    spec = weeks.read_spec(conn, monday, body, late=late or frozenset())
    weeks.ensure_not_started(conn, spec)
    job_input = planning.gather_week(conn, spec)

    def commit(conn, plan):
        with transaction(conn):
            weeks.save_spec(conn, spec)
            weeks.ensure_not_started(conn, spec)  # a visit may have been marked done meanwhile
            assignment = {}
            for d in range(len(spec.weekdays)):
                ids = planning.week_day_ids(job_input, plan, d)
                assignment[d] = ids
                weeks.set_day(conn, job_input.dates[d], ids)
                _store_day(conn, job_input, d, ids, plan.days[d])
            result = plan.as_dict()
            for d, day in enumerate(result["days"]):
                day["client_ids"] = assignment[d]
            weeks.store_solve(conn, spec, kind="week", inputs=job_input.inputs, result=result,
                              assignment=assignment,
                              totals={"km": plan.total_km, "drive_min": plan.total_drive_min,
                                      "proven_optimal": plan.proven_optimal,
                                      "method": plan.method, "lower_bound": plan.lower_bound,
                                      "gap": plan.gap, "bound_note": plan.bound_note,
                                      "seconds": plan.seconds})
        return _view(conn, monday) | {"job": None}

    return _start("week", _key(monday), job_input, lambda: planning.solve_week(job_input),
                  commit)


def _extra_ids(now: dict, *more) -> list[int]:
    return [cid for ids in now.values() for cid in ids] + list(more)


@bp.post("/<monday_text>/quote")
def quote_week(monday_text: str):
    """Price one client on each remaining working day, cheapest first; nothing is stored."""
    monday = weeks.parse_monday(monday_text)
    conn = get_db()
    body = json_object(allowed=weeks.QUOTE_FIELDS)
    spec = _stored(conn, monday)
    now = weeks.current(conn, spec)
    client_id, source, priced, left_out = weeks.read_quote(conn, spec, now, body)
    job_input = planning.gather_week(conn, spec, extra_ids=_extra_ids(now, client_id))
    name = job_input.names[client_id]

    def compute():
        started = time.perf_counter()
        quotes = planning.quote_week(job_input, now, client_id, days=priced, source=source)
        return quotes, time.perf_counter() - started

    def commit(_conn, answer):
        quotes, seconds = answer
        return {"client_id": client_id, "name": name,
                "from": None if source is None else clients.WEEKDAYS[spec.weekdays[source]],
                "quotes": quotes + left_out, "seconds": seconds}

    return _start("week-quote", f"week-quote:{monday.isoformat()}", job_input, compute, commit)


@bp.post("/<monday_text>/move")
def move_visit(monday_text: str):
    """Move a visit to another working day (or book a client calling in); both days re-planned."""
    monday = weeks.parse_monday(monday_text)
    conn = get_db()
    body = json_object(allowed=weeks.MOVE_FIELDS)
    spec = _stored(conn, monday)
    now = weeks.current(conn, spec)
    move = weeks.read_move(conn, spec, now, body)
    after = {d: list(ids) for d, ids in now.items()}
    if move.source is not None:
        after[move.source].remove(move.client_id)
    after[move.target].append(move.client_id)
    new_spec = weeks.add_due(spec, move)
    job_input = planning.gather_week(conn, new_spec, extra_ids=_extra_ids(now, move.client_id))
    touched = [d for d in (move.source, move.target) if d is not None]

    def compute():
        started = time.perf_counter()
        day_plans = {d: planning.plan_week_day(job_input, d, after[d]) for d in touched}
        return day_plans, time.perf_counter() - started

    def commit(conn, answer):
        day_plans, seconds = answer
        with transaction(conn):
            weeks.save_spec(conn, new_spec)
            for d in touched:
                date = job_input.dates[d]
                if d == move.target and move.new_to_week:
                    plans.add_choice(conn, date, move.client_id, late=True)
                else:
                    weeks.set_day(conn, date, after[d])
                _store_day(conn, job_input, d, after[d], day_plans[d])
            view = _view(conn, monday)
            weeks.store_solve(
                conn, new_spec, kind="move",
                inputs={"kind": "move", "monday": monday.isoformat(),
                        "client_id": move.client_id, "from": move.source, "to": move.target,
                        "pin": move.pin, "days": {str(d): after[d] for d in touched}},
                result={"days": {str(d): None if p is None else p.as_dict()
                                 for d, p in day_plans.items()}},
                assignment=after,
                totals={"km": view["totals"]["km"], "drive_min": view["totals"]["drive_min"],
                        "proven_optimal": False, "method": "move", "seconds": seconds})
        return view | {"job": None}

    return _start("week-move", _key(monday), job_input, compute, commit)


@bp.put("/<monday_text>/pins")
def pin_client(monday_text: str):
    """Pin a client due this week to a working day, or unpin it (``day`` null)."""
    monday = weeks.parse_monday(monday_text)
    weeks.set_pin(get_db(), monday, json_object(allowed=weeks.PIN_FIELDS))
    return jsonify(_with_job(monday))


def _map_days(conn, monday) -> list[tuple[str, list[dict]]]:
    """Each working day's stored loop as map stops; a day with no visits (or an old plan) empty."""
    spec = weeks.load_spec(conn, monday)
    if spec is None:
        return []
    out = []
    for day in weeks.week_view(conn, monday)["days"]:
        stops: list[dict] = []
        if day["solved"] and day["feasible"] and not day["stale"]:
            try:
                date = dt.date.fromisoformat(day["date"])
                stops = plan_exports.map_stops(plan_exports.stored_day(conn, date))
            except plan_exports.NoPlan:
                stops = []
        out.append((day["name"], stops))
    return out


@map_bp.get("/weeks/<monday_text>/map")
def week_map(monday_text: str):
    """The week's loops on one map, one colour and dash per working day, caution below."""
    monday = weeks.parse_monday(monday_text)
    tile_url, attribution = tile_map_settings(current_app.config)
    page = week_map_html(_map_days(get_db(), monday), tile_url_template=tile_url,
                         attribution=attribution)
    note = f'<p class="rondo-week-caution" role="note">{CAUTION}</p>'
    head, _, tail = page.rpartition("</body>")
    page = (head.replace("</head>", _MAP_LAYOUT + "</head>", 1) + note + "</body>" + tail
            if head else page + _MAP_LAYOUT + note)
    return map_response(page)


map_bp.after_request(strict_headers)
