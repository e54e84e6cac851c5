"""The API's OpenAPI 3.1 description, served at /api/openapi.json."""

from __future__ import annotations

from .clients import CSV_COLUMNS, WEEKDAYS
from .planning import MAX_VISITS_PER_SOLVE

__all__ = ["spec"]

_CLOCK = {"type": "string", "pattern": r"^\d{1,2}:\d{2}$", "examples": ["08:30"]}
_DATE = {"name": "date_text", "in": "path", "required": True,
         "schema": {"type": "string", "format": "date"}, "description": "YYYY-MM-DD"}
_LOCATION = {
    "oneOf": [
        {"type": "string", "description": "any form the solver reads: decimal degrees, "
         "degrees-minutes-seconds, degrees and decimal minutes, or an RFC 5870 geo: URI; "
         "latitude first", "examples": ["43.12440, 5.92810", "geo:43.1244,5.9281"]},
        {"type": "object", "required": ["lat", "lon"], "additionalProperties": False,
         "properties": {"lat": {"type": "number", "minimum": -90, "maximum": 90},
                        "lon": {"type": "number", "minimum": -180, "maximum": 180}}},
    ]
}
_FROM = {
    "description": "where the re-plan starts: \"home\", a client id, or a position",
    "oneOf": [{"const": "home"}, {"type": "integer"}, *_LOCATION["oneOf"]],
}
_IDEMPOTENCY_KEY = {
    "name": "Idempotency-Key", "in": "header", "required": False,
    "schema": {"type": "string", "pattern": r'^"?[A-Za-z0-9._:-]{8,100}"?$'},
    "description": "a key the phone makes for one request; sending it again with the same "
                   "body answers without applying it twice, with another body is a 422",
}
_VERSION = {"type": "integer", "minimum": 1,
            "description": "the version this change was made from; if the record has changed "
                           "since, the answer is 409 with the record as it is now. Left out: "
                           "the change applies over whatever is stored"}
_WINDOWS = {
    "type": "object", "additionalProperties": False,
    "description": "per weekday: '' or absent = any time of the working day, 'closed', or "
                   "windows in which the visit must START, e.g. '09:00-12:00, 14:00-17:00'",
    "properties": {d: {"type": ["string", "null"]} for d in WEEKDAYS},
}


def _object(properties: dict, required=()) -> dict:
    return {"type": "object", "additionalProperties": False, "properties": properties,
            "required": list(required)}


