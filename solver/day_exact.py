"""The proven best order for a working day with time windows, and what a change would cost.

Method: an exact label-setting dynamic programme over (visited set, last stop)
with labels (km so far, clock time, break taken), in the manner of Dumas,
Desrosiers, Gélinas & Solomon (1995), "An optimal algorithm for the traveling
salesman problem with time windows", Operations Research 43(2):367-371:

- a label is discarded when another at the same state has no more km, no later
  time and no less of the break still owed (dominance; waiting is allowed, so
  being earlier is never worse);
- a label is discarded when some unvisited client could no longer be reached
  inside its window, or home by the end of the day, even by the fastest path
  (all-pairs shortest times, Floyd–Warshall), and, for the km objective, when
  its km plus a bound on the km still to drive exceeds a known feasible plan.

Nothing feasible is ever discarded unless something at least as good is kept,
so the survivor is optimal. A fast path comes first: when the shortest order
with the windows ignored (proven by :func:`solver.loop.solve_loop`) keeps every
window, it is optimal for the km objective as it stands.
"""

from __future__ import annotations

import itertools
import time
from collections.abc import Sequence

import numpy as np

from .clock import format_clock
from .day import (
    DayPlan,
    DayProblem,
    check_day_problem,
    earliest_start,
    simulate,
)
from .errors import Infeasible, InvalidInput, SolverError
from .loop import solve_loop
from .result import relative_gap
from .stopping import past

__all__ = [
    "DAY_METHODS",
    "plan_day",
    "explain_infeasible",
    "quote_extra_visit",
    "best_subset_routes",
    "best_timing",
]

DAY_METHODS = ("auto", "labels", "milp")
_EPS = 1e-7
_EXPLAIN_EXACT_MAX = 14  # the smallest set of visits to move is searched exactly up to this size


class _TimeUp(Exception):
    pass


def plan_day(problem: DayProblem, *, time_limit_s: float = 30.0, method: str = "auto",
             explain: bool = True, tie_break: bool = True) -> DayPlan:
    """The plan with the least objective that keeps every rule, proven optimal.

    Raises :class:`Infeasible` (with an explanation in the rep's words, unless
    ``explain`` is false) when no order keeps every window, the break and the
    return time. ``tie_break`` false skips the search for the earliest return
    among plans of equal least km (the km stays proven). When the time limit
    stops the search, returns the best plan known marked not proven, with a
    bound and a gap; raises SolverError if none was found in time.
    """
    started = time.perf_counter()
    if method not in DAY_METHODS:
        raise InvalidInput(f"method {method!r} is not known; expected one of "
                           f"{', '.join(DAY_METHODS)}", field="method", value=method)
    checked = check_day_problem(problem)
    km, minutes, todo = checked
    deadline = started + time_limit_s
    objective = problem.rules.objective
    if method == "milp":
        from .day_milp import plan_day_milp

        return plan_day_milp(problem, time_limit_s=time_limit_s)

    incumbent, stats = None, {}
    if _too_long_for_the_day(problem, minutes, todo, time_limit_s=max(0.1, 0.1 * time_limit_s)):
        _raise_infeasible(problem, explain)
    relaxed = _relaxed_order(problem, km, todo, time_limit_s=max(0.1, 0.3 * time_limit_s))
    if relaxed is not None:
        timed = best_timing(problem, relaxed, checked)
        if timed is not None:
            incumbent = timed
            if objective == "km" and relaxed.proven and not tie_break:
                return _plan(problem, *timed, proven=True, bound=timed[1]["total_km"],
                             started=started, method="loop-relaxation",
                             stats={"tie_break": "not asked for"})
            if objective == "km" and relaxed.proven:
                # Its km is optimal; among plans of equal km the search below finds the
                # earliest return, pruned hard by this km. If that runs out of time the
                # km stays proven and only the tie-break is unchecked.
                tie_deadline = min(deadline, time.perf_counter() + max(1.0, 0.2 * time_limit_s))
                try:
                    found, stats = _label_search(problem, checked, tie_deadline, incumbent)
                except _TimeUp:
                    found = None
                if found is None:
                    return _plan(problem, *timed, proven=True, bound=timed[1]["total_km"],
                                 started=started, method="loop-relaxation",
                                 stats={"tie_break": "unchecked (time)"})
                return _plan(problem, *found, proven=True, bound=found[1]["total_km"],
                             started=started, method="loop-relaxation+labels", stats=stats)
    inserted = _insertion_plan(problem, todo, checked, deadline=min(
        deadline, time.perf_counter() + 0.2 * time_limit_s))
    if inserted is not None and (incumbent is None or _key(objective, inserted[1])
                                 < _key(objective, incumbent[1])):
        incumbent = inserted
    try:
        found, stats = _label_search(problem, checked, deadline, incumbent)
    except _TimeUp as stop:
        bound = stop.args[0]
        if incumbent is None:
            raise SolverError(
                f"no plan was found within {time_limit_s:g} s; allow more time or fewer visits"
            ) from None
        return _plan(problem, *incumbent, proven=False, bound=bound, started=started,
                     method="labels", stats={"stopped": "time limit"})
    if found is None:
        _raise_infeasible(problem, explain)
    value = found[1]["total_km"] if objective == "km" else found[1]["return_min"]
    return _plan(problem, *found, proven=True, bound=value, started=started, method="labels",
                 stats=stats)


