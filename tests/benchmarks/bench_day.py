"""Seconds to a proven-optimal working day with time windows, and the last-minute estimate.

Run: .venv/bin/python tests/benchmarks/bench_day.py
Random days: clients uniform in a 40 km square around home, 20–60 min visits
(10–30 min from 20 visits on, or the day would not fit before midnight), one
window of 2–4 h per client placed around a feasible reference schedule (so
every day has a plan), 50 km/h with a 1.3 detour factor. Medians over
``REPEATS`` days per size, all in one run.
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from solver.clock import Window  # noqa: E402
from solver.day import DayPlan, DayProblem, DayRules, Visit, simulate  # noqa: E402
from solver.day_exact import plan_day, quote_extra_visit  # noqa: E402
from solver.heuristics import nearest_neighbour  # noqa: E402

REPEATS = 5
SIZES = [8, 12, 15, 16, 20, 25]
SPEED_KMH = 50.0
DETOUR = 1.3


def random_day(visits: int, seed: int) -> DayProblem:
    rng = np.random.default_rng(seed)
    p = rng.uniform(-20, 20, (visits + 2, 2))  # the last one is the last-minute candidate
    p[0] = 0.0
    km = np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1)) * DETOUR
    minutes = km / SPEED_KMH * 60
    low, high = (20, 61) if visits < 20 else (10, 31)
    service = rng.integers(low, high, visits + 1).astype(float)
    start = 7 * 60.0
    loose = tuple(Visit(f"c{k}", float(service[k - 1])) for k in range(1, visits + 2))
    reference = [v for v in nearest_neighbour(km[: visits + 1, : visits + 1])[1:]]
    probe = DayProblem(km, minutes, loose, DayRules(start, 24 * 60.0),
                       todo=tuple(range(1, visits + 1)))
    _, timed, summary = simulate(probe, reference)
    windows = {}
    for v in timed:
        width = float(rng.integers(120, 241))
        open_at = max(0.0, v.start_min - rng.uniform(0, width))
        windows[v.node] = (Window(open_at, min(24 * 60.0, open_at + width)),)
    windows[visits + 1] = (Window(start, 24 * 60.0),)
    day_end = min(24 * 60.0, summary["return_min"] + 60)
    visits_t = tuple(Visit(f"c{k}", float(service[k - 1]), windows[k])
                     for k in range(1, visits + 2))
    return DayProblem(km, minutes, visits_t, DayRules(start, day_end),
                      todo=tuple(range(1, visits + 1)))


def main() -> None:
    rows = ["| visits | median s to proven optimum | max s | proven | method | "
            "last-minute estimate ms (median) | exact re-plan with it s |",
            "|---|---|---|---|---|---|---|"]
    print(rows[0] + "\n" + rows[1], flush=True)
    for size in SIZES:
        secs, proven, methods, est_ms, exact_s = [], 0, set(), [], []
        for seed in range(REPEATS):
            problem = random_day(size, 7919 * size + seed)
            t = time.perf_counter()
            plan: DayPlan = plan_day(problem, time_limit_s=60)
            secs.append(time.perf_counter() - t)
            proven += plan.proven_optimal
            methods.add(plan.method)
            t = time.perf_counter()
            quote = quote_extra_visit(problem, plan, size + 1, time_limit_s=60)
            total = time.perf_counter() - t
            exact_s.append(total)
            est_ms.append(quote.get("estimate_ms", float("nan")))
        rows.append(f"| {size} | {statistics.median(secs):.3f} | {max(secs):.3f} | "
                    f"{proven}/{REPEATS} | {'/'.join(sorted(methods))} | "
                    f"{statistics.median(est_ms):.1f} | {statistics.median(exact_s):.3f} |")
        print(rows[-1], flush=True)


if __name__ == "__main__":
    main()
