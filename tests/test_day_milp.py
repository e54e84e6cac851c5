"""The MILP day method against published optima and a brute force over every order."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver.clock import Window
from solver.day import BreakRule, DayProblem, DayRules, Visit
from solver.day_exact import plan_day
from solver.errors import Infeasible, InvalidInput
from solver.tsptw_file import read_tsptw

from . import _day_oracle as oracle

TSPTW = Path(__file__).resolve().parent.parent / "fixtures" / "tsptw"
ROWS = list(csv.DictReader((TSPTW / "SOLUTIONS.tsv").read_text().splitlines(),
                           delimiter="\t"))


@pytest.mark.parametrize("row", ROWS[::4], ids=lambda r: r["name"])
def test_published_time_window_optima(row):
    # Dumas, Desrosiers, Gélinas & Solomon (1995): proven optimal travel times.
    inst = read_tsptw(TSPTW / f"{row['name']}.txt")
    matrix = inst.matrix.astype(float)
    visits = tuple(Visit(f"c{k}", 0.0, (Window(float(inst.ready[k]), float(inst.due[k])),))
                   for k in range(1, len(matrix)))
    problem = DayProblem(matrix, matrix, visits, DayRules(float(inst.ready[0]),
                                                          float(inst.due[0])))
    plan = plan_day(problem, method="milp", time_limit_s=60)
    assert plan.proven_optimal
    assert plan.total_km == float(row["optimal_value"])


@st.composite
def days(draw):
    n = draw(st.integers(1, 6))
    km = np.array(draw(st.lists(st.lists(st.integers(0, 40), min_size=n + 1, max_size=n + 1),
                                min_size=n + 1, max_size=n + 1)), dtype=float)
    np.fill_diagonal(km, 0)
    visits = []
    for k in range(n):
        opens = draw(st.integers(480, 900))
        windows = () if draw(st.booleans()) else (Window(opens, opens + draw(st.integers(0,
                                                                                         180))),)
        visits.append(Visit(f"v{k}", draw(st.integers(0, 45)), windows))
    return DayProblem(km, km, tuple(visits), DayRules(480, draw(st.integers(600, 1080)),
                                                      draw(st.sampled_from(["km", "return"]))))


@settings(max_examples=40, deadline=None)
@given(days())
def test_milp_agrees_with_the_brute_force(problem):
    # Oracle: every order timed by the tests' own clock (tests/_day_oracle.py).
    expected = oracle.best(problem, problem.rules.objective)
    try:
        plan = plan_day(problem, method="milp", time_limit_s=30)
    except Infeasible:
        assert expected is None
        return
    assert expected is not None and plan.proven_optimal
    # best() answers (km, return); the MILP proves the primary objective (no tie-break).
    if problem.rules.objective == "km":
        assert plan.total_km == pytest.approx(expected[0])
    else:
        assert plan.return_min == pytest.approx(expected[1])


def test_a_detour_quicker_than_the_direct_leg_is_not_ruled_out():
    # Entered drives need not obey the triangle inequality: home -> b takes 1 min, but
    # home -> a -> b takes 0, so b's 08:00 appointment is kept via a (found by Hypothesis
    # against the brute force; the oracle is tests/_day_oracle.py).
    km = np.array([[0, 0, 1], [0, 0, 0], [0, 0, 0]], dtype=float)
    visits = (Visit("a", 0, (Window(480, 480),)), Visit("b", 0, (Window(480, 480),)))
    problem = DayProblem(km, km, visits, DayRules(480, 600))
    assert oracle.best(problem, "km") == (0.0, 480.0)
    plan = plan_day(problem, method="milp")
    assert plan.proven_optimal and plan.order == (1, 2) and plan.return_min == 480.0


def test_zero_time_cycle_is_cut():
    # Two visits at the same spot, zero duration, zero legs between them: time alone would
    # allow x_12 = x_21 = 1 as a separate cycle; the subtour cut must remove it.
    km = np.array([[0, 5, 5, 9], [5, 0, 0, 4], [5, 0, 0, 4], [9, 4, 4, 0]], dtype=float)
    visits = (Visit("a"), Visit("b"), Visit("c", 10, (Window(600, 600),)))
    problem = DayProblem(km, km, visits, DayRules(480, 1080))
    plan = plan_day(problem, method="milp")
    assert sorted(plan.order) == [1, 2, 3]
    assert plan.total_km == pytest.approx(plan_day(problem).total_km)


def test_the_break_is_refused_by_name():
    km = np.zeros((2, 2))
    rules = DayRules(480, 1080, break_rule=BreakRule(30, 720, 840))
    with pytest.raises(InvalidInput, match="does not model the break"):
        plan_day(DayProblem(km, km, (Visit("a"),), rules), method="milp")