_SCHEMAS = {
    "Error": {
        "type": "object", "required": ["error", "message"],
        "properties": {
            "error": {"type": "string", "description": "invalid_input, not_found, infeasible, "
                      "conflict, method_not_allowed, ..."},
            "message": {"type": "string"},
            "fields": {"type": "array", "items": {
                "type": "object", "required": ["field", "message"],
                "properties": {"field": {"type": "string"}, "message": {"type": "string"},
                               "value": {}}}},
            "explanation": {"type": "object"},
            "current": {"type": "object", "description": "with 409 for an out-of-date "
                        "version: the record as it is stored now"},
        },
    },
    "Position": _object({"lat": {"type": "number"}, "lon": {"type": "number"},
                         "text": {"type": "string"}, "geo_uri": {"type": "string"}}),
    "Settings": {"type": "object", "properties": {
        "rep_name": {"type": "string"}, "home_label": {"type": "string"},
        "home": {"oneOf": [{"$ref": "#/components/schemas/Position"}, {"type": "null"}]},
        "day_start": _CLOCK, "day_end": _CLOCK, "break_min": {"type": "integer"},
        "break_from": _CLOCK, "break_until": _CLOCK, "speed_kmh": {"type": "number"},
        "detour_factor": {"type": "number"},
        "distance_mode": {"enum": ["geodesic", "great-circle"]},
        "objective": {"enum": ["km", "return"]}, "time_zone": {"type": "string"},
        "time_limit_s": {"type": "number"}, "is_demo": {"type": "boolean"},
        "version": {"type": "integer", "description": "raised by every change"}}},
    "SettingsChange": _object({
        "rep_name": {"type": "string", "maxLength": 80},
        "home_label": {"type": "string", "minLength": 1, "maxLength": 80},
        "home": {"oneOf": [*_LOCATION["oneOf"], {"type": "null"}]},
        "day_start": _CLOCK, "day_end": _CLOCK,
        "break_min": {"type": "integer", "minimum": 0, "maximum": 480},
        "break_from": _CLOCK, "break_until": _CLOCK,
        "speed_kmh": {"type": "number", "exclusiveMinimum": 0, "maximum": 200},
        "detour_factor": {"type": "number", "minimum": 1, "maximum": 3},
        "distance_mode": {"enum": ["geodesic", "great-circle"]},
        "objective": {"enum": ["km", "return"]},
        "time_zone": {"type": "string", "examples": ["Europe/Paris"]},
        "time_limit_s": {"type": "number", "exclusiveMinimum": 0, "maximum": 300},
        "version": _VERSION}),
    "Client": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"},
        "location": {"$ref": "#/components/schemas/Position"},
        "visit_min": {"type": "integer"}, "windows": _WINDOWS, "notes": {"type": "string"},
        "active": {"type": "boolean"}, "updated_at": {"type": "string"},
        "version": {"type": "integer", "description": "raised by every change"}}},
    "ClientNew": _object({
        "name": {"type": "string", "minLength": 1, "maxLength": 120}, "location": _LOCATION,
        "visit_min": {"type": "integer", "minimum": 1, "maximum": 720}, "windows": _WINDOWS,
        "notes": {"type": "string", "maxLength": 2000}, "active": {"type": "boolean"}},
        required=("name", "location", "visit_min")),
    "ClientChange": _object({
        "name": {"type": "string", "minLength": 1, "maxLength": 120}, "location": _LOCATION,
        "visit_min": {"type": "integer", "minimum": 1, "maximum": 720}, "windows": _WINDOWS,
        "notes": {"type": "string", "maxLength": 2000}, "active": {"type": "boolean"},
        "version": _VERSION}),
    "Drive": {"type": "object", "properties": {
        "id": {"type": "integer"}, "from": {}, "to": {}, "from_name": {"type": "string"},
        "to_name": {"type": "string"}, "km": {"type": ["number", "null"]},
        "minutes": {"type": ["number", "null"]}}},
    "DriveEntry": _object({
        "from": {"oneOf": [{"const": "home"}, {"type": "integer"}]},
        "to": {"oneOf": [{"const": "home"}, {"type": "integer"}]},
        "km": {"type": ["number", "null"], "minimum": 0, "maximum": 5000},
        "minutes": {"type": ["number", "null"], "minimum": 0, "maximum": 1440},
        "both_ways": {"type": "boolean"}}, required=("from", "to")),
    "Replan": _object({"from": _FROM, "now": _CLOCK, "break_taken": {"type": "boolean"}}),
    "Quote": _object({"client_id": {"type": "integer"}, "from": _FROM, "now": _CLOCK,
                      "break_taken": {"type": "boolean"}}, required=("client_id",)),
    "Day": {"type": "object", "description": "choices (the visits chosen, with done times), "
            "done, plan (the latest solve: visits with arrive/wait/start/depart, legs, totals, "
            "proof; or explanation when no plan fits), job (a solve still running)"},
    "Job": {"type": "object", "properties": {
        "id": {"type": "string"},
        "kind": {"enum": ["day", "replan", "quote", "week", "week-quote", "week-move"]},
        "state": {"enum": ["queued", "running", "done", "failed", "cancelled"]},
        "elapsed_s": {"type": "number"}, "time_limit_s": {"type": "number"},
        "progress": {"type": "number"}, "result": {}, "error": {}}},
}


def _ref(name: str) -> dict:
    return {"$ref": f"#/components/schemas/{name}"}


def _json(schema) -> dict:
    return {"content": {"application/json": {"schema": schema}}}