def _raise_infeasible(problem: DayProblem, explain: bool):
    if explain:
        explanation = explain_infeasible(problem)
        raise Infeasible(explanation["summary"], explanation=explanation)
    raise Infeasible("no plan keeps every rule of the day",
                     explanation={"summary": "no plan keeps every rule of the day"})


def _too_long_for_the_day(problem: DayProblem, minutes: np.ndarray, todo: list[int], *,
                          time_limit_s: float) -> bool:
    """True when even the fastest order's driving plus all visit time overruns the day.

    A proven lower bound on the driving minutes (the loop solver's bound on the
    minutes matrix, windows ignored) plus every visit's duration and the break
    cannot exceed the time from the start to the latest return in any plan.
    """
    if len(todo) < 2:
        return False
    rules = problem.rules
    start = problem.start_min if problem.start_min is not None else rules.start_min
    # The break is not counted: coming home early enough makes it unnecessary.
    busy = sum(problem.visits[j - 1].service_min for j in todo)
    fastest = _relaxed_order(problem, minutes, todo, time_limit_s=time_limit_s)
    if fastest is None or not fastest.proven:
        return False
    return start + busy + fastest.bound > rules.end_min + 1e-6


def _insertion_plan(problem: DayProblem, todo: list[int], checked, *, deadline: float):
    """A feasible plan by cheapest insertion, the most urgent visits first, or None.

    Visits are taken by their latest possible start and each inserted where the
    timed order grows least (Solomon 1987's insertion heuristic, with this day's
    own timing rules); it only seeds the exact search with a bound and is the
    answer shown when a time limit stops that search.
    """
    objective = problem.rules.objective

    def urgency(j: int) -> tuple[float, float]:
        windows = problem.visits[j - 1].windows
        return (windows[-1].end_min, windows[0].start_min) if windows else (float("inf"), 0.0)

    order: list[int] = []
    timed = None
    for j in sorted(todo, key=urgency):
        best = None
        for pos in range(len(order) + 1):
            if past(deadline):
                return None
            trial = order[:pos] + [j] + order[pos:]
            found = best_timing(problem, trial, checked)
            if found is not None and (best is None or _key(objective, found[1]) < best[0]):
                best = (_key(objective, found[1]), trial, found)
        if best is None:
            return None
        order, timed = best[1], best[2]
    return timed


class _Relaxed(list):
    proven = False


def _relaxed_order(problem: DayProblem, km: np.ndarray, todo: list[int], *, time_limit_s: float):
    """The shortest order through ``todo`` from the start to home, windows ignored."""
    start = problem.start_node
    if not todo:
        result = _Relaxed([])
        result.proven = True
        result.bound = float(km[start, 0])
        return result
    if start == 0:
        nodes = [0, *todo]
        sub = km[np.ix_(nodes, nodes)]
    else:
        # An open path start -> ... -> home is a loop through home whose first leg is forced.
        nodes = [0, start, *todo]
        sub = km[np.ix_(nodes, nodes)].copy()
        forbid = float(km.sum()) + 1.0
        sub[0, :] = forbid
        sub[0, 1] = 0.0
        sub[:, 1] = forbid
        sub[0, 1] = 0.0
    loop = solve_loop(sub, time_limit_s=time_limit_s)
    order = [nodes[i] for i in loop.order[1:]]
    if start != 0:
        if order[0] != start:
            return None
        order = order[1:]
    result = _Relaxed(order)
    result.proven = loop.proven_optimal
    result.bound = loop.lower_bound  # the forced first leg costs nothing
    return result


