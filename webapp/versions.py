"""Record versions: every change to a client or the settings raises its number by one.

A change may name the version it was made from; once that is out of date the change is
refused with 409 and the record as it now stands, so nobody's edit vanishes unseen. A change
without a version is applied over whatever is stored (last writer wins), as before.
"""

from __future__ import annotations

from collections.abc import Callable

from .errors import Conflict
from .fields import MAX_ID, Checker

__all__ = ["FIELD", "read", "ensure_current"]

FIELD = "version"


def read(check: Checker, body: dict) -> int | None:
    """The version the change was made from, None when the body names none."""
    if FIELD not in body:
        return None
    return check.number(FIELD, low=1, high=MAX_ID, integer=True)


def ensure_current(expected: int | None, what: str, current: Callable[[], dict]) -> None:
    """Refuse with the stored record when ``expected`` is not its version any more."""
    if expected is None:
        return
    record = current()
    if record[FIELD] != expected:
        raise Conflict(f"{what} changed since version {expected}; it is now version "
                       f"{record[FIELD]}. Look at the current values and make the change again",
                       current=record)
