"""A working day with time windows, a break and a time to be home by, planned exactly.

Sources:
- Y. Dumas, J. Desrosiers, E. Gélinas, M. M. Solomon, "An optimal algorithm for the
  traveling salesman problem with time windows", Operations Research 43(2):367–371, 1995:
  the 20 instances and their proven optimal travel times in fixtures/tsptw/SOLUTIONS.tsv
  (via the López-Ibáñez collection; see fixtures/tsptw/README.md, "Objective");
- the day rules of solver/day.py's documentation (a visit must *start* inside a window,
  early arrival means waiting, the break, the return time), applied to hand-built days
  whose timings are worked out beside each check;
- a brute force over every order and break place with its own clock (tests/_day_oracle.py).
"""

from __future__ import annotations

import csv
import itertools
import math
from pathlib import Path

import pytest

from solver.clock import parse_windows
from solver.day import BreakRule, DayProblem, DayRules, Visit, Window, simulate
from solver.day_exact import explain_infeasible, plan_day, quote_extra_visit
from solver.errors import Infeasible, InvalidInput
from solver.tsptw_file import evaluate_tsptw_tour, read_tsptw
from tests import _day_oracle as oracle

TSPTW = Path(__file__).resolve().parent.parent / "fixtures" / "tsptw"


def _solutions() -> list[dict[str, str]]:
    with (TSPTW / "SOLUTIONS.tsv").open(newline="") as handle:
        return list(csv.DictReader(handle, delimiter="\t"))


SOLUTIONS = _solutions()


def hhmm(text: str) -> int:
    hours, minutes = text.split(":")
    return int(hours) * 60 + int(minutes)


def window(text: str) -> Window:
    start, end = text.split("-")
    return Window(hhmm(start), hhmm(end))


def uniform(n: int, leg: int, **special) -> list[list[int]]:
    """An n x n matrix with every leg ``leg``; ``special`` maps "i_j" to a leg both ways."""
    matrix = [[0 if i == j else leg for j in range(n)] for i in range(n)]
    for key, value in special.items():
        i, j = map(int, key.split("_"))
        matrix[i][j] = matrix[j][i] = value
    return matrix


def day(minutes, visits, *, start="08:00", end="18:00", km=None, objective="km",
        break_rule=None, **where) -> DayProblem:
    rules = DayRules(hhmm(start), hhmm(end), objective, break_rule)
    return DayProblem(km if km is not None else minutes, minutes, tuple(visits), rules, **where)


def value(plan, objective: str) -> tuple[float, float]:
    return (plan.total_km, plan.return_min) if objective == "km" else (plan.return_min,
                                                                       plan.total_km)


# --- the published instances ---------------------------------------------------------------


@pytest.mark.parametrize("row", SOLUTIONS, ids=lambda row: row["name"])
def test_published_time_window_instance_has_its_proven_optimum(row):
    # Optimum: proven optimal travel time, Dumas et al. 1995 (SOLUTIONS.tsv). Convention of
    # fixtures/tsptw/README.md: leave at ready[0], wait when early, home by due[0], service
    # folded into the matrix, the objective counts travel including the leg home.
    instance = read_tsptw(TSPTW / f"{row['name']}.txt")
    matrix = instance.matrix.tolist()
    n = len(matrix)
    visits = tuple(
        Visit(f"client {k}", 0, (Window(int(instance.ready[k]), int(instance.due[k])),))
        for k in range(1, n)
    )
    rules = DayRules(start_min=int(instance.ready[0]), end_min=int(instance.due[0]))
    plan = plan_day(DayProblem(matrix, matrix, visits, rules), time_limit_s=60)
    optimum = int(row["optimal_value"])
    assert plan.proven_optimal is True
    assert plan.total_km == optimum
    assert plan.total_drive_min == optimum
    assert sorted(plan.order) == list(range(1, n))
    assert evaluate_tsptw_tour(instance, [0, *plan.order]) == (True, optimum)


# --- window boundaries: a visit must start inside a window -----------------------------------