def best_timing(problem: DayProblem, order: Sequence[int], checked=None):
    """The feasible timing of ``order`` with the best objective over break placements.

    Returns (planned visits, summary) or None when no placement keeps every rule.
    """
    checked = checked if checked is not None else check_day_problem(problem)
    options = [None] if problem.rules.break_rule is None or problem.break_taken else [
        None, *range(len(order) + 1)]
    best = None
    for at in options:
        ok, planned, summary = simulate(problem, order, break_at=at, checked=checked)
        if ok:
            key = _key(problem.rules.objective, summary)
            if best is None or key < best[0]:
                best = (key, planned, summary)
    return None if best is None else (best[1], best[2])


def _key(objective: str, summary: dict) -> tuple[float, float]:
    if objective == "km":
        return (round(summary["total_km"], 9), round(summary["return_min"], 9))
    return (round(summary["return_min"], 9), round(summary["total_km"], 9))


def _plan(problem, planned, summary, *, proven, bound, started, method, stats) -> DayPlan:
    objective = problem.rules.objective
    value = summary["total_km"] if objective == "km" else summary["return_min"]
    if objective == "return" and not proven:
        bound = min(bound, value)
    return DayPlan(
        visits=tuple(planned),
        start_node=problem.start_node,
        start_min=problem.start_min if problem.start_min is not None else problem.rules.start_min,
        return_min=summary["return_min"],
        return_leg_km=summary["return_leg_km"],
        return_leg_min=summary["return_leg_min"],
        break_before_return=summary["break_before_return"],
        total_km=summary["total_km"],
        total_drive_min=summary["total_drive_min"],
        total_wait_min=summary["total_wait_min"],
        proven_optimal=proven,
        lower_bound=value if proven else min(bound, value),
        gap=0.0 if proven else relative_gap(value, min(bound, value)),
        seconds=time.perf_counter() - started,
        method=method,
        objective=objective,
        stats=dict(stats),
    )


def _shortest_times(minutes: np.ndarray) -> np.ndarray:
    """All-pairs shortest travel times (Floyd 1962), a valid lower bound on any arrival."""
    sp = minutes.copy()
    for k in range(len(sp)):
        sp = np.minimum(sp, sp[:, k : k + 1] + sp[k : k + 1, :])
    return sp


