"""The JSON API the page and the tests use; documented at /api/openapi.json."""

from __future__ import annotations

from flask import Blueprint, Response, jsonify, request, url_for

from . import clients, drives, planning, plans, request_keys, settings
from .db import get_db, transaction
from .errors import FieldErrors
from .fields import Checker, is_id, json_object, parse_date
from .jobs import Job, registry
from .locations import position_json, read_location
from .openapi import spec

__all__ = ["bp"]

bp = Blueprint("api", __name__, url_prefix="/api")

REPLAN_FIELDS = {"from", "now", "break_taken"}


@bp.get("/openapi.json")
def openapi():
    return jsonify(spec())


@bp.get("/settings")
def get_settings():
    return jsonify(settings.as_json(settings.load(get_db())))


@bp.put("/settings")
def put_settings():
    body = json_object(allowed=settings.FIELDS)
    return jsonify(settings.as_json(settings.update(get_db(), body)))


@bp.post("/parse-location")
def parse_location():
    """Echo a typed or pasted position back as the solver reads it, before anything is saved."""
    body = json_object(allowed={"text"})
    check = Checker(body)
    pos = read_location(check, "text", body.get("text"))
    check.done()
    return jsonify(position_json(pos.lat, pos.lon))


@bp.get("/clients")
def list_clients():
    check = Checker()
    query = check.text("q", max_len=120, value=request.args.get("q", ""))
    active_arg = request.args.get("active")
    active = None
    if active_arg is not None:
        if active_arg not in ("true", "false"):
            check.fail("active", f"active {active_arg!r} must be true or false", active_arg)
        active = active_arg == "true"
    check.done()
    return jsonify(clients.list_clients(get_db(), query=query, active=active))


@bp.post("/clients")
def create_client():
    client = clients.create(get_db(), json_object(allowed=clients.FIELDS))
    response = jsonify(client)
    response.status_code = 201
    response.headers["Location"] = url_for(".get_client", client_id=client["id"])
    return response


@bp.get("/clients/<id:client_id>")
def get_client(client_id: int):
    return jsonify(clients.get(get_db(), client_id))


@bp.put("/clients/<id:client_id>")
def update_client(client_id: int):
    return jsonify(clients.update(get_db(), client_id,
                                  json_object(allowed=clients.CHANGE_FIELDS)))


@bp.get("/clients.csv")
def export_clients():
    return Response(clients.export_csv(get_db()), mimetype="text/csv",
                    headers={"Content-Disposition": "attachment; filename=rondo-clients.csv"})


@bp.post("/clients/import")
def import_clients():
    upload = request.files.get("file")
    raw = upload.read() if upload is not None else request.get_data()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise FieldErrors.one("file", "the file is not UTF-8 text; save it as CSV UTF-8") from None
    return jsonify(clients.import_csv(get_db(), text))


@bp.get("/drives")
def list_drives():
    return jsonify(drives.list_drives(get_db()))


@bp.put("/drives")
def save_drive():
    return jsonify(drives.save(get_db(), json_object(allowed=drives.FIELDS)))


@bp.delete("/drives/<id:drive_id>")
def delete_drive(drive_id: int):
    drives.delete(get_db(), drive_id)
    return "", 204


@bp.get("/days")
def list_days():
    return jsonify(plans.list_days(get_db()))


def _view(date) -> dict:
    view = plans.day_view(get_db(), date)
    job = registry().active(_key(date))
    view["job"] = job.as_json() if job else None
    return view


def _key(date) -> str:
    return f"day:{date.isoformat()}"


@bp.get("/days/<date_text>")
def get_day(date_text: str):
    return jsonify(_view(parse_date(date_text)))


@bp.put("/days/<date_text>/visits")
def set_visits(date_text: str):
    date = parse_date(date_text)
    body = json_object(allowed={"client_ids"})
    ids = body.get("client_ids")
    if isinstance(ids, list) and len(ids) > planning.MAX_VISITS_PER_SOLVE:
        # Refused before each id is looked up: a long list would hold the request for seconds.
        raise FieldErrors.one("client_ids", f"client_ids lists {len(ids)} visits; a day takes "
                              f"at most {planning.MAX_VISITS_PER_SOLVE}", len(ids))
    plans.set_choices(get_db(), date, body)
    return jsonify(_view(date))