ALBA = "Alba"
BOUNDARY_CASES = [
    # (id, leg from home in minutes, windows, expected start of the visit; None: infeasible)
    # Leave 08:00, 30 min: arrive 08:30 as it opens, no wait.
    ("arrive at opening", 30, "08:30-09:00", "08:30"),
    # Leave 08:00, 60 min: arrive 09:00 as it closes; starting at closing is allowed.
    ("start at closing", 60, "08:30-09:00", "09:00"),
    # Leave 08:00, 61 min: arrive 09:01, one minute after closing.
    ("one minute late", 61, "08:30-09:00", None),
    # Zero-width window: a fixed appointment at 10:00; arrive 08:30, wait 90 min.
    ("fixed appointment", 30, "10:00-10:00", "10:00"),
    # Morning window missed (arrive 09:00 after 08:40): wait for the 13:00 window.
    ("afternoon window", 60, "08:00-08:40, 13:00-15:00", "13:00"),
    # Arriving 09:00 inside the morning window: no wait for the afternoon.
    ("morning window", 60, "08:00-09:30, 13:00-15:00", "09:00"),
]


@pytest.mark.parametrize(("case", "leg", "windows", "expected"), BOUNDARY_CASES,
                         ids=[c[0] for c in BOUNDARY_CASES])
def test_window_boundary(case, leg, windows, expected):
    problem = day(uniform(2, leg), [Visit(ALBA, 20, parse_windows(windows))])
    if expected is None:
        with pytest.raises(Infeasible) as caught:
            plan_day(problem)
        explanation = caught.value.explanation
        assert ALBA in str(caught.value)
        assert [u["name"] for u in explanation["unreachable"]] == [ALBA]
        assert explanation["unreachable"][0]["earliest_arrival"] == "09:01"
        assert oracle.best(problem, "km") is None
        return
    plan = plan_day(problem)
    (visit,) = plan.visits
    arrive = hhmm("08:00") + leg
    assert visit.arrive_min == arrive
    assert visit.start_min == hhmm(expected)
    assert visit.wait_min == hhmm(expected) - arrive
    assert visit.depart_min == hhmm(expected) + 20
    assert plan.return_min == hhmm(expected) + 20 + leg
    assert plan.proven_optimal


def test_a_missed_morning_window_is_waited_out_after_another_visit():
    # Bruno is fixed at 08:30 for 60 min, so the morning with Alba (08:00-09:00) is lost:
    # Bruno first (08:30-09:30), 10 min to Alba, arrive 09:40, wait for 13:00. Alba first
    # (08:30-08:50) would miss Bruno's fixed 08:30.
    minutes = uniform(3, 30, **{"1_2": 10})
    visits = [Visit(ALBA, 20, parse_windows("08:00-09:00, 13:00-15:00")),
              Visit("Bruno", 60, parse_windows("08:30-08:30"))]
    plan = plan_day(day(minutes, visits))
    assert plan.order == (2, 1)
    assert plan.visits[1].arrive_min == hhmm("09:40")
    assert plan.visits[1].start_min == hhmm("13:00")
    assert plan.return_min == hhmm("13:50")


@pytest.mark.parametrize(("text", "fragment"), [
    ("22:00-02:00", "cannot cross midnight"),
    ("12:00-11:00", "ends before it starts"),
    ("09:00-12:00, 11:00-14:00", "overlapping"),
    ("9h-12h", "is not a clock time"),
    ("09:00-25:00", "is not a time of day"),
])
def test_window_text_that_cannot_be_a_day_window_is_refused(text, fragment):
    with pytest.raises(InvalidInput) as caught:
        parse_windows(text)
    assert fragment in str(caught.value)


def test_window_text_is_read_in_time_order():
    assert parse_windows("14:00-17:00, 09:00-12:00") == (Window(540, 720), Window(840, 1020))
    assert parse_windows("") == ()


def test_windows_listed_out_of_time_order_are_honoured_or_refused():
    # Home by 12:00; leave 08:00, 30 min to Alba, who receives 14:00-15:00 or 09:00-10:00:
    # start 09:00, home 09:50 (worked by hand; the oracle agrees).
    problem = day(uniform(2, 30), [Visit(ALBA, 20, (window("14:00-15:00"),
                                                     window("09:00-10:00")))], end="12:00")
    assert oracle.best(problem, "km") == (60, hhmm("09:50"))
    try:
        plan = plan_day(problem)
    except InvalidInput:
        return  # refusing the input is an acceptable answer too
    assert plan.visits[0].start_min == hhmm("09:00")


# --- the end of the day -----------------------------------------------------------------------


def test_return_after_the_end_of_the_day_is_infeasible():
    # Leave 08:00, 31 min out, 60 min visit, 31 min back: home 10:02, after 10:00.
    # (The published instances never bind this rule, fixtures/tsptw/README.md.)
    problem = day(uniform(2, 31), [Visit(ALBA, 60)], end="10:00")
    with pytest.raises(Infeasible) as caught:
        plan_day(problem)
    assert "10:02" in str(caught.value)
    assert [u["name"] for u in caught.value.explanation["unreachable"]] == [ALBA]
    assert oracle.best(problem, "km") is None


