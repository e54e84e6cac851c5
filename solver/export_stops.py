"""One day's plan as the plain stops every export writes: home, the visits in order, home.

:func:`export_day` turns a :class:`~solver.day.DayPlan` plus the positions, notes and stable
client keys into an :class:`ExportDay`; the iCalendar, GPX and CSV writers all read that, so
the web app and the command line call one thing and every file tells the same story.

Times stay minutes after local midnight of ``ExportDay.day`` (read as wall-clock time in the
rep's time zone by the calendar writer). Text is made safe once, here: ``\\r\\n`` and ``\\r``
become ``\\n``, and characters that neither RFC 5545 TEXT (§3.3.11, CONTROL excluded) nor
XML 1.0 (§2.2 Char) allow become U+FFFD.

Stable identity (what keeps calendar UIDs the same across re-plans): each visit has a
``uid_key``, the caller's client key for that visit (its name when none is given). The key,
not the node number, identifies the visit: node numbers are renumbered by every re-plan.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime

from .coordinates import Position
from .day import DayPlan
from .errors import InvalidInput

__all__ = [
    "STOP_KINDS",
    "ExportStop",
    "ExportDay",
    "export_day",
    "dropped_stops",
    "clean_text",
    "utc_stamp",
]

STOP_KINDS = ("start", "visit", "home")
_HOME_KEY = "home"
# RFC 5545 §3.3.11 excludes CONTROL (%x00-08 / %x0A-1F / %x7F) from TEXT except HTAB and the
# escaped newline; XML 1.0 §2.2 excludes the same C0 controls, surrogates and U+FFFE/U+FFFF.
_NOT_TEXT = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f\ud800-\udfff\ufffe\uffff]")


@dataclass(frozen=True)
class ExportStop:
    """One row of an exported day.

    ``kind`` is "start" (where the day begins: home, or where the rep stands when
    re-planning), "visit", or "home" (the return). ``order`` is 0 for the start, 1..n for the
    visits in driving order and n+1 for the return. ``arrive_min`` is None for the start,
    ``start_min`` is None except for visits, ``depart_min`` is None for the return. ``leg_km``
    and ``leg_min`` are the drive that ends at this stop (0 for the start).
    """

    order: int
    kind: str
    uid_key: str
    name: str
    position: Position
    arrive_min: float | None
    start_min: float | None
    depart_min: float | None
    wait_min: float = 0.0
    leg_km: float = 0.0
    leg_min: float = 0.0
    notes: str = ""
    break_before: tuple[float, float] | None = None

    @property
    def leave_min(self) -> float | None:
        """When the rep sets off for this stop (None for the start)."""
        return None if self.arrive_min is None else self.arrive_min - self.leg_min


@dataclass(frozen=True)
class ExportDay:
    """A dated day ready to export: ``stops`` runs start, visits..., home.

    ``sequence`` is the calendar revision of this day (RFC 5545 §3.8.7.4) and ``cancelled``
    holds visits exported before for this day and dropped since (see :func:`dropped_stops`).
    ``withdraw_drives`` says an earlier export of this day held drive events that this one,
    exported without them, must cancel.
    """

    day: date
    stops: tuple[ExportStop, ...]
    sequence: int = 0
    cancelled: tuple[ExportStop, ...] = ()
    withdraw_drives: bool = False

    def __post_init__(self) -> None:
        if isinstance(self.day, datetime) or not isinstance(self.day, date):
            raise InvalidInput(f"day {self.day!r} is not a calendar date (datetime.date)",
                               field="day", value=self.day)
        _check_sequence(self.sequence)

    @property
    def visits(self) -> tuple[ExportStop, ...]:
        return tuple(stop for stop in self.stops if stop.kind == "visit")


def clean_text(text: object, *, field: str) -> str:
    """``text`` with line ends made ``\\n`` and characters not allowed in iCalendar TEXT or
    XML 1.0 replaced by U+FFFD; a value that is not a str raises InvalidInput naming ``field``.
    """
    if not isinstance(text, str):
        raise InvalidInput(f"{field} {text!r} is a {type(text).__name__}; expected text",
                           field=field, value=text)
    return _NOT_TEXT.sub("\ufffd", text.replace("\r\n", "\n").replace("\r", "\n"))


def utc_stamp(stamp: object, *, field: str = "stamp") -> datetime:
    """``stamp`` (an aware datetime; now when None) in UTC to the whole second."""
    if stamp is None:
        return datetime.now(UTC).replace(microsecond=0)
    if not isinstance(stamp, datetime) or stamp.utcoffset() is None:
        raise InvalidInput(f"{field} {stamp!r} is not a datetime with a time zone",
                           field=field, value=stamp)
    return stamp.astimezone(UTC).replace(microsecond=0)


def export_day(
    day: date,
    plan: DayPlan,
    *,
    positions: Mapping[int, Position],
    notes: Mapping[int, str] | None = None,
    keys: Mapping[int, str] | None = None,
    sequence: int = 0,
    cancelled: Sequence[ExportStop] = (),
    home_name: str = "Home",
    start_name: str = "Start",
    withdraw_drives: bool = False,
) -> ExportDay:
    """The stops of ``plan`` on ``day``, home (node 0) last, the plan's start first.

    ``positions`` must hold node 0, ``plan.start_node`` and every visit node; ``notes`` and
    ``keys`` are optional per visit node. Keys must be distinct within the day. The start is
    named ``home_name`` when the plan starts at home, else ``start_name``. Raises InvalidInput
    naming the field (``day``, ``positions[<node>]``, ``keys[<node>]``, ``sequence``,
    ``cancelled``...) and the value for anything that cannot be exported.
    """
    if not isinstance(plan, DayPlan):
        raise InvalidInput(f"plan is a {type(plan).__name__}; expected a DayPlan", field="plan",
                           value=plan)
    notes = {} if notes is None else notes
    keys = {} if keys is None else keys
    home_name = _name(home_name, field="home_name")
    start_name = _name(start_name, field="start_name")
    total = len(plan.visits)
    start_is_home = plan.start_node == 0
    stops = [ExportStop(
        order=0, kind="start", uid_key=_HOME_KEY if start_is_home else "start",
        name=home_name if start_is_home else start_name,
        position=_position(positions, plan.start_node, home_name if start_is_home else start_name),
        arrive_min=None, start_min=None, depart_min=_minutes(plan.start_min, field="start_min"))]
    seen: dict[str, int] = {}
    for order, visit in enumerate(plan.visits, start=1):
        key = _key(keys, visit, seen)
        stops.append(ExportStop(
            order=order, kind="visit", uid_key=key,
            name=_name(visit.name, field=f"visits[{order - 1}].name"),
            position=_position(positions, visit.node, visit.name),
            arrive_min=_minutes(visit.arrive_min, field=f"visits[{order - 1}].arrive_min"),
            start_min=_minutes(visit.start_min, field=f"visits[{order - 1}].start_min"),
            depart_min=_minutes(visit.depart_min, field=f"visits[{order - 1}].depart_min"),
            wait_min=_amount(visit.wait_min, field=f"visits[{order - 1}].wait_min"),
            leg_km=_amount(visit.leg_km, field=f"visits[{order - 1}].leg_km"),
            leg_min=_amount(visit.leg_min, field=f"visits[{order - 1}].leg_min"),
            notes=clean_text(notes.get(visit.node, ""), field=f"notes[{visit.node}]"),
            break_before=visit.break_before))
    stops.append(ExportStop(
        order=total + 1, kind="home", uid_key=_HOME_KEY, name=home_name,
        position=_position(positions, 0, home_name),
        arrive_min=_minutes(plan.return_min, field="return_min"), start_min=None,
        depart_min=None, leg_km=_amount(plan.return_leg_km, field="return_leg_km"),
        leg_min=_amount(plan.return_leg_min, field="return_leg_min"),
        break_before=plan.break_before_return))
    return ExportDay(day=day, stops=tuple(stops), sequence=sequence,
                     cancelled=_check_cancelled(cancelled, seen),
                     withdraw_drives=bool(withdraw_drives))


def dropped_stops(previous: Sequence[ExportStop], current: ExportDay) -> tuple[ExportStop, ...]:
    """The visits of an earlier export of the same day that ``current`` no longer holds.

    Pass them as ``cancelled`` to :func:`export_day`; the calendar then marks them cancelled
    under the UIDs they were first exported with. A visit the rep has already done is not
    dropped: leave it out of ``previous`` when re-planning from the road.
    """
    kept = {stop.uid_key for stop in current.visits}
    return tuple(stop for stop in previous if stop.kind == "visit" and stop.uid_key not in kept)


def _check_sequence(sequence: object) -> None:
    if isinstance(sequence, bool) or not isinstance(sequence, int) or sequence < 0:
        raise InvalidInput(f"sequence {sequence!r} is not a whole number >= 0 (RFC 5545 "
                           "§3.8.7.4)", field="sequence", value=sequence)


def _name(name: object, *, field: str) -> str:
    text = clean_text(name, field=field)
    if not text.strip():
        raise InvalidInput(f"{field} is empty; a stop needs a name", field=field, value=name)
    return text


def _key(keys: Mapping[int, str], visit, seen: dict[str, int]) -> str:
    field = f"keys[{visit.node}]"
    key = keys.get(visit.node, visit.name)
    if not isinstance(key, str) or not key.strip():
        raise InvalidInput(f"visit {visit.name!r} has key {key!r}; expected non-empty text",
                           field=field, value=key)
    if key in seen:
        raise InvalidInput(f"visits at nodes {seen[key]} and {visit.node} share the key {key!r};"
                           " each visit of a day needs its own", field=field, value=key)
    seen[key] = visit.node
    return key


def _position(positions: Mapping[int, Position], node: int, name: str) -> Position:
    field = f"positions[{node}]"
    position = positions.get(node)
    if position is None:
        raise InvalidInput(f"{name!r} (node {node}) has no position", field=field, value=None)
    if not isinstance(position, Position):
        raise InvalidInput(f"{name!r} (node {node}) has position {position!r}; expected a "
                           "Position", field=field, value=position)
    return position


def _minutes(value: object, *, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not (
        math.isfinite(value) and 0 <= value <= 24 * 60
    ):
        raise InvalidInput(f"{field} {value!r} is not a time of day in minutes 0..1440",
                           field=field, value=value)
    return float(value)


def _amount(value: object, *, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not (
        math.isfinite(value) and value >= 0
    ):
        raise InvalidInput(f"{field} {value!r} is not a finite number >= 0", field=field,
                           value=value)
    return float(value)


def _check_cancelled(cancelled: Sequence[ExportStop],
                     kept: Mapping[str, int]) -> tuple[ExportStop, ...]:
    out: list[ExportStop] = []
    for index, stop in enumerate(cancelled):
        field = f"cancelled[{index}]"
        if not isinstance(stop, ExportStop) or stop.kind != "visit":
            raise InvalidInput(f"{field} {stop!r} is not a visit stop of an earlier export",
                               field=field, value=stop)
        if stop.uid_key in kept:
            raise InvalidInput(f"{field} {stop.name!r} (key {stop.uid_key!r}) is still in the "
                               "plan; it cannot be cancelled too", field=field, value=stop.uid_key)
        if any(other.uid_key == stop.uid_key for other in out):
            raise InvalidInput(f"{field} cancels the key {stop.uid_key!r} a second time",
                               field=field, value=stop.uid_key)
        out.append(stop)
    return tuple(out)
