"""Route pricing (the column generator of the week's bound) against full enumeration.

Oracle: every ordered subset of the day's candidates, timed by this file's own
clock (start inside a window, waiting allowed, home by the end, at most the cap
of visits), each scored km − prizes − day dual. Invented random data (no
outside values): the check is the independent enumeration. Pricing must find
exactly the least reduced cost when its neighbourhoods hold every candidate
(elementary routes), never more than it with smaller neighbourhoods (ng-routes
are a relaxation, Baldacci, Mingozzi & Roberti 2011), and report every route's
km and reduced cost truly.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver.clock import Window
from solver.route_pricing import PricingDay, price_routes


def _day(seed: int, n: int, *, cap: int | None, tight: bool) -> tuple[PricingDay, np.ndarray]:
    rng = np.random.default_rng(seed)
    p = rng.uniform(-15, 15, (n + 1, 2))
    p[0] = 0.0
    km = np.round(np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1)) * 1.3, 3)
    minutes = np.round(km / 40 * 60, 3)
    windows = []
    for _ in range(n):
        if rng.random() < 0.5:
            start = float(rng.integers(480, 800))
            windows.append((Window(start, start + float(rng.integers(30, 240))),))
        else:
            windows.append(())
    service = tuple(float(rng.integers(10, 60)) for _ in range(n))
    end = 480.0 + (240.0 if tight else 600.0)
    prizes = np.round(rng.uniform(0, 30, n), 3)
    return PricingDay(km, minutes, service, tuple(windows), 480.0, end, cap), prizes


def _walk(day: PricingDay, order) -> float | None:
    t, here, km = day.start_min, 0, 0.0
    for node in order:
        t += day.minutes[here, node]
        km += day.km[here, node]
        wins = day.windows[node - 1]
        if wins:
            open_ = [w for w in wins if t <= w.end_min + 1e-9]
            if not open_:
                return None
            t = max(t, open_[0].start_min)
        t += day.service[node - 1]
        here = node
    t += day.minutes[here, 0]
    km += day.km[here, 0]
    return km if t <= day.end_min + 1e-9 else None


def _least_by_enumeration(day: PricingDay, prizes, dual: float) -> float:
    best = 0.0
    n = day.size
    top = n if day.max_visits is None else min(n, day.max_visits)
    for size in range(1, top + 1):
        for subset in itertools.combinations(range(1, n + 1), size):
            gain = sum(prizes[k - 1] for k in subset)
            for order in itertools.permutations(subset):
                km = _walk(day, order)
                if km is not None:
                    best = min(best, km - gain - dual)
    return best


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(1, 6), cap=st.sampled_from([None, 2, 3]),
       tight=st.booleans(), dual=st.sampled_from([0.0, -5.0]))
def test_exact_pricing_finds_the_least_reduced_cost(seed, n, cap, tight, dual):
    day, prizes = _day(seed, n, cap=cap, tight=tight)
    truth = _least_by_enumeration(day, prizes, dual)
    elementary = price_routes(day, prizes, dual, ng_size=n)
    assert elementary.least == pytest.approx(truth, abs=1e-6)
    relaxed = price_routes(day, prizes, dual, ng_size=1)
    assert relaxed.least <= truth + 1e-6
    for found in (elementary, relaxed):
        for route in found.routes:
            # each route reported is what it says: its km, its reduced cost, and it fits
            assert route.reduced_cost < 0
            km = _walk(day, route.order)
            if route.elementary:
                assert km == pytest.approx(route.km, abs=1e-6)
            gain = sum(prizes[k - 1] for k in route.order)
            assert route.reduced_cost == pytest.approx(route.km - gain - dual, abs=1e-6)
            if cap is not None:
                assert len(route.order) <= cap


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(2, 6))
def test_heuristic_pricing_returns_real_routes_only(seed, n):
    day, prizes = _day(seed, n, cap=None, tight=False)
    found = price_routes(day, prizes * 3, 0.0, bucket=2)
    assert found.least is None  # a heuristic proves nothing
    for route in found.routes:
        assert route.elementary
        assert _walk(day, route.order) == pytest.approx(route.km, abs=1e-6)


def test_a_day_without_candidates_prices_only_the_empty_route():
    empty = PricingDay(np.zeros((1, 1)), np.zeros((1, 1)), (), (), 480.0, 1000.0)
    assert price_routes(empty, [], -3.0).least == 0.0
    assert price_routes(empty, [], 0.0).routes == ()


def test_time_alone_caps_the_visits_of_a_day():
    # Four 100-minute visits 6 min from home: only two fit a 4-hour day.
    km = np.full((5, 5), 5.0)
    np.fill_diagonal(km, 0.0)
    day = PricingDay(km, km * 1.2, (100.0,) * 4, ((),) * 4, 480.0, 720.0)
    assert day.most_visits() == 2
    found = price_routes(day, [50.0] * 4, 0.0, ng_size=4)
    assert max(len(r.order) for r in found.routes) == 2
    assert found.least == pytest.approx(15.0 - 100.0)
