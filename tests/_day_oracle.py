"""A brute-force oracle for one working day, written for the tests only.

It tries every order of the visits still to do and every place for the break, and times
each with its own clock, written from the rules in the day planner's documentation
(solver/day.py module docstring), not from its code:

- leave the start place at the start time; drive; a visit may only *start* inside one of
  its windows, and arriving early means waiting;
- the break, when owed, is taken on arrival at a visit (before it) or before the drive
  home, never before its earliest time and ending by its latest;
- it is owed only if the rep is still out after ``latest - duration``;
- the return home must come no later than the end of the day.

Times are meant to be integers in the tests, so there are no floating-point ties.
"""

from __future__ import annotations

import itertools
from collections.abc import Iterable, Sequence


def _start_in_windows(windows, ready):
    """The earliest start at or after ``ready`` inside any window (in any listed order)."""
    if not windows:
        return ready
    starts = [max(ready, w.start_min) for w in windows if ready <= w.end_min]
    return min(starts) if starts else None


def time_order(problem, order: Sequence[int], break_at: int | None):
    """(km, return time) of ``order`` with the break before position ``break_at``
    (``len(order)``: before the drive home; None: no break), or None if a rule breaks."""
    rules = problem.rules
    brk = rules.break_rule
    owed = brk is not None and not problem.break_taken
    km, minutes = problem.km, problem.minutes
    clock = rules.start_min if problem.start_min is None else problem.start_min
    here, driven = problem.start_node, 0
    for position, node in enumerate(order):
        clock += minutes[here][node]
        driven += km[here][node]
        if owed and break_at == position:
            clock = max(clock, brk.earliest_min) + brk.duration_min
            if clock > brk.latest_min:
                return None
            owed = False
        visit = problem.visits[node - 1]
        start = _start_in_windows(visit.windows, clock)
        if start is None:
            return None
        clock = start + visit.service_min
        here = node
    if owed and break_at == len(order):
        clock = max(clock, brk.earliest_min) + brk.duration_min
        if clock > brk.latest_min:
            return None
        owed = False
    clock += minutes[here][0]
    driven += km[here][0]
    if clock > rules.end_min:
        return None
    if owed and clock > brk.latest_min - brk.duration_min:
        return None
    return driven, clock


def todo_of(problem) -> list[int]:
    return list(range(1, len(problem.visits) + 1)) if problem.todo is None else list(problem.todo)


def outcomes(problem, todo: Iterable[int] | None = None):
    """Every feasible (km, return, order, break_at) over all orders and break places."""
    todo = todo_of(problem) if todo is None else list(todo)
    owed = problem.rules.break_rule is not None and not problem.break_taken
    for order in itertools.permutations(todo):
        places = [None, *range(len(order) + 1)] if owed else [None]
        for break_at in places:
            timed = time_order(problem, order, break_at)
            if timed is not None:
                yield timed[0], timed[1], order, break_at


def best(problem, objective: str, todo: Iterable[int] | None = None):
    """The optimum (km, return) pair under ``objective`` ("km": km then return; "return":
    return then km), as (km, return), or None if no order keeps every rule."""
    found = None
    for km, back, _, _ in outcomes(problem, todo):
        key = (km, back) if objective == "km" else (back, km)
        if found is None or key < found:
            found = key
    if found is None:
        return None
    return found if objective == "km" else (found[1], found[0])


def feasible(problem, todo: Iterable[int] | None = None) -> bool:
    return next(iter(outcomes(problem, todo)), None) is not None
