"""The week: which client on which working day, each day's loop exact, and a bound on the whole.

The week is a set-partitioning problem (Balinski & Quandt 1964): choose one
route per working day so that every client gets its visits, respecting allowed
days, caps and gaps between repeated visits. Two methods:

- **the column path** (every size, :func:`_column_week`): a good week first
  (:mod:`solver.week_improve`: insertion, moves and swaps confirmed by exact day
  re-solves); then column generation on the set-partitioning LP
  (:mod:`solver.week_bound`) gives the lower bound and many more real routes;
  a dive through the LP and one set-partitioning pass over every route known
  improve the week. When every route whose reduced cost could beat the week can
  be listed in time (route enumeration, Baldacci, Christofides & Mingozzi
  2008), set partitioning over them proves the week optimal.
- **exact** (small weeks, the independent check): one run of the exact day
  programme per working day lists the best route of *every* set of clients that
  fits that day (:func:`solver.day_exact.best_subset_routes`), and HiGHS solves
  the set partitioning over all of them.

When column generation gives no bound in time, the fallback bound: the week
uses at least k days (caps, repeated visits), and under shortest-path distances
(never longer than the legs driven, metric even when entered drives are not) k
loops from home through every client cost no more than the week; the best k
loops are proven by the loop solver on k copies of home (Bellmore & Hong 1974).
"""

from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .clock import Window
from .day import DayPlan, DayProblem, DayRules, Visit
from .day_exact import best_subset_routes, plan_day
from .errors import Infeasible, InvalidInput, SolverError
from .loop import solve_loop
from .milp_backend import new_highs, stop_highs_when
from .result import relative_gap
from .stopping import left, past
from .week_bound import WeekColumns
from .week_improve import improve_week, polish_week

__all__ = [
    "WorkDay",
    "WeekClient",
    "WeekProblem",
    "WeekPlan",
    "EXACT_WEEK_MAX_VISITS",
    "plan_week",
    "quote_week_days",
]

EXACT_WEEK_MAX_VISITS = 16  # beyond this the per-day set listing grows past a few seconds
# Shares of the column path's time limit at which each phase must end.
_SHARES = {"improve": 0.25, "bound": 0.6, "dive": 0.7, "partition": 0.76, "polish": 0.84,
           "listing": 0.92}
_DIVES = 4  # dives through the LP, each starting from a different route
_PARTITION_MAX_ROUTES = 2500  # routes offered to one set partitioning of the known routes
_LISTING_SHARES = (0.1, 0.25, 0.5, 1.0)  # of the gap, listed in turn (_list_and_partition)
_LISTING_MAX_ROUTES = 4000  # beyond this set partitioning over the listing takes too long
# Routes listed grow about tenfold from one share of the gap to the next (measured on
# 40-visit weeks: 3.5x from 2 to 4 km, 8x from 4 to 8 km, 14x from 8 to 16 km).
_LISTING_GROWTH = 10
_LISTING_PARTITION_S = 8.0  # for each set partitioning over a listing
_EPS = 1e-7


@dataclass(frozen=True)
class WorkDay:
    """One working day of the week: its hours and optional caps."""

    name: str
    rules: DayRules
    max_visits: int | None = None
    max_work_min: float | None = None


@dataclass(frozen=True)
class WeekClient:
    """A client due this week. ``node`` is its row in the week's matrices (home is 0).

    ``allowed_days`` are indices into the week's days (None: any); ``day_windows``
    overrides ``windows`` on given days; ``visits`` times a week, at least
    ``min_gap_days`` working days apart; ``fixed_day`` pins the client to a day.
    """

    name: str
    node: int
    service_min: float = 0.0
    windows: tuple[Window, ...] = ()
    day_windows: Mapping[int, tuple[Window, ...]] = field(default_factory=dict)
    allowed_days: tuple[int, ...] | None = None
    visits: int = 1
    min_gap_days: int = 1
    fixed_day: int | None = None

    def days_open(self, n_days: int) -> list[int]:
        if self.fixed_day is not None:
            return [self.fixed_day]
        return list(range(n_days)) if self.allowed_days is None else sorted(self.allowed_days)

    def windows_on(self, day: int) -> tuple[Window, ...]:
        return tuple(self.day_windows.get(day, self.windows))