def test_return_exactly_at_the_end_of_the_day_is_allowed():
    plan = plan_day(day(uniform(2, 31), [Visit(ALBA, 60)], end="10:02"))
    assert plan.return_min == hhmm("10:02")


def test_the_day_end_rule_decides_the_order():
    # Alba (any time, 60 min) and Bruno (from 09:00, 30 min); home by 11:00. Legs 30, 10
    # between them. Bruno first: 08:30 wait 09:00-09:30, Alba 09:40-10:40, home 11:10: too
    # late. Alba first: 08:30-09:30, Bruno 09:40-10:10, home 10:40: the only plan.
    minutes = uniform(3, 30, **{"1_2": 10})
    problem = day(minutes, [Visit(ALBA, 60), Visit("Bruno", 30, parse_windows("09:00-18:00"))],
                  end="11:00", objective="return")
    plan = plan_day(problem)
    assert plan.order == (1, 2)
    assert plan.return_min == hhmm("10:40")
    assert oracle.best(problem, "return") == (70, hhmm("10:40"))


# --- the break ----------------------------------------------------------------------------------

LUNCH = BreakRule(duration_min=30, earliest_min=hhmm("12:00"), latest_min=hhmm("14:00"))


def _breaks(plan) -> list[tuple[float, float]]:
    spans = [v.break_before for v in plan.visits if v.break_before is not None]
    if plan.break_before_return is not None:
        spans.append(plan.break_before_return)
    return spans


def test_break_is_placed_inside_its_interval_when_out_at_noon():
    # Leave 09:00. Alba 09:30-12:00 (window 09:30-10:00, 150 min); Bruno (window
    # 12:00-13:00, 60 min) reached 12:30. Two plans tie on km and return (14:30): the break
    # 12:30-13:00 on arrival then Bruno 13:00-14:00, or Bruno 12:30-13:30 then the break
    # 13:30-14:00 before the drive home. A break at Alba would push her past 10:00; Bruno
    # first misses Alba. Worked by hand.
    minutes = uniform(3, 30)
    visits = [Visit(ALBA, 150, parse_windows("09:30-10:00")),
              Visit("Bruno", 60, parse_windows("12:00-13:00"))]
    problem = day(minutes, visits, start="09:00", break_rule=LUNCH)
    plan = plan_day(problem)
    assert plan.order == (1, 2)
    assert _breaks(plan) in ([(hhmm("12:30"), hhmm("13:00"))], [(hhmm("13:30"), hhmm("14:00"))])
    assert plan.return_min == hhmm("14:30")
    for start, end in _breaks(plan):
        assert LUNCH.earliest_min <= start and end <= LUNCH.latest_min
        assert end - start == LUNCH.duration_min
    assert oracle.best(problem, "km") == (90, hhmm("14:30"))


@pytest.mark.parametrize(("start", "service", "home"), [
    ("08:00", 60, "10:00"),   # 08:30-09:30, home 10:00: long before 13:30
    ("11:00", 90, "13:30"),   # 11:30-13:00, home 13:30 = 14:00 - 30 min: still no break
])
def test_no_break_needed_when_home_by_latest_minus_duration(start, service, home):
    plan = plan_day(day(uniform(2, 30), [Visit(ALBA, service)], start=start, break_rule=LUNCH))
    assert _breaks(plan) == []
    assert plan.return_min == hhmm(home)


def test_break_needed_when_home_one_minute_later():
    # 11:30-13:01 at Alba, so home at 13:31 is too late without a break. Break before the
    # drive home 13:01-13:31, home 14:01; on arrival (12:00-12:30) would bring home 14:31.
    problem = day(uniform(2, 30), [Visit(ALBA, 91)], start="11:00", break_rule=LUNCH,
                  objective="return")
    plan = plan_day(problem)
    assert plan.break_before_return == (hhmm("13:01"), hhmm("13:31"))
    assert plan.return_min == hhmm("14:01")
    assert oracle.best(problem, "return") == (60, hhmm("14:01"))


# --- the two objectives -------------------------------------------------------------------------


