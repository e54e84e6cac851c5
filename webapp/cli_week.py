"""``rondo week STOPS.csv``: spread the clients over the working days, each day exact."""

from __future__ import annotations

import re

from solver.clock import format_clock, parse_clock
from solver.day import DayRules
from solver.errors import InvalidInput
from solver.week import WeekClient, WeekProblem, WorkDay, plan_week

from .cli_solve import DEFAULT_DAY_END, DEFAULT_DAY_START, _break_rule, read_home_and_stops

__all__ = ["WEEKDAYS", "parse_weekdays", "run_week"]

WEEKDAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")


def parse_weekdays(text: str, *, field: str) -> list[int]:
    """ "Mon-Fri", "Mon Wed Fri" or "mon,thu" as weekday numbers (Monday 0)."""
    lookup = {d.lower(): k for k, d in enumerate(WEEKDAYS)}
    days: list[int] = []
    for part in re.split(r"[\s,;]+", text.strip()):
        if not part:
            continue
        ends = part.split("-")
        try:
            numbers = [lookup[e.strip().lower()[:3]] for e in ends]
        except KeyError:
            raise InvalidInput(f"{field} {text!r}: {part!r} is not a weekday; expected names "
                               "such as Mon, Tue or ranges such as Mon-Fri", field=field,
                               value=text) from None
        if len(numbers) == 2 and numbers[0] <= numbers[1]:
            days.extend(range(numbers[0], numbers[1] + 1))
        elif len(numbers) == 1:
            days.append(numbers[0])
        else:
            raise InvalidInput(f"{field} {text!r}: {part!r} is not a forward range",
                               field=field, value=text)
    if not days:
        raise InvalidInput(f"{field} {text!r} names no weekday", field=field, value=text)
    return sorted(set(days))


def run_week(args) -> tuple[dict, str]:
    home, stops, _, matrix = read_home_and_stops(args)
    weekdays = parse_weekdays(args.days, field="--days")
    rules = DayRules(parse_clock(args.day_start or DEFAULT_DAY_START, field="--day-start"),
                     parse_clock(args.day_end or DEFAULT_DAY_END, field="--day-end"),
                     objective=args.objective, break_rule=_break_rule(args.break_rule))
    days = tuple(WorkDay(WEEKDAYS[w], rules, args.max_visits, args.max_work_min)
                 for w in weekdays)
    position_of = {w: k for k, w in enumerate(weekdays)}
    clients = []
    for node, stop in enumerate(stops, start=1):
        where = f"client {stop.name!r}"
        allowed = None
        if stop.cells.get("days"):
            wanted = parse_weekdays(stop.cells["days"], field=f"{where} days")
            allowed = tuple(position_of[w] for w in wanted if w in position_of)
            if not allowed:
                raise InvalidInput(f"{where} receives visitors only on {stop.cells['days']}, "
                                   f"which is not a working day ({args.days})", field="days",
                                   value=stop.cells["days"])
        fixed = None
        if stop.cells.get("fixed_day"):
            (w,) = parse_weekdays(stop.cells["fixed_day"], field=f"{where} fixed_day")[:1]
            if w not in position_of:
                raise InvalidInput(f"{where} is fixed to {stop.cells['fixed_day']}, not a "
                                   "working day", field="fixed_day", value=stop.cells["fixed_day"])
            fixed = position_of[w]
        clients.append(WeekClient(
            stop.name, node, stop.service_min, stop.windows, allowed_days=allowed,
            visits=_whole(stop.cells.get("visits_per_week"), 1, f"{where} visits_per_week"),
            min_gap_days=_whole(stop.cells.get("min_gap_days"), 1, f"{where} min_gap_days"),
            fixed_day=fixed))
    plan = plan_week(WeekProblem(matrix.km, matrix.minutes, tuple(clients), days),
                     time_limit_s=args.time_limit, method=args.week_method)
    payload = plan.as_dict()
    lines = [f"{'day':<4} {'visits':>6} {'km':>8} {'drive h':>8}  home by"]
    for name, day_plan, names in zip(plan.day_names, plan.days, plan.assignment, strict=True):
        if day_plan is None:
            lines.append(f"{name:<4} {0:>6} {0:>8.1f} {0:>8.1f}  —")
            continue
        lines.append(f"{name:<4} {len(names):>6} {day_plan.total_km:>8.1f} "
                     f"{day_plan.total_drive_min / 60:>8.1f}  {format_clock(day_plan.return_min)}"
                     f"   {', '.join(v.name for v in day_plan.visits)}")
    proof = ("proven optimal week" if plan.proven_optimal else
             f"each day proven; week at most {100 * plan.gap:.1f} % above the optimum "
             f"(bound {plan.lower_bound:.1f} km: {plan.bound_note})")
    lines.append(f"week: {plan.total_km:.1f} km, {plan.total_drive_min / 60:.1f} h driving; "
                 f"{proof} ({plan.method}, {plan.seconds:.1f} s)")
    return payload, "\n".join(lines)


def _whole(text: str | None, default: int, field: str) -> int:
    if not text:
        return default
    try:
        return int(text)
    except ValueError:
        raise InvalidInput(f"{field} {text!r} is not a whole number", field=field,
                           value=text) from None