def _op(summary: str, *, body: str | None = None, ok: str | None = None, status: str = "200",
        params=(), errors=("422",)) -> dict:
    op = {"summary": summary, "parameters": list(params), "responses": {}}
    if body:
        op["requestBody"] = {"required": True, **_json(_ref(body))}
        errors = ("400", *errors)
    op["responses"][status] = {"description": "done", **(_json(_ref(ok)) if ok else {})}
    for code in errors:
        op["responses"][code] = {"description": {"400": "the body is not a JSON object or has "
                                                 "unknown fields", "404": "unknown id",
                                                 "409": "conflicts with the stored state",
                                                 "429": "too many solves are waiting; try "
                                                 "again when one has finished",
                                                 "422": "a field is wrong; each is named"}[code],
                                 **_json(_ref("Error"))}
    return op


def _id(name: str) -> dict:
    return {"name": name, "in": "path", "required": True, "schema": {"type": "integer"}}


_EXPORT_OPTIONS = [
    {"name": "travel", "in": "query", "schema": {"enum": ["1", "0", "true", "false"]},
     "description": "1: add a calendar entry for every drive (keep it the same for all exports "
                    "of a day)"},
    {"name": "alarm", "in": "query", "schema": {"type": "integer", "minimum": 0,
                                                 "maximum": 1440},
     "description": "a reminder this many minutes before leaving for each visit"},
]


def _file_op(summary: str, media: str, params: list) -> dict:
    """A GET that answers a file download, or JSON errors naming the field."""
    errors = {"400": "an unknown query option", "404": "no plan is stored for the date (the "
              "error names it)", "422": "a wrong date or option; each is named"}
    return {"summary": summary, "parameters": params, "responses": {
        "200": {"description": "the file, as an attachment",
                "content": {media: {"schema": {"type": "string"}}}},
        **{code: {"description": text, **_json(_ref("Error"))}
           for code, text in errors.items()}}}


def _export_paths(day: list) -> dict:
    """The downloads of webapp.exports_api."""
    return {
        "/api/days/{date_text}/export.ics": {"get": _file_op(
            "the day's plan as iCalendar (RFC 5545): UIDs stay the same across re-exports, "
            "SEQUENCE rises when the plan changed, dropped visits come CANCELLED",
            "text/calendar", [*day, *_EXPORT_OPTIONS])},
        "/api/days/{date_text}/export.gpx": {"get": _file_op(
            "the day's loop as GPX 1.1: visits as waypoints, the loop as a route",
            "application/gpx+xml", day)},
        "/api/days/{date_text}/export.csv": {"get": _file_op(
            "the day's stops as CSV (UTF-8 with BOM), home first and last", "text/csv", day)},
        "/api/weeks/{date_text}/export.ics": {"get": _file_op(
            "every planned day of the week starting on this Monday, as one iCalendar file",
            "text/calendar", [{**_DATE, "description": "the Monday, YYYY-MM-DD"},
                              *_EXPORT_OPTIONS])},
    }



_WEEKDAY = {"enum": list(WEEKDAYS)}
_MONDAY = {"name": "monday_text", "in": "path", "required": True,
           "schema": {"type": "string", "format": "date"},
           "description": "the week's Monday, YYYY-MM-DD (another weekday is a 422 naming it)"}
_WEEK_SCHEMAS = {
    "WeekSolve": {**_object({
        "clients": {"type": "array", "minItems": 1, "items": {"oneOf": [
            {"type": "integer", "description": "a client id: one visit"},
            _object({"client_id": {"type": "integer"},
                     "visits": {"type": "integer", "minimum": 1, "maximum": 7,
                                "description": "at most one a working day"},
                     "min_gap_days": {"type": "integer", "minimum": 1, "maximum": 6,
                                      "description": "working days between repeated visits"}},
                    required=("client_id",))]}},
        "days": {"type": "array", "items": _WEEKDAY, "minItems": 1,
                 "description": "the working days; default mon..fri"},
        "max_visits": {"type": ["integer", "null"], "minimum": 1, "maximum": 40},
        "max_work_min": {"type": ["number", "null"], "exclusiveMinimum": 0, "maximum": 1440,
                         "description": "most minutes from leaving home to coming back"},
        "pins": {"type": "object", "additionalProperties": {"oneOf": [_WEEKDAY,
                                                                      {"type": "null"}]},
                 "description": "client id -> the working day it must be on"}},
        required=("clients",)),
        "description": "the week to work out; an empty body works the stored week out again"},
    "WeekQuote": _object({"client_id": {"type": "integer"},
                          "from": {**_WEEKDAY, "description": "which of its days it would "
                                   "leave (needed only when it is on several)"},
                          "from_date": {"type": "string", "format": "date",
                                        "description": "price days from this date on "
                                        "(default: today when inside the week)"}},
                         required=("client_id",)),
    "WeekMove": _object({"client_id": {"type": "integer"}, "to": _WEEKDAY,
                         "from": {**_WEEKDAY, "description": "the day it leaves, when on "
                                  "several"},
                         "pin": {"type": "boolean", "description": "keep it on the new day "
                                 "when the week is worked out again (default true)"}},
                        required=("client_id", "to")),
    "WeekPin": _object({"client_id": {"type": "integer"},
                        "day": {"oneOf": [_WEEKDAY, {"type": "null"}]}},
                       required=("client_id", "day")),
    "Week": {"type": "object", "description": "spec (days, caps, clients due with pins), days "
             "(per working day: visits in order, km, drive minutes, return, proof, colour and "
             "dash of its loop on the map), totals, proof (proven best week, or at most X % "
             "above the best; changed_text after moves by hand), unplaced, map_url, job"},
}