def test_each_objective_picks_its_own_plan():
    # Minutes 30 everywhere; km 10 except Bruno -> Alba 50. Alba is fixed at 10:00.
    # Alba, Bruno: 10+10+10 = 30 km; Alba at 08:30 waits to 10:00, Bruno 10:30, home 11:00.
    # Bruno, Alba: 10+50+10 = 70 km; Bruno 08:30, Alba 09:00 waits to 10:00, home 10:30.
    km = [[0, 10, 10], [10, 0, 10], [10, 50, 0]]
    visits = [Visit(ALBA, 0, parse_windows("10:00-10:00")), Visit("Bruno")]
    by_km = plan_day(day(uniform(3, 30), visits, km=km, objective="km"))
    by_return = plan_day(day(uniform(3, 30), visits, km=km, objective="return"))
    assert (by_km.order, by_km.total_km, by_km.return_min) == ((1, 2), 30, hhmm("11:00"))
    assert (by_return.order, by_return.total_km, by_return.return_min) == ((2, 1), 70,
                                                                          hhmm("10:30"))
    assert by_km.objective == "km" and by_return.objective == "return"
    assert by_km.proven_optimal and by_return.proven_optimal


def test_km_ties_are_broken_by_the_earlier_return():
    # Legs 30 min and 30 km. Alba opens at 10:00. Both orders drive 90 km.
    # Alba, Bruno: Alba 08:30 waits to 10:00, Bruno 10:30, home 11:00.
    # Bruno, Alba: Bruno 08:30, Alba 09:00 waits to 10:00, home 10:30: the earlier return.
    visits = [Visit(ALBA, 0, parse_windows("10:00-11:40")), Visit("Bruno")]
    problem = day(uniform(3, 30), visits, objective="km")
    assert oracle.best(problem, "km") == (90, hhmm("10:30"))
    plan = plan_day(problem)
    assert (plan.total_km, plan.return_min) == (90, hhmm("10:30"))


# --- infeasible days, explained -------------------------------------------------------------------


def _conflicted_day() -> DayProblem:
    # Legs 30, except Pia <-> Quinn 10. Ugo closes 08:10 but is 30 min away: earliest
    # arrival 08:30. Pia and Quinn are both fixed at 10:00. Rosa fits any time.
    minutes = uniform(5, 30, **{"2_3": 10})
    visits = [Visit("Ugo", 15, parse_windows("08:00-08:10")),
              Visit("Pia", 30, parse_windows("10:00-10:00")),
              Visit("Quinn", 30, parse_windows("10:00-10:00")),
              Visit("Rosa", 30)]
    return day(minutes, visits)


def test_infeasible_day_is_explained():
    problem = _conflicted_day()
    with pytest.raises(Infeasible) as caught:
        plan_day(problem)
    explanation = caught.value.explanation
    assert explanation == explain_infeasible(problem)
    assert [(u["name"], u["earliest_arrival"]) for u in explanation["unreachable"]] == [
        ("Ugo", "08:30")]
    assert [sorted(pair) for pair in explanation["conflicting_pairs"]] == [["Pia", "Quinn"]]
    assert "Ugo" in explanation["summary"] and "Pia" in explanation["summary"]


def test_visits_to_move_are_a_smallest_set():
    problem = _conflicted_day()
    names = {v.name: k for k, v in enumerate(problem.visits, start=1)}
    explanation = explain_infeasible(problem)
    move = explanation["move_to_another_day"]
    assert explanation["move_search_exact"] is True
    rest = [k for name, k in names.items() if name not in move]
    assert oracle.feasible(problem, rest), "the rest fits once these are moved"
    # Brute force: the smallest number of visits whose removal lets the rest fit.
    smallest = next(size for size in range(len(names) + 1)
                    for moved in itertools.combinations(names.values(), size)
                    if oracle.feasible(problem, [k for k in names.values() if k not in moved]))
    assert len(move) == smallest == 2
    assert "Ugo" in move and len({"Pia", "Quinn"} & set(move)) == 1


# Cy cannot be reached in time at all. Bea cannot be fitted alone, yet fits after Al:
NEEDS_ANOTHER_FIRST = [
    # Break 12:00-12:30 exactly; leave 11:40. Legs home-Al 10, home-Bea 30, Al-Bea 25 (a
    # metric). Bea alone: arrive 12:10, too late to start the break, out after 12:00.
    # Al first: arrive 11:50, break 12:00-12:30, Al 12:30-12:40, Bea 13:05, home 13:45.
    pytest.param([[0, 10, 30, 30], [10, 0, 25, 30], [30, 25, 0, 30], [30, 30, 30, 0]],
                 "11:40", BreakRule(30, hhmm("12:00"), hhmm("12:30")), "11:45", "18:00",
                 id="break only at another client"),
    # Bea closes 08:30; the direct leg home-Bea is 40 min, via Al 10 + 5 (visit) + 15: a
    # detour faster than the direct road. Bea alone arrives 08:40; after Al, 08:30.
    pytest.param([[0, 10, 40, 30], [10, 0, 15, 30], [40, 15, 0, 30], [30, 30, 30, 0]],
                 "08:00", None, "08:05", "08:30", id="detour faster than direct leg"),
]