@dataclass(frozen=True)
class WeekProblem:
    """The week to plan: travel matrices (node 0 home), the clients due, the working days."""

    km: Any
    minutes: Any
    clients: tuple[WeekClient, ...]
    days: tuple[WorkDay, ...]


@dataclass(frozen=True)
class WeekPlan:
    """Each day's proven plan (None for a free day), the totals, and the week's bound."""

    days: tuple[DayPlan | None, ...]
    day_names: tuple[str, ...]
    assignment: tuple[tuple[str, ...], ...]
    total_km: float
    total_drive_min: float
    proven_optimal: bool
    lower_bound: float
    bound_note: str
    gap: float
    seconds: float
    method: str
    stats: dict = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        return {
            "days": [
                {"name": name, "clients": list(names),
                 "plan": plan.as_dict() if plan is not None else None}
                for name, names, plan in zip(self.day_names, self.assignment, self.days,
                                             strict=True)
            ],
            "total_km": round(self.total_km, 3),
            "total_drive_min": round(self.total_drive_min, 3),
            "proven_optimal": self.proven_optimal,
            "lower_bound": self.lower_bound,
            "bound_note": self.bound_note,
            "gap": self.gap,
            "seconds": self.seconds,
            "method": self.method,
            "stats": dict(self.stats),
        }


def _check(problem: WeekProblem) -> tuple[np.ndarray, np.ndarray]:
    km = np.array(problem.km, dtype=float)
    minutes = np.array(problem.minutes, dtype=float)
    if km.ndim != 2 or km.shape[0] != km.shape[1] or km.shape != minutes.shape:
        raise InvalidInput(f"km {km.shape} and minutes {minutes.shape} must be one square shape",
                           field="km", value=km.shape)
    if not problem.days:
        raise InvalidInput("the week has no working days", field="days")
    n_days = len(problem.days)
    names, nodes = set(), set()
    for c in problem.clients:
        if c.name in names:
            raise InvalidInput(f"client {c.name!r} is listed twice", field="clients", value=c.name)
        if not 1 <= c.node < len(km) or c.node in nodes:
            raise InvalidInput(f"client {c.name!r} has matrix row {c.node}; expected a distinct "
                               f"row 1..{len(km) - 1}", field="node", value=c.node)
        names.add(c.name)
        nodes.add(c.node)
        days = c.days_open(n_days)
        if not days or any(not 0 <= d < n_days for d in days):
            raise InvalidInput(f"client {c.name!r} may be visited on days {days!r}; expected "
                               f"indices 0..{n_days - 1}", field="allowed_days", value=days)
        if not isinstance(c.visits, int) or not 1 <= c.visits <= n_days:
            raise InvalidInput(f"client {c.name!r} needs {c.visits!r} visits; expected 1.."
                               f"{n_days} (at most one a day)", field="visits", value=c.visits)
        if not isinstance(c.min_gap_days, int) or c.min_gap_days < 1:
            raise InvalidInput(f"client {c.name!r} has a gap of {c.min_gap_days!r} days; expected "
                               "a whole number >= 1", field="min_gap_days", value=c.min_gap_days)
    for day in problem.days:
        if day.max_visits is not None and (not isinstance(day.max_visits, int)
                                           or day.max_visits < 0):
            raise InvalidInput(f"day {day.name} caps visits at {day.max_visits!r}",
                               field="max_visits", value=day.max_visits)
    return km, minutes


def _day_problem(problem: WeekProblem, km, minutes, day: int, clients: Sequence[WeekClient],
                 todo: Sequence[WeekClient] | None = None) -> DayProblem:
    """The day's own problem over ``clients`` (rows: home, then those clients in order)."""
    rows = [0] + [c.node for c in clients]
    visits = tuple(Visit(c.name, c.service_min, c.windows_on(day)) for c in clients)
    index = {c.name: k for k, c in enumerate(clients, start=1)}
    todo_nodes = None if todo is None else tuple(index[c.name] for c in todo)
    spec = problem.days[day]
    rules = spec.rules
    end = rules.end_min
    if spec.max_work_min is not None:
        # A cap on the working minutes is an earlier latest return: exact for every order.
        end = min(end, rules.start_min + spec.max_work_min)
    # The week minimises km, so each of its days does too (whatever the day's own setting).
    rules = DayRules(rules.start_min, end, "km", rules.break_rule)
    return DayProblem(km[np.ix_(rows, rows)], minutes[np.ix_(rows, rows)], visits, rules,
                      todo=todo_nodes)