def _label_search(problem: DayProblem, checked, deadline: float, incumbent,
                  *, feasibility_only: bool = False, every_subset: bool = False,
                  max_size: int | None = None):
    """Exact dynamic programme; returns ((planned, summary) or None, stats).

    With ``every_subset`` the programme does not have to visit everyone: it
    returns instead, for every subset of ``todo`` (up to ``max_size`` visits) that
    fits the day, the best way to visit exactly that subset, as
    ``{mask: (key, order, break_at)}`` with the bit order of ``todo``.
    """
    km, minutes, todo = checked
    rules = problem.rules
    objective = rules.objective
    brk = rules.break_rule
    start = problem.start_node
    t0 = problem.start_min if problem.start_min is not None else rules.start_min
    owed0 = brk is not None and not problem.break_taken
    sp = _shortest_times(minutes)
    m = len(todo)
    bit = {node: 1 << k for k, node in enumerate(todo)}
    full = (1 << m) - 1
    visits = problem.visits
    service = {j: float(visits[j - 1].service_min) for j in todo}
    windows = {j: visits[j - 1].windows for j in todo}
    # The latest a visit may start and still allow the drive home in time.
    latest = {}
    for j in todo:
        last_window = windows[j][-1].end_min if windows[j] else float("inf")
        latest[j] = min(last_window, rules.end_min - service[j] - sp[j, 0])
    sources = [start, *todo]
    min_in = {j: min((km[i, j] for i in sources if i != j), default=0.0) for j in todo}
    min_home = min(km[i, 0] for i in sources) if todo else km[start, 0]
    upper = float("inf")
    if incumbent is not None and not feasibility_only:
        upper = _key(objective, incumbent[1])[0]

    def remaining_bound(mask: int) -> float:
        return sum(min_in[j] for j in todo if not mask & bit[j]) + min_home

    def time_rest(mask: int, last: int) -> float:
        # Any completion visits the farthest unvisited client and then comes home.
        rest = [sp[last, j] + service[j] + sp[j, 0] for j in todo if not mask & bit[j]]
        return max(rest) if rest else sp[last, 0]

    def bound_now(layer) -> float:
        """A valid bound on the objective from the labels still open (when time is up)."""
        best_bound = float("inf")
        for (mask, last), labels in layer.items():
            if objective == "km":
                rest = remaining_bound(mask)
                best_bound = min(best_bound, min(lab[0] for lab in labels) + rest)
            else:
                best_bound = min(best_bound, min(lab[1] for lab in labels) + time_rest(mask, last))
        return best_bound if np.isfinite(best_bound) else 0.0

    def limit(mask: int, last: int) -> float:
        # A label at (mask, last) must leave by this time to reach every unvisited client.
        lim = rules.end_min - sp[last, 0]
        if every_subset:
            return lim
        for j in todo:
            if not mask & bit[j]:
                lim = min(lim, latest[j] - sp[last, j])
        return lim

    def close(last: int, labels) -> tuple | None:
        """The best way home from ``last`` over ``labels``: (key, chain, break before home)."""
        best_here = None
        for km_so_far, t, owed, chain in labels:
            for take_break in ((False, True) if owed else (False,)):
                depart = t
                if take_break:
                    depart = max(t, brk.earliest_min) + brk.duration_min
                    if depart > brk.latest_min + _EPS:
                        continue
                back = depart + minutes[last, 0]
                if back > rules.end_min + _EPS:
                    continue
                if owed and not take_break and back > brk.latest_min - brk.duration_min + _EPS:
                    continue
                total = km_so_far + km[last, 0]
                key = (total, back) if objective == "km" else (back, total)
                if best_here is None or key < best_here[0]:
                    best_here = (key, chain, take_break)
        return best_here

    layer = {(0, start): [(0.0, t0, owed0, None)]}
    labels_made = 0
    subsets: dict[int, tuple] = {}
    if every_subset:
        empty = close(start, layer[(0, start)])
        if empty is not None:
            subsets[0] = (empty[0], [], None)
    if every_subset or feasibility_only:
        upper = float("inf")
    by_return = objective == "return" and np.isfinite(upper)
    for _ in range(m if max_size is None else min(m, max_size)):
        if past(deadline):
            raise _TimeUp(bound_now(layer))
        new_layer: dict[tuple[int, int], tuple[float, float, list]] = {}
        for (mask, last), labels in layer.items():
            if past(deadline):
                raise _TimeUp(bound_now(layer))
            for j in todo:
                if mask & bit[j]:
                    continue
                new_mask = mask | bit[j]
                key = (new_mask, j)
                entry = new_layer.get(key)
                if entry is None:
                    lim = limit(new_mask, j)
                    if by_return:
                        # Leaving j later than this cannot beat the known return time.
                        lim = min(lim, upper - time_rest(new_mask, j))
                    entry = new_layer[key] = (lim, remaining_bound(new_mask), [])
                lim, lb_rest, bucket = entry
                leg_km, leg_min = km[last, j], minutes[last, j]
                for km_so_far, t, owed, chain in labels:
                    new_km = km_so_far + leg_km
                    if objective == "km" and new_km + lb_rest > upper + _EPS:
                        continue
                    arrive = t + leg_min
                    begin = earliest_start(windows[j], arrive)
                    if begin is not None and begin + service[j] <= lim + _EPS:
                        labels_made += _insert(bucket, (new_km, begin + service[j], owed,
                                                        (j, False, chain)))
                    if owed:
                        b_start = max(arrive, brk.earliest_min)
                        b_end = b_start + brk.duration_min
                        if b_end <= brk.latest_min + _EPS:
                            begin = earliest_start(windows[j], b_end)
                            if begin is not None and begin + service[j] <= lim + _EPS:
                                labels_made += _insert(bucket, (new_km, begin + service[j], False,
                                                                (j, True, chain)))
        layer = {k: entry[2] for k, entry in new_layer.items() if entry[2]}
        if every_subset:
            for (mask, last), labels in layer.items():
                closed = close(last, labels)
                if closed is not None and (mask not in subsets or closed[0] < subsets[mask][0]):
                    order, break_at = _unwind(closed[1])
                    subsets[mask] = (closed[0], order, len(order) if closed[2] else break_at)
        if not layer:
            break
    if every_subset:
        return subsets, {"labels": labels_made}
    best = None
    for (mask, last), labels in layer.items():
        if mask != full:
            continue
        closed = close(last, labels)
        if closed is not None and (best is None or closed[0] < best[0]):
            best = closed
    stats = {"labels": labels_made}
    if best is None:
        return None, stats
    if feasibility_only:
        return True, stats
    order, break_at = _unwind(best[1])
    if best[2]:
        break_at = len(order)
    ok, planned, summary = simulate(problem, order, break_at=break_at, checked=checked)
    if not ok:  # pragma: no cover - the programme and the simulation share their rules
        raise SolverError(f"internal check failed: {summary['reason']}")
    return (planned, summary), stats