@bp.post("/days/<date_text>/visits")
def add_visit(date_text: str):
    date = parse_date(date_text)
    body = json_object(allowed={"client_id", "late"})
    check = Checker(body)
    late = check.boolean("late") if "late" in body else True
    check.done()
    # A phone replaying its offline outbox sends an Idempotency-Key: applied at most once.
    key = request_keys.read_key(request.headers)
    conn, target = get_db(), f"POST {request.path}"
    with transaction(conn):
        if key is None or not request_keys.replayed(conn, key, target, body):
            plans.add_choice(conn, date, body.get("client_id"), late=late)
            if key is not None:
                request_keys.remember(conn, key, target, body)
    return jsonify(_view(date)), 201


@bp.put("/days/<date_text>/done/<id:client_id>")
def mark_done(date_text: str, client_id: int):
    date = parse_date(date_text)
    plans.mark_done(get_db(), date, client_id, json_object(allowed={"arrived", "departed"}))
    return jsonify(_view(date))


@bp.delete("/days/<date_text>/done/<id:client_id>")
def undo_done(date_text: str, client_id: int):
    date = parse_date(date_text)
    plans.undo_done(get_db(), date, client_id)
    return jsonify(_view(date))


def _start_job(kind: str, key: str, job_input, compute, commit):
    job = registry().submit(Job(kind=kind, key=key, time_limit_s=job_input.time_limit_s,
                                compute=compute, commit=commit))
    response = jsonify(job.as_json())
    response.status_code = 202
    response.headers["Location"] = url_for(".get_job", job_id=job.id)
    return response


def _solve_job(date, kind: str, job_input):
    def commit(conn, outcome):
        plans.store_solve(conn, date, kind=kind, inputs=job_input.inputs, outcome=outcome)
        return plans.day_view(conn, date)

    return _start_job(kind, _key(date), job_input, lambda: planning.solve(job_input), commit)


@bp.post("/days/<date_text>/solve")
def solve_day(date_text: str):
    date = parse_date(date_text)
    if request.get_data():
        json_object(allowed=set())
    job_input = planning.gather(get_db(), date, kind="day")
    return _solve_job(date, "day", job_input)


def _replan_input(date, body: dict, *, candidate_id=None):
    conn = get_db()
    start, now, taken = planning.read_start(conn, body)
    now = planning.now_min(conn) if now is None else now
    return planning.gather(conn, date, kind="replan", start=start, start_min=now,
                           break_taken=taken, candidate_id=candidate_id)


@bp.post("/days/<date_text>/replan")
def replan_day(date_text: str):
    date = parse_date(date_text)
    job_input = _replan_input(date, json_object(allowed=REPLAN_FIELDS))
    return _solve_job(date, "replan", job_input)


@bp.post("/days/<date_text>/quote")
def quote_visit(date_text: str):
    """What a last-minute visit would cost the rest of the day; nothing is stored."""
    date = parse_date(date_text)
    body = json_object(allowed=REPLAN_FIELDS | {"client_id"})
    candidate = body.get("client_id")
    if not is_id(candidate):
        raise FieldErrors.one("client_id", f"client_id is {candidate!r}; expected a client id",
                              repr(candidate))
    job_input = _replan_input(date, body, candidate_id=candidate)
    return _start_job("quote", f"quote:{date.isoformat()}", job_input,
                      lambda: planning.quote(job_input), lambda _conn, answer: answer)


@bp.get("/solves/<id:solve_id>")
def get_solve(solve_id: int):
    """One stored solve with the inputs it was made from, to explain a plan later."""
    return jsonify(plans.solve_record(get_db(), solve_id))


@bp.get("/jobs/<job_id>")
def get_job(job_id: str):
    return jsonify(registry().get(job_id).as_json())


@bp.delete("/jobs/<job_id>")
def cancel_job(job_id: str):
    return jsonify(registry().cancel(job_id).as_json())