@pytest.mark.parametrize(("minutes", "start", "brk", "cy_closes", "bea_closes"),
                         NEEDS_ANOTHER_FIRST)
def test_visits_to_move_are_a_smallest_set_even_when_a_visit_needs_another_first(
        minutes, start, brk, cy_closes, bea_closes):
    visits = [Visit("Al", 5 if brk is None else 10),
              Visit("Bea", 10, parse_windows(f"08:00-{bea_closes}")),
              Visit("Cy", 10, parse_windows(f"08:00-{cy_closes}"))]
    problem = day(minutes, visits, start=start, break_rule=brk)
    assert not oracle.feasible(problem, [2]), "Bea cannot be fitted alone"
    assert oracle.feasible(problem, [1, 2]), "but fits after Al"
    assert sorted(plan_day(DayProblem(problem.km, problem.minutes, problem.visits,
                                      problem.rules, todo=(1, 2))).order) == [1, 2]
    explanation = explain_infeasible(problem)
    assert explanation["move_search_exact"] is True
    assert explanation["move_to_another_day"] == ["Cy"]


# --- re-planning from where the rep stands ---------------------------------------------------

# Home at (0, 0); clients on a km grid; minutes = 2 x km (40 km/h); rounded to whole units.
POINTS = [(0, 0), (4, 3), (8, 0), (8, 6), (0, 6), (-3, 4), (4, -3)]
ROAD = (6, 1)  # where the rep stands on the road between two visits


def _grid(points) -> tuple[list[list[int]], list[list[int]]]:
    km = [[round(math.dist(p, q)) for q in points] for p in points]
    return km, [[2 * d for d in row] for row in km]


def _week_day(objective: str, *, extra_row: bool = False) -> DayProblem:
    km, minutes = _grid(POINTS + ([ROAD] if extra_row else []))
    visits = [Visit("Ada", 30, parse_windows("08:00-10:00")),
              Visit("Ben", 45),
              Visit("Cleo", 30, parse_windows("09:00-11:00, 14:00-16:00")),
              Visit("Dan", 20, parse_windows("11:00-13:00")),
              Visit("Eva", 40),
              Visit("Finn", 30, parse_windows("13:00-15:00"))]
    return day(minutes, visits, km=km, end="17:00", objective=objective, break_rule=LUNCH)


def _best_timing_of(problem, order):
    """The best (objective key, plan figures) of ``order`` over every break place, by
    solver.day.simulate; None if no break place keeps every rule."""
    found = None
    places = [None, *range(len(order) + 1)] if problem.rules.break_rule else [None]
    for at in places:
        ok, _, summary = simulate(problem, order, break_at=at)
        if ok:
            key = ((summary["total_km"], summary["return_min"]) if problem.rules.objective == "km"
                   else (summary["return_min"], summary["total_km"]))
            found = key if found is None or key < found else found
    return found


REPLAN_STATES = [
    # (id, visits done so far in the order done, or None for the plan's first two; delay
    #  in minutes after leaving the last one; what becomes of the old order of the rest,
    #  as the oracle found when these states were chosen: "kept" still fits, "breaks" no
    #  longer fits, "beaten" fits but is strictly worse under both objectives)
    ("as planned", None, 0, "kept"),
    ("40 min late", None, 40, "kept"),
    ("80 min late", None, 80, "breaks"),
    ("Cleo then Ada instead", (3, 1), 0, "beaten"),
]


@pytest.mark.parametrize("objective", ["km", "return"])
@pytest.mark.parametrize(("state", "done", "delay", "old_order"), REPLAN_STATES,
                         ids=[s[0] for s in REPLAN_STATES])