def _insert(bucket: list, label: tuple) -> int:
    """Keep ``label`` unless dominated; drop the labels it dominates. 1 if kept."""
    new_km, new_t, new_owed, _ = label
    for km_v, t, owed, _ in bucket:
        if km_v <= new_km + _EPS and t <= new_t + _EPS and (not owed or new_owed):
            return 0
    bucket[:] = [
        lab for lab in bucket
        if not (new_km <= lab[0] + _EPS and new_t <= lab[1] + _EPS and (not new_owed or lab[2]))
    ]
    bucket.append(label)
    return 1


def _unwind(chain):
    order, break_at = [], None
    while chain is not None:
        node, took_break, chain = chain
        order.append(node)
        if took_break:
            break_at = node
    order.reverse()
    return order, (order.index(break_at) if break_at is not None else None)


def _feasible(problem: DayProblem, todo: Sequence[int], deadline: float) -> bool:
    sub = DayProblem(problem.km, problem.minutes, problem.visits, problem.rules,
                     problem.start_node, problem.start_min, tuple(todo), problem.break_taken)
    checked = check_day_problem(sub)
    ok, _ = _label_search(sub, checked, deadline, None, feasibility_only=True)
    return bool(ok)


def explain_infeasible(problem: DayProblem, *, time_limit_s: float = 5.0) -> dict:
    """Why no plan keeps every rule, in the rep's words, JSON-ready.

    Lists the visits that cannot be fitted even alone (with the earliest possible
    arrival), the pairs that cannot both be fitted, and the smallest set of visits
    to move to another day so the rest fits (searched exactly for small days).
    """
    deadline = time.perf_counter() + time_limit_s
    checked = check_day_problem(problem)
    km, minutes, todo = checked
    t0 = problem.start_min if problem.start_min is not None else problem.rules.start_min
    name = {j: problem.visits[j - 1].name for j in todo}
    unreachable, alone_ok = [], []
    for j in todo:
        if best_timing(problem, [j], checked) is None:
            _, _, summary = simulate(problem, [j], checked=checked)
            unreachable.append({
                "name": name[j],
                "earliest_arrival": format_clock(t0 + minutes[problem.start_node, j]),
                "reason": summary["reason"] or "does not fit the day",
            })
        else:
            alone_ok.append(j)
    pairs = []
    for a, b in itertools.combinations(alone_ok, 2):
        if best_timing(problem, [a, b], checked) is None and best_timing(
                problem, [b, a], checked) is None:
            pairs.append([name[a], name[b]])
    # Smallest set first. A visit that does not fit alone can still fit after another
    # (a break taken elsewhere, a detour faster than the direct leg), so every visit is a
    # candidate; those that fit nowhere are tried first within each size.
    candidates = [j for j in todo if j not in alone_ok] + alone_ok
    move: list[str] | None = None
    exact = len(candidates) <= _EXPLAIN_EXACT_MAX
    try:
        for size in range(0, len(candidates) + 1):
            for subset in itertools.combinations(candidates, size):
                rest = [j for j in todo if j not in subset]
                if past(deadline):
                    raise _TimeUp(0.0)
                if _feasible(problem, rest, deadline):
                    move = [name[j] for j in subset]
                    break
            if move is not None or not exact:
                break
    except _TimeUp:
        move = None
    parts = []
    for u in unreachable:
        parts.append(f"{u['name']} cannot be fitted even alone ({u['reason']}; earliest "
                     f"arrival {u['earliest_arrival']})")
    for a, b in pairs[:5]:
        parts.append(f"{a} and {b} cannot both be visited this day")
    if move:
        parts.append("moving " + ", ".join(move) + " to another day lets the rest fit")
    if not parts:
        parts.append("the visits together do not fit between the start and the return time")
    return {
        "summary": "No plan keeps every time window: " + "; ".join(parts) + ".",
        "unreachable": unreachable,
        "conflicting_pairs": pairs,
        "move_to_another_day": move or [],
        "move_search_exact": exact and move is not None,
    }