def plan_week(problem: WeekProblem, *, time_limit_s: float = 60.0,
              method: str = "auto") -> WeekPlan:
    """Assign every due visit to a working day and plan each day exactly.

    ``method`` "improve" runs the column path: a local optimum with each day
    proven, improved by diving and recombining the routes column generation
    prices, with the set-partitioning bound; the week is proven when listing
    every route that could beat it succeeds in time. "exact" is the independent
    small-week method (every feasible set of clients per day, then set
    partitioning; :data:`EXACT_WEEK_MAX_VISITS` visits or so). "auto" runs the
    column path and, for small weeks it did not prove, the exact method.
    """
    started = time.perf_counter()
    if method not in ("auto", "exact", "improve"):
        raise InvalidInput(f"method {method!r} is not known; expected auto, exact or improve",
                           field="method", value=method)
    km, minutes = _check(problem)
    deadline = started + time_limit_s
    small = sum(c.visits for c in problem.clients) <= EXACT_WEEK_MAX_VISITS
    if method == "exact":
        return _listed_week(problem, km, minutes, started, deadline)
    try:
        plan = _column_week(problem, km, minutes, started, deadline)
    except Infeasible:
        if method == "auto" and small:
            return _listed_week(problem, km, minutes, started, deadline)  # its verdict proves
        raise
    if method == "auto" and small and not plan.proven_optimal and (
            not past(deadline)):
        try:
            return _listed_week(problem, km, minutes, started, deadline)
        except SolverError:
            return plan
    return plan


def _listed_week(problem, km, minutes, started, deadline) -> WeekPlan:
    assignment, stats = _exact_assignment(problem, km, minutes, deadline)
    return _finish(problem, km, minutes, assignment, started, proven=True, method="exact",
                   stats=stats)