def _week_paths() -> dict:
    """The routes of webapp.week_api."""
    week = [_MONDAY]
    return {
        "/api/weeks/{monday_text}": {"get": _op(
            "the week: each working day's visits, km and proof, and the week's proof",
            ok="Week", params=week)},
        "/api/weeks/{monday_text}/solve": {"post": _op(
            "start spreading the clients due over the working days (each day's plan is "
            "stored for the day screen); poll the job", body="WeekSolve", ok="Job",
            status="202", params=week, errors=("404", "409", "422"))},
        "/api/weeks/{monday_text}/quote": {"post": _op(
            "start pricing one client on each remaining working day, cheapest first "
            "(nothing is stored)", body="WeekQuote", ok="Job", status="202", params=week,
            errors=("404", "422"))},
        "/api/weeks/{monday_text}/move": {"post": _op(
            "start moving a visit to another working day, or booking a client who calls; "
            "both days are planned again", body="WeekMove", ok="Job", status="202",
            params=week, errors=("404", "422"))},
        "/api/weeks/{monday_text}/pins": {"put": _op(
            "pin a client due this week to a working day, or unpin it (day null)",
            body="WeekPin", ok="Week", params=week, errors=("404", "422"))},
    }


def spec() -> dict:
    """The whole description; field names and rules match the handlers in webapp.api."""
    client_id, day = _id("client_id"), [_DATE]
    return {
        "openapi": "3.1.0",
        "info": {"title": "Rondo laptop API", "version": "1",
                 "description": "Served on 127.0.0.1 for the phone page. Every error is JSON "
                 "with `error`, `message` and, for input, `fields` naming each wrong field. "
                 f"Client CSV columns: {','.join(CSV_COLUMNS)} (or `location` instead of "
                 "lat/lon; `duration_min` for visit_min; `windows` for every weekday). "
                 "A body over 2 MiB is refused with 413; a day solve takes at most "
                 f"{MAX_VISITS_PER_SOLVE} visits."},
        "paths": {
            "/api/settings": {
                "get": _op("the rep's settings", ok="Settings", errors=()),
                "put": _op("change settings; fields left out keep their value",
                           body="SettingsChange", ok="Settings", errors=("409", "422"))},
            "/api/parse-location": {"post": {
                **_op("read a typed or pasted position and echo it back",
                      body=None, ok="Position"),
                "requestBody": {"required": True, **_json(_object(
                    {"text": _LOCATION}, required=("text",)))}}},
            "/api/clients": {
                "get": _op("the client book by name", ok=None, errors=("422",), params=[
                    {"name": "q", "in": "query", "schema": {"type": "string"},
                     "description": "part of the name or notes"},
                    {"name": "active", "in": "query", "schema": {"enum": ["true", "false"]}}]),
                "post": _op("add a client", body="ClientNew", ok="Client", status="201")},
            "/api/clients/{client_id}": {
                "get": _op("one client", ok="Client", params=[client_id], errors=("404",)),
                "put": _op("change a client (active: false deactivates it); windows, when "
                           "given, replaces all weekdays", body="ClientChange", ok="Client",
                           params=[client_id], errors=("404", "409", "422"))},
            "/api/clients.csv": {"get": {"summary": "export the client book as CSV",
                                         "responses": {"200": {"description": "text/csv"}}}},
            "/api/clients/import": {"post": {
                "summary": "import a CSV (body text/csv, or multipart field 'file'): rows "
                           "update clients of the same name or add new ones; one bad cell "
                           "and nothing is stored",
                "requestBody": {"content": {"text/csv": {"schema": {"type": "string"}},
                                            "multipart/form-data": {"schema": {
                                                "type": "object", "properties": {
                                                    "file": {"type": "string",
                                                             "format": "binary"}}}}}},
                "responses": {"200": {"description": "counts of created and updated"},
                              "422": {"description": "each bad cell by line and column",
                                      **_json(_ref("Error"))}}}},
            "/api/drives": {
                "get": _op("the drives the rep entered", errors=()),
                "put": _op("enter or correct a drive, one way or both ways",
                           body="DriveEntry", errors=("404", "422"))},
            "/api/drives/{drive_id}": {"delete": _op("forget an entered drive", status="204",
                                                     params=[_id("drive_id")],
                                                     errors=("404",))},
            "/api/days": {"get": _op("dates that have a plan", errors=())},
            "/api/days/{date_text}": {"get": _op("the day: choices, done visits, latest plan",
                                                 ok="Day", params=day)},
            "/api/days/{date_text}/visits": {
                "put": {**_op("choose the day's visits", ok="Day", params=day,
                              errors=("400", "404", "422")),
                        "requestBody": {"required": True, **_json(_object(
                            {"client_ids": {"type": "array", "items": {"type": "integer"},
                                            "maxItems": MAX_VISITS_PER_SOLVE}},
                            required=("client_ids",)))}},
                "post": {**_op("add one visit (a last-minute one unless late is false); "
                               "with an Idempotency-Key it is applied at most once",
                               ok="Day", status="201", params=[*day, _IDEMPOTENCY_KEY],
                               errors=("400", "404", "422")),
                         "requestBody": {"required": True, **_json(_object(
                             {"client_id": {"type": "integer"}, "late": {"type": "boolean"}},
                             required=("client_id",)))}}},
            "/api/days/{date_text}/solve": {"post": _op(
                "start solving the whole day from home; poll the job", ok="Job",
                status="202", params=day, errors=("409", "422", "429"))},
            "/api/days/{date_text}/replan": {"post": _op(
                "start re-planning the rest of the day from here and now", body="Replan",
                ok="Job", status="202", params=day, errors=("404", "422", "429"))},
            "/api/days/{date_text}/quote": {"post": _op(
                "start pricing a last-minute visit (nothing is stored)", body="Quote",
                ok="Job", status="202", params=day, errors=("404", "422", "429"))},
            "/api/days/{date_text}/done/{client_id}": {
                "put": {**_op("mark a visit done with its real times", ok="Day",
                              params=[*day, client_id], errors=("400", "404", "422")),
                        "requestBody": {"required": True, **_json(_object(
                            {"arrived": _CLOCK, "departed": _CLOCK},
                            required=("arrived", "departed")))}},
                "delete": _op("undo a done mark", ok="Day", params=[*day, client_id],
                              errors=("404", "422"))},
            **_export_paths(day),
            **_week_paths(),
            "/api/solves/{solve_id}": {"get": _op("one stored solve with its inputs",
                                                  params=[_id("solve_id")], errors=("404",))},
            "/api/jobs/{job_id}": {
                "get": _op("poll a job", ok="Job", errors=("404",), params=[
                    {"name": "job_id", "in": "path", "required": True,
                     "schema": {"type": "string"}}]),
                "delete": _op("stop waiting for a job; its answer is discarded", ok="Job",
                              errors=("404",), params=[
                                  {"name": "job_id", "in": "path", "required": True,
                                   "schema": {"type": "string"}}])},
        },
        "components": {"schemas": {**_SCHEMAS, **_WEEK_SCHEMAS}},
    }
