"""Weeks over five working days: time to the final plan and the gap to the lower bound.

Run: .venv/bin/python tests/benchmarks/bench_week.py
Clients uniform in a 40 km square around home, 15–30 min visits, a third of
them receiving visitors on two or three weekdays only, days 08:00–18:00 with
at most ``ceil(visits / 5) + 2`` visits; 50 km/h with a 1.3 detour factor.
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from solver.day import DayRules  # noqa: E402
from solver.week import WeekClient, WeekProblem, WorkDay, plan_week  # noqa: E402

REPEATS = 3
SIZES = [15, 20, 40, 60]


def random_week(visits: int, seed: int) -> WeekProblem:
    rng = np.random.default_rng(seed)
    p = rng.uniform(-20, 20, (visits + 1, 2))
    p[0] = 0.0
    km = np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1)) * 1.3
    minutes = km / 50 * 60
    clients = []
    for k in range(1, visits + 1):
        allowed = None
        if k % 3 == 0:
            allowed = tuple(sorted(rng.choice(5, size=int(rng.integers(2, 4)),
                                              replace=False).tolist()))
        clients.append(WeekClient(f"c{k}", k, float(rng.integers(15, 31)), allowed_days=allowed))
    cap = math.ceil(visits / 5) + 2
    days = tuple(WorkDay(name, DayRules(480.0, 1080.0), max_visits=cap)
                 for name in ("Mon", "Tue", "Wed", "Thu", "Fri"))
    return WeekProblem(km, minutes, tuple(clients), days)


def main() -> None:
    print("| visits | method | median s | max s | median gap % | proven |")
    print("|---|---|---|---|---|---|", flush=True)
    for size in SIZES:
        secs, gaps, proven, methods = [], [], 0, set()
        for seed in range(REPEATS):
            problem = random_week(size, 31 * size + seed)
            t = time.perf_counter()
            plan = plan_week(problem, time_limit_s=60)
            secs.append(time.perf_counter() - t)
            gaps.append(100 * plan.gap)
            proven += plan.proven_optimal
            methods.add(plan.method)
        print(f"| {size} | {'/'.join(sorted(methods))} | {statistics.median(secs):.2f} | "
              f"{max(secs):.2f} | {statistics.median(gaps):.1f} | {proven}/{REPEATS} |",
              flush=True)


if __name__ == "__main__":
    main()