def _column_week(problem, km, minutes, started, deadline) -> WeekPlan:
    """The column path (see :func:`plan_week`); the time limit is shared out by
    :data:`_SHARES`, and ``stats["phase_s"]`` says where it went."""
    now = time.perf_counter()
    budget = max(0.0, deadline - now)

    def until(phase: str) -> float:
        return now + _SHARES[phase] * budget

    phases: dict[str, float] = {}
    mark = time.perf_counter()

    def done(phase: str) -> None:
        nonlocal mark
        phases[phase] = round(time.perf_counter() - mark, 3)
        mark = time.perf_counter()

    failed = None
    try:
        assignment, stats, pool = improve_week(problem, km, minutes, until("improve"),
                                               day_problem=_day_problem, cap_ok=_day_cap_ok)
        current_km = _pool_km(pool, assignment)
    except Infeasible as unplaced:
        # Greedy placement can fail where a week exists: the columns may still find one.
        assignment, stats, pool, current_km, failed = None, {}, [], float("inf"), unplaced
    stats["pool_columns"] = len(pool)
    stats["phase_s"] = phases
    done("improve")
    columns = WeekColumns(problem, km, minutes, pool, day_problem=_day_problem)
    found = columns.bound(until("bound"), upper=None if assignment is None else current_km)
    stats.update(found.stats())
    done("bound")
    if assignment is not None and found.bound is not None and (
            found.bound >= current_km - _proof_slack(current_km)):
        return _finish(problem, km, minutes, assignment, started, proven=False,
                       method="improve", stats=stats, column_bound=found.bound)
    # The routes priced are real day plans: dives through the LP, then set partitioning
    # over every plan known (the improving method's included, so the week can only keep
    # or lower its km), then over every route within a growing gap of the bound.
    known = {(d, names): cost for d, names, cost in pool}
    dives = []
    for rank in range(_DIVES):
        if past(until("dive")):
            break
        dived = columns.dive(until("dive"), first_rank=rank)
        if dived is not None:
            dives.append(dived)
    for key, cost in columns.real.items():
        known[key] = min(cost, known.get(key, cost))
    stats["dive_km"] = [round(_known_routes_km(known, dived), 3) for dived in dives]
    for dived in dives:
        if _known_routes_km(known, dived) < current_km - 1e-6:
            assignment, current_km = _assignment_of(problem, dived), _known_routes_km(known,
                                                                                        dived)
    done("dive")
    start = None if assignment is None else [
        (d, frozenset(c.name for c in cl)) for d, cl in enumerate(assignment)]
    # Presolve of a large set-partitioning model ignores the time limit (measured: 7 s on
    # 5,600 routes), so it gets the routes of least reduced cost, the known weeks' included.
    offered = columns.most_promising(
        known, _PARTITION_MAX_ROUTES,
        always=[key for routes in ([start] if start else []) + dives for key in routes])
    stats["partition_routes"] = len(offered)
    try:
        pooled, partition = _set_partition(
            problem, [(d, names, cost) for (d, names), cost in offered.items()],
            max(until("partition"), time.perf_counter() + 1.0), start=start)
        stats["partition_proven"] = partition["proven"]
        if _known_km(offered, pooled) < current_km - 1e-6:
            assignment, current_km = pooled, _known_km(offered, pooled)
            stats["recombined"] = True
    except SolverError:
        pass  # over the columns known only: never a proof that no week exists
    done("partition")
    if assignment is None:
        raise failed
    if not past(until("polish")):
        # The routes chosen come from the LP; moves and swaps between their days may
        # still save km (each confirmed by exact re-solves of both days).
        polished = polish_week(problem, km, minutes, until("polish"), assignment,
                               day_problem=_day_problem, cap_ok=_day_cap_ok)
        if polished is not None and polished[1]:
            for d, names, cost in polished[2]:
                known[(d, names)] = min(cost, known.get((d, names), cost))
            if _known_km(known, polished[0]) < current_km - 1e-6:
                assignment, current_km = polished[0], _known_km(known, polished[0])
                stats["polish_moves"] = polished[1]
    done("polish")
    assignment, current_km, proven = _list_and_partition(
        problem, columns, known, assignment, current_km,
        max(until("listing"), time.perf_counter()), stats)
    done("listing")
    if proven:
        return _finish(problem, km, minutes, assignment, started, proven=True,
                       method="enumeration", stats=stats)
    return _finish(problem, km, minutes, assignment, started, proven=False, method="improve",
                   stats=stats, column_bound=found.bound,
                   bound_time_s=max(1.0, left(deadline)))


def _known_routes_km(known, routes) -> float:
    return sum(known[key] for key in routes)


def _known_km(known, assignment) -> float:
    return sum(known.get((d, frozenset(c.name for c in cl)), 0.0 if not cl else float("inf"))
               for d, cl in enumerate(assignment))


def _list_and_partition(problem, columns, known, assignment, current_km, deadline, stats):
    """Set partitioning over every route within a growing reduced-cost gap of the bound.

    At the converged duals every route of a week of km z has a reduced cost of at most
    z − bound. So once set partitioning over all routes within a gap g (and those known)
    is proven and the best week found is within g of the bound, that week is optimal
    (route enumeration, Baldacci, Christofides & Mingozzi 2008). The gap grows from a
    quarter of the current one: small listings are quick and already find better weeks,
    which shrink the gap the proof needs. Returns (assignment, km, proven).
    """
    bound = columns.settled_bound
    if bound is None:
        return assignment, current_km, False
    everything = dict(known)
    listed_within = -1.0
    sizes = []
    for share in _LISTING_SHARES:
        if past(deadline):
            break
        gap = share * max(0.0, current_km - bound)
        if gap <= listed_within:
            continue
        listed = columns.columns_within(gap, deadline)
        if listed is None or len(listed) > _LISTING_MAX_ROUTES:
            break  # too many routes (or no time) for this gap
        listed_within = gap
        sizes.append(len(listed))
        for d, names, cost in listed:
            everything[(d, names)] = min(cost, everything.get((d, names), cost))
        start = [(d, frozenset(c.name for c in cl)) for d, cl in enumerate(assignment)]
        try:
            chosen, partition = _set_partition(
                problem, [(d, names, cost) for (d, names), cost in everything.items()],
                min(deadline, time.perf_counter() + _LISTING_PARTITION_S), start=start)
        except SolverError:
            break
        chosen_km = _known_km(everything, chosen)
        if chosen_km < current_km - 1e-6:
            assignment, current_km = chosen, chosen_km
            stats["listing_improved"] = True
        if partition["proven"] and current_km - bound <= gap + _proof_slack(current_km):
            stats["enumerated"] = sizes
            return assignment, current_km, True
        if len(listed) * _LISTING_GROWTH > _LISTING_MAX_ROUTES:
            break  # the next gap would list too many routes: not worth its time
    stats["enumerated"] = sizes
    return assignment, current_km, False


