"""Calling a solve off: every long solve stops within moments, and never claims a proof.

The solves are real (loop, day, week) on invented random data sized to run for
more than ten seconds when left alone (measured here); each is called off after
half a second by another thread's signal. "Moments" here is a generous 5 s
(common practice, no source): the point is that none runs on to its 60 s limit.
"""

from __future__ import annotations

import threading
import time

import numpy as np
import pytest

from solver.clock import Window
from solver.day import DayProblem, DayRules, Visit
from solver.day_exact import plan_day
from solver.errors import SolverError
from solver.loop import solve_loop
from solver.stopping import called_off, left, past, stop_when
from solver.week import WeekClient, WeekProblem, WorkDay, plan_week

LIMIT_S = 60.0
STOP_AFTER_S = 0.5
PROMPT_S = 5.0


def _points(n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    p = rng.uniform(-20, 20, (n + 1, 2))
    p[0] = 0.0
    return np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1)) * 1.3


def _called_off_after(seconds: float, solve):
    """Run ``solve`` under a signal that turns true after ``seconds``: (result, elapsed)."""
    flag = threading.Event()
    timer = threading.Timer(seconds, flag.set)
    timer.start()
    started = time.perf_counter()
    try:
        with stop_when(flag.is_set):
            try:
                result = solve()
            except SolverError as stopped:
                result = stopped
    finally:
        timer.cancel()
    return result, time.perf_counter() - started


def test_the_signal_reads_as_time_up_only_inside_its_block():
    later = time.perf_counter() + 100
    assert not called_off() and not past(later) and left(later) > 99
    with stop_when(lambda: True):
        assert called_off() and past(later) and left(later) == 0.0
    assert not past(later)


def test_the_signal_belongs_to_the_thread_that_set_it():
    seen = []
    with stop_when(lambda: True):
        worker = threading.Thread(target=lambda: seen.append(called_off()))
        worker.start()
        worker.join()
    assert seen == [False]


def test_a_large_week_stops_when_called_off():
    km = _points(45, 3)
    clients = tuple(WeekClient(f"c{k}", k, 20.0) for k in range(1, 46))
    days = tuple(WorkDay(name, DayRules(480.0, 1080.0), max_visits=11)
                 for name in ("Mon", "Tue", "Wed", "Thu", "Fri"))
    problem = WeekProblem(km, km / 50 * 60, clients, days)
    result, elapsed = _called_off_after(STOP_AFTER_S, lambda: plan_week(problem,
                                                                        time_limit_s=LIMIT_S))
    assert elapsed < PROMPT_S
    if not isinstance(result, SolverError):
        assert not result.proven_optimal


def test_a_long_day_stops_when_called_off():
    # Forty 5-minute visits with 4-hour windows over a 17-hour day: the exact search runs
    # past 10 s here when left alone.
    km = _points(40, 5)
    rng = np.random.default_rng(1)
    visits = tuple(Visit(f"v{k}", 5.0, (Window(s, s + 240.0),))
                   for k, s in enumerate(rng.uniform(420, 960, 40), start=1))
    problem = DayProblem(km, km / 50 * 60, visits, DayRules(360.0, 1380.0))
    result, elapsed = _called_off_after(STOP_AFTER_S, lambda: plan_day(problem,
                                                                       time_limit_s=LIMIT_S))
    assert elapsed < PROMPT_S
    if not isinstance(result, SolverError):
        assert not result.proven_optimal or result.gap == pytest.approx(0.0)


def test_a_large_loop_stops_when_called_off():
    km = _points(300, 7)
    result, elapsed = _called_off_after(STOP_AFTER_S, lambda: solve_loop(km,
                                                                         time_limit_s=LIMIT_S))
    assert elapsed < PROMPT_S
    assert not isinstance(result, SolverError)
    assert sorted(result.order) == list(range(301))
    assert not result.proven_optimal
