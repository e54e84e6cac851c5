"""A working day: visit durations, time windows, a break, and the time to be home by.

The data model of one day's plan and the rules that make a plan feasible:

- the rep leaves ``start_node`` (home, or where they stand when re-planning) at
  ``start_min`` and must be home by ``rules.end_min``;
- each visit lasts ``service_min`` and must *start* inside one of its windows
  (common practice in field sales: the client receives you within its hours);
  arriving early means waiting, which is allowed;
- an optional break of ``duration_min`` lies inside ``[earliest_min, latest_min]``;
  it is taken on arrival at a client (before the visit) or before the drive
  home, and is needed only if the rep is still out at ``latest_min − duration_min``;
- the objective is the least driving km (ties broken by the earlier return) or
  the earliest return home (ties broken by fewer km).

:func:`simulate` times a given order under these rules; :mod:`solver.day_exact`
finds the proven best order.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .clock import MINUTES_PER_DAY, Window, format_clock, format_windows
from .errors import InvalidInput

__all__ = [
    "OBJECTIVES",
    "Window",
    "Visit",
    "BreakRule",
    "DayRules",
    "DayProblem",
    "PlannedVisit",
    "DayPlan",
    "earliest_start",
    "simulate",
    "check_day_problem",
]

OBJECTIVES = ("km", "return")
_EPS = 1e-9


@dataclass(frozen=True)
class Visit:
    """One client visit: its name, how long it lasts, and when it may start (empty: any time)."""

    name: str
    service_min: float = 0.0
    windows: tuple[Window, ...] = ()

    def __post_init__(self) -> None:
        # Windows are kept in time order: the earliest-start rule reads them in order.
        try:
            ordered = tuple(sorted(self.windows, key=lambda w: (w.start_min, w.end_min)))
        except (AttributeError, TypeError):
            return  # check_day_problem names the bad window
        object.__setattr__(self, "windows", ordered)


@dataclass(frozen=True)
class BreakRule:
    """A break of ``duration_min`` to be taken inside ``[earliest_min, latest_min]``."""

    duration_min: float
    earliest_min: float
    latest_min: float


@dataclass(frozen=True)
class DayRules:
    """When the day starts and must end, what to minimise, and the break."""

    start_min: float
    end_min: float
    objective: str = "km"
    break_rule: BreakRule | None = None


@dataclass(frozen=True)
class DayProblem:
    """One day to plan. Node 0 of the matrices is home; node k is ``visits[k-1]``.

    Rows after the visits may hold other places (where the rep stands now).
    ``todo`` lists the visit nodes still to do (all when None); ``start_node`` and
    ``start_min`` say where and when the plan begins.
    """

    km: Any
    minutes: Any
    visits: tuple[Visit, ...]
    rules: DayRules
    start_node: int = 0
    start_min: float | None = None
    todo: tuple[int, ...] | None = None
    break_taken: bool = False


@dataclass(frozen=True)
class PlannedVisit:
    """A visit in the plan with its clock times (minutes after midnight)."""

    node: int
    name: str
    arrive_min: float
    wait_min: float
    start_min: float
    depart_min: float
    leg_km: float
    leg_min: float
    break_before: tuple[float, float] | None = None
    windows: tuple[Window, ...] = ()


@dataclass(frozen=True)
class DayPlan:
    """The ordered visits of a day with the return home and the proof figures."""

    visits: tuple[PlannedVisit, ...]
    start_node: int
    start_min: float
    return_min: float
    return_leg_km: float
    return_leg_min: float
    break_before_return: tuple[float, float] | None
    total_km: float
    total_drive_min: float
    total_wait_min: float
    proven_optimal: bool
    lower_bound: float
    gap: float
    seconds: float
    method: str
    objective: str
    stats: dict = field(default_factory=dict)

    @property
    def order(self) -> tuple[int, ...]:
        return tuple(v.node for v in self.visits)

    @property
    def leave_min(self) -> float:
        """The latest departure that keeps every planned start: the first wait spent at home.

        The times of the visits are those of leaving at ``start_min``; leaving at
        ``leave_min`` instead only removes the first visit's wait (unless the break
        was planned on arrival there, which the wait then holds).
        """
        if not self.visits or self.visits[0].break_before is not None:
            return self.start_min
        return self.start_min + self.visits[0].wait_min

    def as_dict(self) -> dict[str, Any]:
        """JSON-ready form; every time also as "HH:MM"."""

        def span(pair):
            return None if pair is None else {"start": format_clock(pair[0]),
                                              "end": format_clock(pair[1])}

        return {
            "visits": [
                {
                    "node": v.node,
                    "name": v.name,
                    "arrive": format_clock(v.arrive_min),
                    "start": format_clock(v.start_min),
                    "depart": format_clock(v.depart_min),
                    "arrive_min": v.arrive_min,
                    "start_min": v.start_min,
                    "depart_min": v.depart_min,
                    "wait_min": round(v.wait_min, 3),
                    "leg_km": round(v.leg_km, 3),
                    "leg_min": round(v.leg_min, 3),
                    "break": span(v.break_before),
                    "windows": format_windows(v.windows),
                    "window_spans": [[w.start_min, w.end_min] for w in v.windows],
                }
                for v in self.visits
            ],
            "start_node": self.start_node,
            "start": format_clock(self.start_min),
            "start_min": self.start_min,
            "leave": format_clock(self.leave_min),
            "leave_min": self.leave_min,
            "return": format_clock(self.return_min),
            "return_min": self.return_min,
            "return_leg_km": round(self.return_leg_km, 3),
            "return_leg_min": round(self.return_leg_min, 3),
            "break_before_return": span(self.break_before_return),
            "total_km": round(self.total_km, 3),
            "total_drive_min": round(self.total_drive_min, 3),
            "total_wait_min": round(self.total_wait_min, 3),
            "proven_optimal": self.proven_optimal,
            "lower_bound": self.lower_bound,
            "gap": self.gap,
            "seconds": self.seconds,
            "method": self.method,
            "objective": self.objective,
            "stats": dict(self.stats),
        }


def earliest_start(windows: Sequence[Window], ready_min: float) -> float | None:
    """The earliest time at or after ``ready_min`` inside a window, or None if all have closed."""
    if not windows:
        return ready_min
    for w in windows:
        if ready_min <= w.end_min + _EPS:
            return max(ready_min, w.start_min)
    return None


def check_day_problem(problem: DayProblem) -> tuple[np.ndarray, np.ndarray, list[int]]:
    """Validate once at the door: the matrices as arrays and the visit nodes still to do."""
    km = _matrix(problem.km, "km")
    minutes = _matrix(problem.minutes, "minutes")
    if km.shape != minutes.shape:
        raise InvalidInput(f"km is {km.shape} but minutes is {minutes.shape}; they must match",
                           field="minutes", value=minutes.shape)
    n_visits = len(problem.visits)
    if km.shape[0] < n_visits + 1:
        raise InvalidInput(
            f"the matrices have {km.shape[0]} rows; home and {n_visits} visits need "
            f"{n_visits + 1}", field="km", value=km.shape)
    names = set()
    for k, visit in enumerate(problem.visits, start=1):
        where = f"visits[{k - 1}]"
        if not isinstance(visit.name, str) or not visit.name.strip():
            raise InvalidInput(f"{where} has no name", field=f"{where}.name", value=visit.name)
        if visit.name in names:
            raise InvalidInput(f"visit {visit.name!r} is listed twice", field=f"{where}.name",
                               value=visit.name)
        names.add(visit.name)
        service = visit.service_min
        if isinstance(service, bool) or not isinstance(service, int | float) or not (
            math.isfinite(service) and 0 <= service <= MINUTES_PER_DAY
        ):
            raise InvalidInput(
                f"visit {visit.name!r} lasts {service!r} min; expected 0..{MINUTES_PER_DAY}",
                field=f"{where}.service_min", value=service)
        for w in visit.windows:
            if not isinstance(w, Window):
                raise InvalidInput(f"visit {visit.name!r} has a window {w!r} that is not a Window",
                                   field=f"{where}.windows", value=w)
        for a, b in zip(visit.windows, visit.windows[1:], strict=False):
            if b.start_min <= a.end_min:
                raise InvalidInput(
                    f"visit {visit.name!r} has overlapping windows {format_windows((a,))} and "
                    f"{format_windows((b,))}; merge them", field=f"{where}.windows",
                    value=format_windows(visit.windows))
    rules = problem.rules
    if rules.objective not in OBJECTIVES:
        raise InvalidInput(
            f"objective {rules.objective!r} is not known; expected one of {', '.join(OBJECTIVES)}",
            field="objective", value=rules.objective)
    for name in ("start_min", "end_min"):
        value = getattr(rules, name)
        if isinstance(value, bool) or not isinstance(value, int | float) or not (
            0 <= value <= MINUTES_PER_DAY
        ):
            raise InvalidInput(f"day {name} {value!r} is not a time of day",
                               field=name, value=value)
    if rules.end_min <= rules.start_min:
        raise InvalidInput(
            f"the day ends at {format_clock(rules.end_min)}, not after it starts at "
            f"{format_clock(rules.start_min)}", field="end_min", value=rules.end_min)
    brk = rules.break_rule
    if brk is not None and not (
        brk.duration_min > 0 and brk.earliest_min + brk.duration_min <= brk.latest_min + _EPS
    ):
        raise InvalidInput(
            f"a break of {brk.duration_min!r} min does not fit between "
            f"{format_clock(brk.earliest_min)} and {format_clock(brk.latest_min)}",
            field="break_rule", value=brk)
    if not 0 <= problem.start_node < km.shape[0]:
        raise InvalidInput(f"start node {problem.start_node} is not a row of the matrices",
                           field="start_node", value=problem.start_node)
    start_min = problem.start_min if problem.start_min is not None else rules.start_min
    if not (isinstance(start_min, int | float) and 0 <= start_min <= MINUTES_PER_DAY):
        raise InvalidInput(f"start time {start_min!r} is not a time of day", field="start_min",
                           value=start_min)
    todo = list(range(1, n_visits + 1)) if problem.todo is None else [int(v) for v in problem.todo]
    if len(set(todo)) != len(todo) or any(not 1 <= v <= n_visits for v in todo):
        raise InvalidInput(f"visits to do {todo!r} must be distinct visit nodes 1..{n_visits}",
                           field="todo", value=todo)
    if problem.start_node in todo:
        raise InvalidInput("the visit where the rep stands is already done; leave it out of todo",
                           field="todo", value=problem.start_node)
    return km, minutes, todo


def _matrix(value, name: str) -> np.ndarray:
    try:
        arr = np.array(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InvalidInput(f"{name} must hold numbers only", field=name) from exc
    if arr.ndim != 2 or arr.shape[0] != arr.shape[1] or arr.shape[0] == 0:
        raise InvalidInput(f"{name} must be a square matrix; got shape {arr.shape}", field=name,
                           value=arr.shape)
    np.fill_diagonal(arr, 0.0)
    if not np.all(np.isfinite(arr)) or np.any(arr < 0):
        i, j = map(int, np.argwhere(~np.isfinite(arr) | (arr < 0))[0])
        raise InvalidInput(f"{name}[{i}][{j}] is {arr[i, j]}; expected a finite number >= 0",
                           field=f"{name}[{i}][{j}]", value=float(arr[i, j]))
    return arr


def simulate(problem: DayProblem, order: Sequence[int], *, break_at: int | None = None,
             checked=None) -> tuple[bool, list[PlannedVisit], dict]:
    """Time the visits of ``order`` from the start under the day's rules.

    ``break_at`` is the index in ``order`` of the visit before which the break is
    taken on arrival, ``len(order)`` for before the drive home, or None for none.
    Returns (feasible, planned visits, a summary with the return and totals, and
    ``reason`` when infeasible).
    """
    km, minutes, _ = checked if checked is not None else check_day_problem(problem)
    rules = problem.rules
    brk = rules.break_rule
    t = problem.start_min if problem.start_min is not None else rules.start_min
    here = problem.start_node
    taken = problem.break_taken
    planned: list[PlannedVisit] = []
    total_km = total_drive = total_wait = 0.0
    reason = None
    for pos, node in enumerate(order):
        visit = problem.visits[node - 1]
        leg_km, leg_min = float(km[here, node]), float(minutes[here, node])
        arrive = t + leg_min
        ready = arrive
        span = None
        if break_at == pos and brk is not None and not taken:
            b_start = max(arrive, brk.earliest_min)
            span = (b_start, b_start + brk.duration_min)
            if span[1] > brk.latest_min + _EPS:
                reason = reason or f"the break cannot be taken on arrival at {visit.name}"
            ready = span[1]
            taken = True
        start = earliest_start(visit.windows, ready)
        if start is None:
            reason = reason or (f"{visit.name} closes at {format_clock(visit.windows[-1].end_min)}"
                                f" before the arrival at {format_clock(ready)}")
            start = ready
        wait = start - ready
        depart = start + visit.service_min
        planned.append(PlannedVisit(node, visit.name, arrive, wait, start, depart, leg_km, leg_min,
                                    span, visit.windows))
        total_km += leg_km
        total_drive += leg_min
        total_wait += wait
        t, here = depart, node
    home_span = None
    if break_at == len(order) and brk is not None and not taken:
        b_start = max(t, brk.earliest_min)
        home_span = (b_start, b_start + brk.duration_min)
        if home_span[1] > brk.latest_min + _EPS:
            reason = reason or "the break cannot be taken before the drive home"
        t = home_span[1]
        taken = True
    back_km, back_min = float(km[here, 0]), float(minutes[here, 0])
    return_min = t + back_min
    total_km += back_km
    total_drive += back_min
    if return_min > rules.end_min + _EPS:
        reason = reason or (f"the return home at {format_clock(return_min)} is after "
                            f"{format_clock(rules.end_min)}")
    if brk is not None and not taken and return_min > brk.latest_min - brk.duration_min + _EPS:
        reason = reason or "no break fits the day"
    summary = {
        "return_min": return_min,
        "return_leg_km": back_km,
        "return_leg_min": back_min,
        "break_before_return": home_span,
        "total_km": total_km,
        "total_drive_min": total_drive,
        "total_wait_min": total_wait,
        "reason": reason,
    }
    return reason is None, planned, summary