def _assignment_of(problem, routes) -> list[list[WeekClient]]:
    """Per day, the clients of the (day, client names) pairs chosen."""
    by_name = {c.name: c for c in problem.clients}
    assignment: list[list[WeekClient]] = [[] for _ in problem.days]
    for d, names in routes:
        assignment[d] = [by_name[n] for n in sorted(names)]
    return assignment


def _pool_km(pool, assignment) -> float:
    """The km of ``assignment`` as proven in ``pool`` (every day of it is there)."""
    wanted = {(d, frozenset(c.name for c in clients)) for d, clients in enumerate(assignment)}
    return sum(cost for d, names, cost in pool if (d, names) in wanted)


def _proof_slack(total_km: float) -> float:
    """How close a bound must come to a week's km to prove it: float noise only."""
    return 1e-6 * max(1.0, abs(total_km))


def _finish(problem, km, minutes, assignment, started, *, proven, method, stats,
            column_bound: float | None = None, bound_time_s: float = 20.0) -> WeekPlan:
    """Each chosen day planned exactly, the totals, and the week's bound and proof."""
    began = time.perf_counter()
    plans: list[DayPlan | None] = []
    for d, clients in enumerate(assignment):
        if not clients:
            plans.append(None)
            continue
        plans.append(plan_day(_day_problem(problem, km, minutes, d, clients), time_limit_s=30))
    total_km = sum(p.total_km for p in plans if p is not None)
    total_min = sum(p.total_drive_min for p in plans if p is not None)
    if proven:
        bound, note = total_km, "proven optimal week"
    elif column_bound is not None:
        bound, note = column_bound, ("the week's set-partitioning relaxation over every day "
                                     "route (column generation), the break ignored")
    else:
        bound, note = _week_lower_bound(problem, km, time_limit_s=min(20.0, bound_time_s))
    if not proven and bound >= total_km - _proof_slack(total_km):
        proven, note = True, "proven optimal week: its km meet the lower bound"
    if "phase_s" in stats:
        stats["phase_s"]["finish"] = round(time.perf_counter() - began, 3)
    return WeekPlan(
        days=tuple(plans),
        day_names=tuple(d.name for d in problem.days),
        assignment=tuple(tuple(c.name for c in clients) for clients in assignment),
        total_km=total_km,
        total_drive_min=total_min,
        proven_optimal=proven,
        lower_bound=min(bound, total_km),
        bound_note=note,
        gap=relative_gap(total_km, min(bound, total_km)),
        seconds=time.perf_counter() - started,
        method=method,
        stats=stats,
    )


