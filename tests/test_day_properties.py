"""The day planner against a brute force over every order and every break place.

The oracle (tests/_day_oracle.py) has its own clock, written from the day rules in
solver/day.py's documentation; it does not call solver.day.simulate. Random days have up
to 7 visits, 0-2 windows each (kept in time order, as solver.clock.parse_windows gives
them), visits of 0-60 min, an optional break, either objective, and sometimes start from
a visit already done (a re-plan). All times are whole minutes, so there are no
floating-point ties.
"""

from __future__ import annotations

import itertools

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from solver.clock import MINUTES_PER_DAY
from solver.day import BreakRule, DayProblem, DayRules, Visit, Window
from solver.day_exact import plan_day
from solver.errors import Infeasible
from tests import _day_oracle as oracle

SETTINGS = settings(max_examples=60, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


@st.composite
def windows(draw, day_start: int, day_end: int):
    count = draw(st.sampled_from([0, 1, 0, 1, 2]))
    found: list[Window] = []
    earliest = draw(st.integers(day_start - 60, day_end))
    for _ in range(count):
        start = max(0, earliest)
        if start > MINUTES_PER_DAY:
            break
        end = min(MINUTES_PER_DAY, start + draw(st.integers(0, 150)))
        found.append(Window(start, end))
        earliest = end + draw(st.integers(1, 180))
    return tuple(found)


@st.composite
def days(draw, max_visits: int = 7):
    n = draw(st.integers(0, max_visits) | st.integers(max_visits - 2, max_visits))
    size = n + 1
    if draw(st.booleans()):
        # Places on a grid: km the Manhattan distance, minutes a whole multiple of it.
        points = draw(st.lists(st.tuples(st.integers(0, 12), st.integers(0, 12)),
                               min_size=size, max_size=size))
        km = [[abs(a - c) + abs(b - d) for c, d in points] for a, b in points]
        pace = draw(st.integers(1, 4))
        minutes = [[pace * d for d in row] for row in km]
    else:
        # Any non-negative integers, asymmetric, zeros and triangle-inequality breaks allowed.
        km = [[0 if i == j else draw(st.integers(0, 30)) for j in range(size)]
              for i in range(size)]
        minutes = [[0 if i == j else draw(st.integers(0, 60)) for j in range(size)]
                   for i in range(size)]
    day_start = draw(st.integers(7 * 60, 10 * 60))
    day_end = min(MINUTES_PER_DAY, day_start + draw(st.integers(120, 720)))
    visits = tuple(
        Visit(f"v{k}", draw(st.integers(0, 60)), draw(windows(day_start, day_end)))
        for k in range(1, size)
    )
    break_rule = None
    if draw(st.booleans()):
        duration = draw(st.integers(10, 45))
        earliest = draw(st.integers(day_start, day_start + 300))
        break_rule = BreakRule(duration, earliest, earliest + duration + draw(st.integers(0, 90)))
    rules = DayRules(day_start, day_end, "km", break_rule)  # each test sets the objective
    where: dict = {}
    if n >= 2 and draw(st.integers(0, 3)) == 0:
        # A re-plan: standing at a visit done, later in the day, some visits behind.
        done = draw(st.lists(st.integers(1, n), min_size=1, max_size=n - 1, unique=True))
        where = {
            "start_node": done[-1],
            "start_min": draw(st.integers(day_start, day_end)),
            "todo": tuple(k for k in range(1, size) if k not in done),
            "break_taken": draw(st.booleans()),
        }
    return DayProblem(km, minutes, visits, rules, **where)


def _break_place(plan):
    for position, visit in enumerate(plan.visits):
        if visit.break_before is not None:
            return position
    return len(plan.visits) if plan.break_before_return is not None else None


def _plan_or_none(problem):
    try:
        return plan_day(problem, time_limit_s=30)
    except Infeasible as why:
        return why


def _check_explanation(problem, explanation) -> None:
    todo = oracle.todo_of(problem)
    name = {k: problem.visits[k - 1].name for k in todo}
    alone = sorted(k for k in todo if oracle.feasible(problem, [k]))
    forced = {name[k] for k in todo if k not in alone}
    assert {u["name"] for u in explanation["unreachable"]} == forced
    pairs = {frozenset((name[a], name[b])) for a, b in itertools.combinations(alone, 2)
             if not oracle.feasible(problem, [a, b])}
    assert {frozenset(p) for p in explanation["conflicting_pairs"]} == pairs
    moved = set(explanation["move_to_another_day"])
    # Fewest visits to move, by brute force over subsets by size (any visit may go: one
    # that does not fit alone can still fit after another).
    fewest = next((size for size in range(len(todo) + 1)
                   for out in itertools.combinations(todo, size)
                   if oracle.feasible(problem, [k for k in todo if k not in out])), None)
    if fewest is None:
        # Not even an empty day fits (the break, the start time): nothing to move helps.
        assert moved == set() and explanation["move_search_exact"] is False
        return
    assert explanation["move_search_exact"] is True
    assert oracle.feasible(problem, [k for k in todo if name[k] not in moved])
    assert len(moved) == fewest


def _with_objective(problem: DayProblem, objective: str) -> DayProblem:
    rules = DayRules(problem.rules.start_min, problem.rules.end_min, objective,
                     problem.rules.break_rule)
    return DayProblem(problem.km, problem.minutes, problem.visits, rules, problem.start_node,
                      problem.start_min, problem.todo, problem.break_taken)


@SETTINGS
@given(days())
def test_plan_day_agrees_with_the_brute_force(problem):
    for objective in ("km", "return"):
        variant = _with_objective(problem, objective)
        expected = oracle.best(variant, objective)
        outcome = _plan_or_none(variant)
        if isinstance(outcome, Infeasible):
            assert expected is None, "the planner says infeasible, the brute force found a plan"
            if objective == "km":
                _check_explanation(variant, outcome.explanation)
            continue
        plan = outcome
        assert expected is not None, "the planner found a plan the brute force calls infeasible"
        assert plan.proven_optimal
        assert plan.objective == objective
        assert sorted(plan.order) == sorted(oracle.todo_of(variant))
        # The plan's own figures are what the oracle's clock gives its order and break place.
        assert oracle.time_order(variant, plan.order, _break_place(plan)) == (
            plan.total_km, plan.return_min)
        if objective == "return":
            # Earliest return, ties broken by fewer km.
            assert (plan.return_min, plan.total_km) == (expected[1], expected[0])
        else:
            # Least km, ties broken by the earlier return.
            assert (plan.total_km, plan.return_min) == expected


KM_TIE = DayProblem(
    [[0, 30, 30], [30, 0, 30], [30, 30, 0]], [[0, 30, 30], [30, 0, 30], [30, 30, 0]],
    (Visit("Alba", 0, (Window(600, 700),)), Visit("Bruno")), DayRules(480, 1080, "km"))


@SETTINGS
@given(days())
@example(KM_TIE)  # test_day_plan.test_km_ties_are_broken_by_the_earlier_return, worked by hand
def test_plan_day_optimum_under_the_other_objective_as_tie_break(problem):
    # Both objectives, each with the other as tie-break (solver/day.py: least km "ties
    # broken by the earlier return"; earliest return "ties broken by fewer km").
    for objective in ("km", "return"):
        variant = _with_objective(problem, objective)
        expected = oracle.best(variant, objective)
        outcome = _plan_or_none(variant)
        if isinstance(outcome, Infeasible):
            assert expected is None
            continue
        assert (outcome.total_km, outcome.return_min) == expected, objective
