"""Reading request bodies field by field, collecting every mistake before answering."""

from __future__ import annotations

import datetime as dt
import math
import re

from flask import request
from werkzeug.exceptions import NotFound
from werkzeug.routing import IntegerConverter

from solver.clock import parse_clock
from solver.errors import InvalidInput

from .errors import FieldErrors

__all__ = ["Checker", "json_object", "parse_date", "is_id", "MAX_ID"]

_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")
MAX_ID = 2**63 - 1  # SQLite's INTEGER PRIMARY KEY is a signed 64-bit number
_SKIP = object()


def json_object(*, allowed: set[str] | None = None) -> dict:
    """The request body as a JSON object, or a 400 saying what it is instead."""
    try:
        body = request.get_json(silent=True)
    except RecursionError:  # json gives up on very deep nesting with this, not ValueError
        body = None
    if body is None:
        raise FieldErrors.one("body", "the request body must be a JSON object "
                              "(Content-Type: application/json)", status=400)
    if not isinstance(body, dict):
        raise FieldErrors.one("body", f"the request body is a JSON {type(body).__name__}; "
                              "expected an object", status=400)
    if allowed is not None:
        unknown = sorted(set(body) - allowed)
        if unknown:
            raise FieldErrors([{"field": k, "message": f"unknown field {k!r}; expected one of "
                                f"{', '.join(sorted(allowed))}", "value": None} for k in unknown],
                              status=400)
    return body


def parse_date(text: object, *, field: str = "date") -> dt.date:
    """A strict ISO calendar date 'YYYY-MM-DD'."""
    if not isinstance(text, str) or not _DATE.fullmatch(text):
        raise InvalidInput(f"{field} {text!r} is not a date; expected YYYY-MM-DD such as "
                           "2026-03-02", field=field, value=text)
    try:
        return dt.date.fromisoformat(text)
    except ValueError:
        raise InvalidInput(f"{field} {text!r} is not a day of the calendar", field=field,
                           value=text) from None


class IdConverter(IntegerConverter):
    """A row id in a URL; a number no row can have (0, or beyond SQLite's range) is a 404."""

    def to_python(self, value: str) -> int:
        number = super().to_python(value)
        if not 1 <= number <= MAX_ID:
            raise NotFound()
        return number


def is_id(value) -> bool:
    """A value that can name a stored row: a whole number SQLite can hold, not true/false."""
    return isinstance(value, int) and not isinstance(value, bool) and 1 <= value <= MAX_ID


class Checker:
    """Runs one check per field and keeps every failure, so one reply names them all."""

    def __init__(self, body: dict | None = None):
        self.body = body if body is not None else {}
        self.errors: list[dict] = []

    def fail(self, field: str, message: str, value=None) -> None:
        self.errors.append({"field": field, "message": message, "value": value})

    def run(self, name: str, check, /, *args, **kwargs):
        """``check(*args, **kwargs)``; an InvalidInput is recorded under its field or ``name``."""
        try:
            return check(*args, **kwargs)
        except InvalidInput as exc:
            self.fail(exc.field or name, str(exc), _plain(exc.value))
            return _SKIP
        except OverflowError:  # a whole number too large to become a float
            self.fail(name, f"{name} holds a number too large to use")
            return _SKIP

    def done(self) -> None:
        if self.errors:
            raise FieldErrors(self.errors)

    def has(self, field: str) -> bool:
        return field in self.body

    # Typed readers: each returns the value, or records the failure and returns None.

    def text(self, field: str, *, max_len: int, required: bool = False, value=_SKIP):
        value = self.body.get(field) if value is _SKIP else value
        if value is None and not required:
            return ""
        if not isinstance(value, str):
            self.fail(field, f"{field} must be text; got {_kind(value)}", _plain(value))
            return None
        value = value.strip()
        try:
            value.encode("utf-8")
        except UnicodeEncodeError:  # JSON allows lone surrogates; text cannot hold them
            self.fail(field, f"{field} holds characters that are not valid text")
            return None
        if required and not value:
            self.fail(field, f"{field} must not be empty", value)
            return None
        if len(value) > max_len:
            self.fail(field, f"{field} has {len(value)} characters; at most {max_len} fit",
                      value[:40])
            return None
        if any(ord(c) < 32 and c not in "\n\t" for c in value):
            self.fail(field, f"{field} holds control characters", value[:40])
            return None
        return value

    def number(self, field: str, *, low: float, high: float, integer: bool = False,
               low_open: bool = False, value=_SKIP, unit: str = ""):
        value = self.body.get(field) if value is _SKIP else value
        unit_text = f" {unit}" if unit else ""
        kind = "a whole number" if integer else "a number"
        low_text = f"more than {low:g}" if low_open else f"{low:g}"
        expected = (f"{kind} above {low:g} and at most {high:g}{unit_text}" if low_open
                    else f"{kind} in {low_text}..{high:g}{unit_text}")
        if isinstance(value, bool) or not isinstance(value, int | float):
            self.fail(field, f"{field} is {_kind(value)}; expected {expected}", _plain(value))
            return None
        if isinstance(value, float) and not math.isfinite(value) or (
                integer and value != int(value)):
            self.fail(field, f"{field} is {value!r}; expected {expected}", _plain(value))
            return None
        too_low = value <= low if low_open else value < low
        if too_low or value > high:
            self.fail(field, f"{field} is {value!r}; expected {expected}", value)
            return None
        return int(value) if integer else float(value)

    def boolean(self, field: str, value=_SKIP):
        value = self.body.get(field) if value is _SKIP else value
        if not isinstance(value, bool):
            self.fail(field, f"{field} is {_kind(value)}; expected true or false", _plain(value))
            return None
        return value

    def clock(self, field: str, value=_SKIP):
        value = self.body.get(field) if value is _SKIP else value
        result = self.run(field, parse_clock, value, field=field)
        return None if result is _SKIP else result

    def choice(self, field: str, options, value=_SKIP):
        value = self.body.get(field) if value is _SKIP else value
        if not isinstance(value, str) or value not in options:
            self.fail(field, f"{field} is {_plain(value)!r}; expected one of "
                      f"{', '.join(options)}", _plain(value))
            return None
        return value


def _kind(value) -> str:
    if value is None:
        return "missing or null"
    names = {bool: "true/false", int: "a number", float: "a number", str: "text",
             list: "a list", dict: "an object"}
    return f"{names.get(type(value), type(value).__name__)} {_plain(value)!r}"


def _plain(value):
    if value is None or isinstance(value, bool | int | str):
        return value if not isinstance(value, str) else value[:80]
    if isinstance(value, float):
        return value if math.isfinite(value) else repr(value)
    if isinstance(value, list | tuple | dict):
        return repr(value)[:80]
    return repr(value)[:80]


SKIP = _SKIP