def _week_lower_bound(problem: WeekProblem, km: np.ndarray, *,
                      time_limit_s: float = 20.0) -> tuple[float, str]:
    """A valid bound on the week's km (see the module docstring)."""
    rows = [0] + [c.node for c in problem.clients]
    # Every leg costs at least the shortest path between its ends, and shortest paths obey
    # the triangle inequality, so the bound below holds for any entered drives too.
    sub = km[np.ix_(rows, rows)].copy()
    for k in range(len(sub)):
        sub = np.minimum(sub, sub[:, k : k + 1] + sub[k : k + 1, :])
    loops = _fewest_days(problem)
    n = len(problem.clients)
    # k loops from home through everyone = one loop through k copies of home, no copy
    # joined to another (the multiple-salesman transformation, Bellmore & Hong 1974).
    size = loops + n
    big = float(sub.sum()) + 1.0
    merged = np.full((size, size), big)
    merged[loops:, loops:] = sub[1:, 1:]
    merged[:loops, loops:] = sub[0, 1:]
    merged[loops:, :loops] = sub[1:, 0][:, None]
    np.fill_diagonal(merged, 0.0)
    loop = solve_loop(merged, time_limit_s=time_limit_s)
    bound = loop.lower_bound
    note = (f"{loops} shortest loop{'s' if loops > 1 else ''} from home through every client, "
            "windows and day length ignored")
    if bound >= big:  # pragma: no cover - only when the bound found no loop set at all
        return 0.0, "no bound found"
    return float(bound), note


