"""One error handler: domain errors become 4xx JSON for /api and a plain page otherwise."""

from __future__ import annotations

import logging

from flask import current_app, jsonify, make_response, render_template, request
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge

from solver.errors import Infeasible, InvalidInput, SolverError, SolverUnavailable

__all__ = ["FieldErrors", "NotFound", "Conflict", "init_app", "error_body"]

log = logging.getLogger(__name__)
_REFUSALS = (401, 403, 429)  # not paired, not allowed, too many pairing attempts


class FieldErrors(Exception):
    """One or more fields of a request were wrong; each entry names the field and why."""

    def __init__(self, errors: list[dict], *, status: int = 422):
        super().__init__("; ".join(e["message"] for e in errors))
        self.errors = errors
        self.status = status

    @classmethod
    def one(cls, field: str, message: str, value=None, *, status: int = 422) -> FieldErrors:
        return cls([{"field": field, "message": message, "value": _jsonable(value)}],
                   status=status)


class NotFound(Exception):
    """An id in the URL or the body names nothing stored."""

    def __init__(self, what: str, key, *, field: str | None = None):
        super().__init__(f"{what} {key!r} does not exist")
        self.what, self.key, self.field = what, key, field


class Conflict(Exception):
    """The request is well formed but clashes with the stored state (e.g. a plan being solved).

    ``current``, when given, is the record as stored now, sent back so the change can be redone.
    """

    def __init__(self, message: str, *, current: dict | None = None):
        super().__init__(message)
        self.current = current


def _jsonable(value):
    if value is None or isinstance(value, bool | int | float | str):
        return value
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    return repr(value)


def error_body(exc: Exception) -> tuple[dict, int]:
    """The JSON body and HTTP status for an exception."""
    if isinstance(exc, FieldErrors):
        return {"error": "invalid_input", "message": str(exc), "fields": exc.errors}, exc.status
    if isinstance(exc, InvalidInput):
        field = exc.field or "body"
        entry = {"field": field, "message": str(exc), "value": _jsonable(exc.value)}
        return {"error": "invalid_input", "message": str(exc), "fields": [entry]}, 422
    if isinstance(exc, Infeasible):
        return {"error": "infeasible", "message": str(exc),
                "explanation": _jsonable(exc.explanation)}, 422
    if isinstance(exc, NotFound):
        body = {"error": "not_found", "message": str(exc)}
        if exc.field:
            body["fields"] = [{"field": exc.field, "message": str(exc), "value": exc.key}]
        return body, 404
    if isinstance(exc, Conflict):
        body = {"error": "conflict", "message": str(exc)}
        if getattr(exc, "current", None) is not None:
            body["current"] = exc.current
        return body, 409
    if isinstance(exc, SolverUnavailable):
        return {"error": "solver_unavailable", "message": str(exc)}, 503
    if isinstance(exc, SolverError):
        return {"error": "solver_error", "message": str(exc)}, 422
    if isinstance(exc, RequestEntityTooLarge):
        return _too_large(), 413
    if isinstance(exc, HTTPException):
        return {"error": exc.name.lower().replace(" ", "_"), "message": exc.description}, exc.code
    return {"error": "internal", "message": "something went wrong on the laptop; see its log"}, 500


def _too_large() -> dict:
    """Name the limit, so the rep knows to send a smaller file rather than try again."""
    limit = current_app.config.get("MAX_CONTENT_LENGTH")
    size = f"at most {limit / 2**20:g} MiB" if limit else "less"
    message = f"the request is too large; this server takes {size} in one request"
    return {"error": "request_entity_too_large", "message": message,
            "fields": [{"field": "body", "message": message, "value": request.content_length}]}


def _respond(exc: Exception):
    body, status = error_body(exc)
    if status >= 500 and not isinstance(exc, HTTPException):
        log.error("unexpected error on %s %s", request.method, request.path, exc_info=exc)
    if request.path.startswith("/api/") or request.path == "/api":
        response = jsonify(body)
    elif status in _REFUSALS:
        # A device that is not let in gets a page without the tab bar of screens it cannot open.
        response = render_template("pair.html", view="refused", error=body, status=status)
    else:
        from .pages import SCREENS

        response = render_template("error.html", error=body, status=status, screens=SCREENS,
                                   screen="error", is_demo=False, has_home=True)
    response = make_response(response, status)
    if isinstance(exc, HTTPException):
        # The status's own fields: WWW-Authenticate for 401 (RFC 9110 §15.5.2), Allow for 405
        # (§15.5.6), Retry-After for 429 (RFC 6585 §4).
        for name, value in exc.get_headers():
            if name.lower() != "content-type":
                response.headers[name] = value
    return response


def init_app(app) -> None:
    """Route every exception, expected or not, through the one handler."""
    app.register_error_handler(Exception, _respond)
