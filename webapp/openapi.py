"""The API's OpenAPI 3.1 description, served at /api/openapi.json."""

from __future__ import annotations

from .clients import CSV_COLUMNS, WEEKDAYS

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
        "time_limit_s": {"type": "number"}, "is_demo": {"type": "boolean"}}},
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
        "time_limit_s": {"type": "number", "exclusiveMinimum": 0, "maximum": 300}}),
    "Client": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"},
        "location": {"$ref": "#/components/schemas/Position"},
        "visit_min": {"type": "integer"}, "windows": _WINDOWS, "notes": {"type": "string"},
        "active": {"type": "boolean"}, "updated_at": {"type": "string"}}},
    "ClientNew": _object({
        "name": {"type": "string", "minLength": 1, "maxLength": 120}, "location": _LOCATION,
        "visit_min": {"type": "integer", "minimum": 1, "maximum": 720}, "windows": _WINDOWS,
        "notes": {"type": "string", "maxLength": 2000}, "active": {"type": "boolean"}},
        required=("name", "location", "visit_min")),
    "ClientChange": _object({
        "name": {"type": "string", "minLength": 1, "maxLength": 120}, "location": _LOCATION,
        "visit_min": {"type": "integer", "minimum": 1, "maximum": 720}, "windows": _WINDOWS,
        "notes": {"type": "string", "maxLength": 2000}, "active": {"type": "boolean"}}),
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
        "id": {"type": "string"}, "kind": {"enum": ["day", "replan", "quote"]},
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
                                                 "422": "a field is wrong; each is named"}[code],
                                 **_json(_ref("Error"))}
    return op


def _id(name: str) -> dict:
    return {"name": name, "in": "path", "required": True, "schema": {"type": "integer"}}


def spec() -> dict:
    """The whole description; field names and rules match the handlers in webapp.api."""
    client_id, day = _id("client_id"), [_DATE]
    return {
        "openapi": "3.1.0",
        "info": {"title": "Rondo laptop API", "version": "1",
                 "description": "Served on 127.0.0.1 for the phone page. Every error is JSON "
                 "with `error`, `message` and, for input, `fields` naming each wrong field. "
                 f"Client CSV columns: {','.join(CSV_COLUMNS)} (or `location` instead of "
                 "lat/lon; `duration_min` for visit_min; `windows` for every weekday)."},
        "paths": {
            "/api/settings": {
                "get": _op("the rep's settings", ok="Settings", errors=()),
                "put": _op("change settings; fields left out keep their value",
                           body="SettingsChange", ok="Settings")},
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
                           params=[client_id], errors=("404", "422"))},
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
                            {"client_ids": {"type": "array", "items": {"type": "integer"}}},
                            required=("client_ids",)))}},
                "post": {**_op("add one visit (a last-minute one unless late is false)",
                               ok="Day", status="201", params=day,
                               errors=("400", "404", "422")),
                         "requestBody": {"required": True, **_json(_object(
                             {"client_id": {"type": "integer"}, "late": {"type": "boolean"}},
                             required=("client_id",)))}}},
            "/api/days/{date_text}/solve": {"post": _op(
                "start solving the whole day from home; poll the job", ok="Job",
                status="202", params=day, errors=("409", "422"))},
            "/api/days/{date_text}/replan": {"post": _op(
                "start re-planning the rest of the day from here and now", body="Replan",
                ok="Job", status="202", params=day, errors=("404", "422"))},
            "/api/days/{date_text}/quote": {"post": _op(
                "start pricing a last-minute visit (nothing is stored)", body="Quote",
                ok="Job", status="202", params=day, errors=("404", "422"))},
            "/api/days/{date_text}/done/{client_id}": {
                "put": {**_op("mark a visit done with its real times", ok="Day",
                              params=[*day, client_id], errors=("400", "404", "422")),
                        "requestBody": {"required": True, **_json(_object(
                            {"arrived": _CLOCK, "departed": _CLOCK},
                            required=("arrived", "departed")))}},
                "delete": _op("undo a done mark", ok="Day", params=[*day, client_id],
                              errors=("404", "422"))},
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
        "components": {"schemas": _SCHEMAS},
    }
