"""The week planner against a brute force over every assignment of clients to days.

Oracle: every assignment of each client to one of its allowed days, each day
planned by Held–Karp-style enumeration written here (all orders, timed by this
file's own simulation), the cheapest feasible sum kept. Invented random data
(no outside values): the check is the independent brute force.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver.clock import Window
from solver.day import DayRules
from solver.errors import Infeasible, InvalidInput
from solver.week import WeekClient, WeekProblem, WorkDay, plan_week, quote_week_days


def _random_places(rng, n_clients: int):
    """(km, minutes) between home (the centre) and clients uniform in a 40 km square:
    straight lines times a 1.3 detour at 50 km/h, to the metre and the 0.06 s."""
    p = rng.uniform(-20, 20, (n_clients + 1, 2))
    p[0] = 0.0
    km = np.round(np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1)) * 1.3, 3)
    return km, np.round(km / 50 * 60, 3)


def _random_week(n_clients: int, n_days: int, seed: int, *, cap: int | None = 3):
    rng = np.random.default_rng(seed)
    km, minutes = _random_places(rng, n_clients)
    clients = []
    for k in range(1, n_clients + 1):
        allowed = tuple(sorted(rng.choice(n_days, size=int(rng.integers(1, n_days + 1)),
                                          replace=False).tolist()))
        windows = (Window(480.0, 900.0),) if k % 2 else ()
        clients.append(WeekClient(f"c{k}", k, float(rng.integers(20, 61)), windows,
                                  allowed_days=allowed))
    days = tuple(WorkDay(f"D{d}", DayRules(480.0, 720.0 if d == 0 else 1020.0), max_visits=cap)
                 for d in range(n_days))
    return WeekProblem(km, minutes, tuple(clients), days)


def _day_best(problem: WeekProblem, day: int, clients) -> float | None:
    """Cheapest feasible order of ``clients`` on ``day`` by trying every order."""
    rules = problem.days[day].rules
    best = None
    for perm in itertools.permutations(clients):
        t, here, total, ok = rules.start_min, 0, 0.0, True
        for c in perm:
            t += problem.minutes[here, c.node]
            total += problem.km[here, c.node]
            wins = c.windows_on(day)
            if wins:
                fitting = [w for w in wins if t <= w.end_min]
                if not fitting:
                    ok = False
                    break
                t = max(t, fitting[0].start_min)
            t += c.service_min
            here = c.node
        t += problem.minutes[here, 0]
        total += problem.km[here, 0]
        if ok and t <= rules.end_min + 1e-9 and (best is None or total < best):
            best = total
    return best


def _brute_force_week(problem: WeekProblem) -> float | None:
    n_days = len(problem.days)
    best = None
    for assign in itertools.product(*[c.days_open(n_days) for c in problem.clients]):
        total = 0.0
        for d in range(n_days):
            chosen = [c for c, a in zip(problem.clients, assign, strict=True) if a == d]
            cap = problem.days[d].max_visits
            if cap is not None and len(chosen) > cap:
                total = None
                break
            cost = _day_best(problem, d, chosen) if chosen else 0.0
            if cost is None:
                total = None
                break
            total += cost
        if total is not None and (best is None or total < best):
            best = total
    return best


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize(("n_clients", "n_days"), [(5, 2), (6, 3), (7, 3)])
def test_exact_week_equals_brute_force(n_clients, n_days, seed):
    problem = _random_week(n_clients, n_days, seed)
    truth = _brute_force_week(problem)
    if truth is None:
        with pytest.raises(Infeasible):
            plan_week(problem, method="exact")
        return
    plan = plan_week(problem, method="exact")
    assert plan.proven_optimal
    assert plan.total_km == pytest.approx(truth, abs=1e-6)
    # The lower bound of the improving method never exceeds the true optimum.
    improved = plan_week(problem, method="improve")
    assert improved.lower_bound <= truth + 1e-6
    assert improved.total_km >= truth - 1e-6
    assert improved.gap == pytest.approx((improved.total_km - improved.lower_bound)
                                         / improved.total_km, abs=1e-9)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), n_clients=st.integers(3, 9),
       n_days=st.integers(2, 4), cap=st.integers(2, 4), method=st.sampled_from(["exact",
                                                                               "improve"]))
def test_allowed_days_fixed_days_and_caps_hold(seed, n_clients, n_days, cap, method):
    problem = _random_week(n_clients, n_days, seed, cap=cap)
    clients = list(problem.clients)
    clients[0] = WeekClient(clients[0].name, clients[0].node, clients[0].service_min,
                            clients[0].windows, fixed_day=n_days - 1)
    problem = WeekProblem(problem.km, problem.minutes, tuple(clients), problem.days)
    try:
        plan = plan_week(problem, method=method)
    except Infeasible:
        return
    by_name = {c.name: c for c in problem.clients}
    seen = []
    for d, names in enumerate(plan.assignment):
        assert len(names) <= cap
        for name in names:
            assert d in by_name[name].days_open(n_days)
            seen.append(name)
        day = plan.days[d]
        if day is not None:
            assert day.return_min <= problem.days[d].rules.end_min + 1e-9
    assert sorted(seen) == sorted(by_name)
    assert clients[0].name in plan.assignment[n_days - 1]


def test_repeated_visits_keep_their_gap():
    problem = _random_week(4, 5, 3, cap=None)
    clients = list(problem.clients)
    clients[0] = WeekClient(clients[0].name, clients[0].node, 20.0, visits=2, min_gap_days=2)
    problem = WeekProblem(problem.km, problem.minutes, tuple(clients), problem.days)
    plan = plan_week(problem)
    days = [d for d, names in enumerate(plan.assignment) if clients[0].name in names]
    assert len(days) == 2 and days[1] - days[0] >= 2


def test_quote_lists_each_allowed_day_cheapest_first():
    problem = _random_week(5, 3, 1, cap=None)
    plan = plan_week(problem)
    newcomer = WeekClient("late caller", 5, 15.0)
    base = WeekProblem(problem.km, problem.minutes, problem.clients[:4], problem.days)
    plan = plan_week(base)
    quotes = quote_week_days(base, plan, newcomer)
    fitting = [q["extra_km"] for q in quotes if q["fits"]]
    assert fitting == sorted(fitting)
    assert {q["day_index"] for q in quotes} == {0, 1, 2}


@pytest.mark.parametrize(
    ("change", "fragment"),
    [
        ({"visits": 0}, "needs 0 visits"),
        ({"allowed_days": (7,)}, "may be visited on days"),
        ({"min_gap_days": 0}, "gap of 0"),
        ({"node": 99}, "matrix row 99"),
    ],
)
def test_bad_week_input_names_the_field(change, fragment):
    problem = _random_week(3, 2, 0)
    first = problem.clients[0]
    fields = {"name": first.name, "node": first.node, "service_min": first.service_min} | change
    bad = WeekProblem(problem.km, problem.minutes, (WeekClient(**fields), *problem.clients[1:]),
                      problem.days)
    with pytest.raises(InvalidInput, match=fragment):
        plan_week(bad)


def test_quoting_a_client_already_in_the_week_prices_the_move():
    # The net cost of a move is (day with it) - (day) + (old day without it) - (old day),
    # each a proven day optimum; checked here by the brute-force day oracle of this file.
    problem = _random_week(5, 3, 2, cap=None)
    plan = plan_week(problem)
    by_name = {c.name: c for c in problem.clients}
    mover_day, mover = next((d, by_name[n]) for d, names in enumerate(plan.assignment)
                            for n in names if len(by_name[n].days_open(3)) >= 2)
    quotes = quote_week_days(problem, plan, mover)
    assert any(q["fits"] for q in quotes)
    for quote in quotes:
        d = quote["day_index"]
        assert d != mover_day and d in mover.days_open(3)
        if not quote["fits"]:
            continue
        here = [by_name[n] for n in plan.assignment[d]]
        there = [by_name[n] for n in plan.assignment[mover_day] if n != mover.name]
        before = (_day_best(problem, d, here) if here else 0.0) + _day_best(
            problem, mover_day, [by_name[n] for n in plan.assignment[mover_day]])
        after = _day_best(problem, d, here + [mover]) + (
            _day_best(problem, mover_day, there) if there else 0.0)
        assert quote["extra_km"] == pytest.approx(after - before, abs=1e-6)