def _fewest_days(problem: WeekProblem) -> int:
    """Days the week must use at least: the caps on visits per day and repeated visits."""
    caps = [d.max_visits for d in problem.days]
    total = sum(c.visits for c in problem.clients)
    needed = max([1] + [c.visits for c in problem.clients])
    if all(cap is not None for cap in caps) and max(caps) > 0:
        needed = max(needed, -(-total // max(caps)))
    return min(needed, len(problem.clients)) if problem.clients else 1


def _day_cap_ok(day: WorkDay, size: int, back_min: float) -> bool:
    # The working-minutes cap is already folded into the day's latest return.
    return day.max_visits is None or size <= day.max_visits


def _exact_assignment(problem, km, minutes, deadline):
    """Set partitioning over every feasible (day, set of clients), solved by HiGHS."""
    n_days = len(problem.days)
    columns: list[tuple[int, frozenset, float]] = []
    for d, day in enumerate(problem.days):
        open_here = [c for c in problem.clients if d in c.days_open(n_days)]
        remaining = left(deadline)
        if remaining <= 0:
            raise SolverError("the week's time limit ran out while listing day plans")
        routes = best_subset_routes(_day_problem(problem, km, minutes, d, open_here),
                                    max_size=day.max_visits, time_limit_s=remaining)
        for members, (km_total, back, _) in routes.items():
            if _day_cap_ok(day, len(members), back):
                names = frozenset(open_here[k - 1].name for k in members)
                columns.append((d, names, float(km_total)))
    assignment, stats = _set_partition(problem, columns, deadline)
    if not stats["proven"]:
        raise SolverError("the week's set-partitioning model was not proven in time")
    return assignment, stats


def _set_partition(problem, columns, deadline, start=None):
    """The cheapest choice of one column (day, clients, km) per day covering every visit.

    ``start`` (day, client names) pairs of a known week are given to HiGHS as its
    first incumbent. Returns the assignment and stats whose ``proven`` says whether
    HiGHS proved it
    (the time limit may stop it with a good choice that is not proven);
    SolverError when it found none in time.
    """
    n_days = len(problem.days)
    columns = columns + [(d, frozenset(), 0.0) for d in range(n_days)]
    clients = list(problem.clients)
    row_of = {c.name: k for k, c in enumerate(clients)}
    n_rows = len(clients) + n_days
    gap_rows: list[tuple[str, list[int]]] = []
    for c in clients:
        if c.visits > 1 and c.min_gap_days > 1:
            for first in range(n_days):
                span = list(range(first, min(n_days, first + c.min_gap_days)))
                if len(span) > 1:
                    gap_rows.append((c.name, span))
    highs = new_highs(time_limit_s=max(0.1, left(deadline)))
    inf = highs.getInfinity()
    lower = [float(c.visits) for c in clients] + [0.0] * n_days + [-inf] * len(gap_rows)
    upper = [float(c.visits) for c in clients] + [1.0] * n_days + [1.0] * len(gap_rows)
    count = n_rows + len(gap_rows)
    highs.addRows(count, np.array(lower), np.array(upper), 0, np.zeros(count, dtype=np.int32),
                  np.zeros(0, dtype=np.int32), np.zeros(0))
    starts, index, costs = [], [], []
    for d, names, cost in columns:
        starts.append(len(index))
        costs.append(cost)
        rows = [row_of[n] for n in names] + [len(clients) + d]
        rows += [n_rows + g for g, (name, span) in enumerate(gap_rows)
                 if name in names and d in span]
        index.extend(sorted(rows))
    n_cols = len(columns)
    highs.addCols(n_cols, np.array(costs), np.zeros(n_cols), np.ones(n_cols), len(index),
                  np.array(starts, dtype=np.int32), np.array(index, dtype=np.int32),
                  np.ones(len(index)))
    import highspy

    highs.changeColsIntegrality(n_cols, np.arange(n_cols, dtype=np.int32),
                                np.full(n_cols, highspy.HighsVarType.kInteger))
    highs.setOptionValue("mip_rel_gap", 0.0)
    highs.setOptionValue("mip_abs_gap", 1e-9)
    if start is not None:
        chosen = set(start)
        values = np.zeros(n_cols)
        for k, (d, names, _) in enumerate(columns):
            if (d, names) in chosen:
                values[k] = 1.0
                chosen.discard((d, names))
        known = highspy.HighsSolution()
        known.col_value = values.tolist()
        highs.setSolution(known)
    stop_highs_when(highs, lambda: past(deadline))
    highs.run()
    status = highs.getModelStatus()
    if status == highspy.HighsModelStatus.kInfeasible:
        raise Infeasible("no assignment of the week's visits to its days keeps every rule",
                         explanation={"summary": "no assignment of the week's visits to its days "
                                      "keeps every window, cap and gap"})
    proven = status == highspy.HighsModelStatus.kOptimal
    if not proven and highs.getInfo().primal_solution_status != 2:  # 2: a feasible solution
        raise SolverError("the week's set-partitioning model found no choice in time")
    x = np.asarray(highs.getSolution().col_value)
    chosen = [columns[int(k)][:2] for k in np.flatnonzero(x > 0.5)]
    return _assignment_of(problem, chosen), {"columns": n_cols, "proven": proven}


def quote_week_days(problem: WeekProblem, plan: WeekPlan, client: WeekClient, *,
                    from_day: int = 0) -> list[dict]:
    """What fitting ``client`` into each remaining allowed day adds, cheapest first.

    For a new client: the day's proven optimum with it minus the day's plan. For a
    client already in the week (a move): that, plus what leaving its current day
    saves (both proven). Days where it does not fit come last with ``fits`` false.
    """
    n_days = len(problem.days)
    by_name = {c.name: c for c in problem.clients}
    moving_from = next((d for d, names in enumerate(plan.assignment) if client.name in names),
                       None)
    others = problem.clients if client.name in by_name else (*problem.clients, client)
    km, minutes = _check(WeekProblem(problem.km, problem.minutes, others, problem.days))

    def day_km(d: int, clients: list[WeekClient]) -> float | None:
        if not clients:
            return 0.0
        try:
            return plan_day(_day_problem(problem, km, minutes, d, clients), time_limit_s=10,
                            explain=False, tie_break=False).total_km
        except Infeasible:
            return None

    saving = 0.0
    if moving_from is not None:
        stay = [by_name[n] for n in plan.assignment[moving_from] if n != client.name]
        without = day_km(moving_from, stay)
        saving = (plan.days[moving_from].total_km - without) if without is not None else 0.0
    quotes = []
    for d in range(from_day, n_days):
        if d not in client.days_open(n_days) or d == moving_from:
            continue
        current = [by_name[n] for n in plan.assignment[d]]
        base = plan.days[d].total_km if plan.days[d] is not None else 0.0
        with_it = day_km(d, current + [client])
        fits = with_it is not None and _day_cap_ok(problem.days[d], len(current) + 1, 0.0)
        quotes.append({"day": problem.days[d].name, "day_index": d, "fits": fits,
                       "extra_km": (with_it - base - saving) if with_it is not None else None,
                       "proven_optimal": True})
    return sorted(quotes, key=lambda q: (not q["fits"], q["extra_km"] or 0.0))