@pytest.mark.parametrize("extra_row", [False, True], ids=["at a client", "on the road"])
def test_replan_from_here_is_never_worse_than_keeping_the_old_order(objective, state, done,
                                                                     delay, old_order,
                                                                     extra_row):
    problem = _week_day(objective, extra_row=extra_row)
    assert oracle.feasible(problem), "precondition: the full day fits"
    first = plan_day(problem)
    done = done or first.order[:2]
    ok, so_far, _ = simulate(DayProblem(problem.km, problem.minutes, problem.visits,
                                        problem.rules, todo=done), list(done))
    assert ok, "precondition: the visits done keep their windows"
    rest = [node for node in first.order if node not in done]
    # On the road the rep stands at ROAD (the extra last row), else at the last visit done.
    start_node = len(POINTS) if extra_row else done[-1]
    now = so_far[-1].depart_min + delay
    again = DayProblem(problem.km, problem.minutes, problem.visits, problem.rules,
                       start_node=start_node, start_min=now, todo=tuple(rest))
    expected = oracle.best(again, objective)
    old = _best_timing_of(again, rest)
    try:
        plan = plan_day(again)
    except Infeasible:
        assert expected is None and old is None
        return
    assert plan.proven_optimal
    assert sorted(plan.order) == sorted(rest)
    assert not set(done) & set(plan.order), "done visits never come back"
    assert plan.start_node == start_node and plan.start_min == now
    assert (plan.total_km, plan.return_min) == expected
    assert (old is None) == (old_order == "breaks")
    if old is not None:
        assert value(plan, objective) <= old
    if old_order == "beaten" and not extra_row:
        assert value(plan, objective) < old


# --- quoting an extra visit -----------------------------------------------------------------


def _insertion_estimate(problem, order, candidate):
    """The least km of any order with ``candidate`` put into ``order`` (oracle clock)."""
    found = None
    for pos in range(len(order) + 1):
        trial = (*order[:pos], candidate, *order[pos:])
        owed = problem.rules.break_rule is not None and not problem.break_taken
        for at in ([None, *range(len(trial) + 1)] if owed else [None]):
            timed = oracle.time_order(problem, trial, at)
            if timed is not None and (found is None or timed[0] < found):
                found = timed[0]
    return found


@pytest.mark.parametrize("candidate", [1, 2, 3, 4, 5, 6])
def test_quote_extra_visit_estimate_is_never_below_the_exact_extra_km(candidate):
    full = _week_day("km")
    todo = tuple(k for k in range(1, len(full.visits) + 1) if k != candidate)
    problem = DayProblem(full.km, full.minutes, full.visits, full.rules, todo=todo)
    plan = plan_day(problem)
    quote = quote_extra_visit(problem, plan, candidate)
    assert quote["name"] == full.visits[candidate - 1].name
    exact, estimate = quote["exact"], quote["estimate"]
    assert exact["fits"] is True and exact["proven_optimal"] is True
    best_with = oracle.best(full, "km")
    assert exact["extra_km"] == best_with[0] - plan.total_km
    assert estimate is not None
    # Insertion into the current order is one feasible plan; the exact re-plan is optimal.
    assert estimate["extra_km"] >= exact["extra_km"]
    assert estimate["extra_km"] == _insertion_estimate(full, plan.order, candidate) - \
        plan.total_km
    # "moved": the visits whose order among the old ones or start (by > 1 min) changes.
    new_visits = [v for v in quote["plan"]["visits"] if v["node"] != candidate]
    old_start = {v.node: v.start_min for v in plan.visits}
    moved = [v["name"] for rank, v in enumerate(new_visits)
             if v["node"] != plan.order[rank] or abs(v["start_min"] - old_start[v["node"]]) > 1]
    assert exact["moved"] == moved


def test_quote_extra_visit_says_when_it_cannot_fit():
    # Zeno closes at 08:05 and is 30 min away: no plan keeps his window.
    minutes = uniform(3, 30)
    visits = [Visit(ALBA, 30), Visit("Zeno", 10, parse_windows("08:00-08:05"))]
    problem = day(minutes, visits, todo=(1,))
    plan = plan_day(problem)
    quote = quote_extra_visit(problem, plan, 2)
    assert quote["exact"]["fits"] is False
    assert quote["estimate"] is None
    assert quote["plan"] is None
    assert [u["name"] for u in quote["exact"]["explanation"]["unreachable"]] == ["Zeno"]


def test_quote_extra_visit_refuses_a_visit_already_planned():
    problem = day(uniform(3, 30), [Visit(ALBA), Visit("Bruno")])
    plan = plan_day(problem)
    with pytest.raises(InvalidInput) as caught:
        quote_extra_visit(problem, plan, 1)
    assert "not a visit outside today's plan" in str(caught.value)