def quote_extra_visit(problem: DayProblem, plan: DayPlan, candidate_node: int, *,
                      time_limit_s: float = 10.0) -> dict:
    """What adding ``candidate_node`` to the rest of the day would cost.

    First the instant cheapest feasible insertion into the current order (an
    estimate), then the proven optimum of the re-plan with it; extra km and
    minutes are against ``plan``; ``moved`` names the visits whose order or
    start time changes by more than a minute.
    """
    checked = check_day_problem(problem)
    _, _, todo = checked
    n_visits = len(problem.visits)
    if not 1 <= candidate_node <= n_visits or candidate_node in todo:
        raise InvalidInput(f"visit node {candidate_node} is not a visit outside today's plan",
                           field="candidate", value=candidate_node)
    name = problem.visits[candidate_node - 1].name
    with_it = DayProblem(problem.km, problem.minutes, problem.visits, problem.rules,
                         problem.start_node, problem.start_min,
                         tuple(todo) + (candidate_node,), problem.break_taken)
    checked_with = check_day_problem(with_it)
    estimate = None
    estimate_started = time.perf_counter()
    order = list(plan.order)
    for pos in range(len(order) + 1):
        trial = order[:pos] + [candidate_node] + order[pos:]
        timed = best_timing(with_it, trial, checked_with)
        if timed is not None:
            _, summary = timed
            extra_km = summary["total_km"] - plan.total_km
            if estimate is None or extra_km < estimate["extra_km"]:
                estimate = {"extra_km": extra_km,
                            "extra_min": summary["return_min"] - plan.return_min,
                            "position": pos + 1, "return": format_clock(summary["return_min"])}
    estimate_ms = 1000 * (time.perf_counter() - estimate_started)
    try:
        exact_plan = plan_day(with_it, time_limit_s=time_limit_s)
    except Infeasible as why:
        return {"name": name, "estimate": estimate, "estimate_ms": estimate_ms,
                "exact": {"fits": False, "explanation": why.explanation}, "plan": None}
    before = {v.node: (k, v.start_min) for k, v in enumerate(plan.visits)}
    kept = [v.node for v in exact_plan.visits if v.node in before]
    moved = []
    for v in exact_plan.visits:
        if v.node in before:
            rank = kept.index(v.node)
            old_rank = [n for n in plan.order if n in kept].index(v.node)
            if rank != old_rank or abs(v.start_min - before[v.node][1]) > 1.0:
                moved.append(v.name)
    exact = {
        "fits": True,
        "extra_km": exact_plan.total_km - plan.total_km,
        "extra_min": exact_plan.return_min - plan.return_min,
        "return": format_clock(exact_plan.return_min),
        "proven_optimal": exact_plan.proven_optimal,
        "moved": moved,
    }
    return {"name": name, "estimate": estimate, "estimate_ms": estimate_ms, "exact": exact,
            "plan": exact_plan.as_dict()}



def best_subset_routes(problem: DayProblem, *, max_size: int | None = None,
                       time_limit_s: float = 30.0) -> dict[frozenset, tuple[float, float, list]]:
    """For every subset of ``problem.todo`` that fits the day: its best (km, return, order).

    One run of the exact programme serves every subset, since its states are
    (visited set, last stop); the best plan of a subset closes its best label
    home. Raises SolverError when the time limit stops it (nothing partial is
    returned, as a missing subset would make a week plan look optimal wrongly).
    """
    checked = check_day_problem(problem)
    _, _, todo = checked
    deadline = time.perf_counter() + time_limit_s
    try:
        subsets, _ = _label_search(problem, checked, deadline, None, every_subset=True,
                                   max_size=max_size)
    except _TimeUp:
        raise SolverError(f"listing the day's feasible visit sets took over {time_limit_s:g} s"
                          ) from None
    result = {}
    for mask, (key, order, _) in subsets.items():
        members = frozenset(node for k, node in enumerate(todo) if mask >> k & 1)
        km_total, back = (key if problem.rules.objective == "km" else (key[1], key[0]))
        result[members] = (km_total, back, order)
    return result
