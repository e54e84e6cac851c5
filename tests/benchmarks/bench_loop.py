"""Seconds to a proven optimum per exact loop method, and the TSPLIB set.

Run: .venv/bin/python tests/benchmarks/bench_loop.py [--quick]
Random uniform points in a 100 km square, Euclidean metres, medians over
``REPEATS`` instances per size, all in one run (machines here are noisy:
compare ratios within a table, not across runs).
"""

from __future__ import annotations

import argparse
import csv
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from solver.dfj import solve_dfj  # noqa: E402
from solver.held_karp import held_karp  # noqa: E402
from solver.heuristics import iterated_local_search, loop_cost  # noqa: E402
from solver.mtz import solve_mtz  # noqa: E402
from solver.tsplib import read_tsplib  # noqa: E402

REPEATS = 3
MTZ_LIMIT_S = 20.0
DFJ_LIMIT_S = 120.0


def _instance(stops: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    p = rng.uniform(0, 100_000, (stops + 1, 2))
    return np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1))


def _timed(fn):
    t = time.perf_counter()
    result = fn()
    return time.perf_counter() - t, result


def _fmt(seconds: float | None, proven: bool = True) -> str:
    if seconds is None:
        return "—"
    return f"{seconds:.3f}" if proven else f">{seconds:.0f}"


def random_table(sizes: list[int]) -> list[str]:
    rows = ["| stops | Held–Karp | DFJ (this) | MTZ + HiGHS | MTZ + CBC | MTZ-CBC ÷ DFJ "
            "| heuristic gap % |", "|---|---|---|---|---|---|---|"]
    for stops in sizes:
        hk, dfj, mtz, cbc, gaps = [], [], [], [], []
        mtz_proven = cbc_proven = True
        for seed in range(REPEATS):
            cost = _instance(stops, 1000 * stops + seed)
            if stops <= 13:
                hk.append(_timed(lambda c=cost: held_karp(c))[0])
            secs, res = _timed(lambda c=cost: solve_dfj(c, time_limit_s=DFJ_LIMIT_S))
            assert res.proven_optimal, (stops, seed)
            dfj.append(secs)
            heuristic = loop_cost(cost, iterated_local_search(cost, time_budget_s=0.002 * stops))
            gaps.append(100 * (heuristic - res.length) / res.length)
            if stops <= 20:
                secs, m = _timed(lambda c=cost: solve_mtz(c, time_limit_s=MTZ_LIMIT_S))
                mtz.append(secs)
                mtz_proven &= m.proven_optimal
            if stops <= 16:
                secs, m = _timed(lambda c=cost: solve_mtz(c, time_limit_s=MTZ_LIMIT_S,
                                                          backend="cbc"))
                cbc.append(secs)
                cbc_proven &= m.proven_optimal
        med_dfj = statistics.median(dfj)
        med_mtz = statistics.median(mtz) if mtz else None
        med_cbc = statistics.median(cbc) if cbc else None
        ratio = f"{med_cbc / med_dfj:.0f}×" if med_cbc else "—"
        rows.append(
            f"| {stops} | {_fmt(statistics.median(hk)) if hk else '—'} | {med_dfj:.3f} | "
            f"{_fmt(med_mtz, mtz_proven)} | {_fmt(med_cbc, cbc_proven)} | {ratio} | "
            f"{statistics.median(gaps):.2f} |"
        )
        print(rows[-1], flush=True)
    return rows


def tsplib_table() -> list[str]:
    rows = ["| instance | nodes | optimum | found | proven | seconds |",
            "|---|---|---|---|---|---|"]
    table = ROOT / "fixtures" / "tsplib" / "SOLUTIONS.tsv"
    for r in csv.DictReader(table.open(), delimiter="\t"):
        ext = "atsp" if r["type"] == "ATSP" else "tsp"
        inst = read_tsplib(ROOT / "fixtures" / "tsplib" / f"{r['name']}.{ext}")
        secs, res = _timed(lambda m=inst.matrix: solve_dfj(m.astype(float),
                                                         time_limit_s=DFJ_LIMIT_S))
        rows.append(f"| {r['name']} | {inst.dimension} | {r['optimal_length']} | "
                    f"{res.length:.0f} | {res.proven_optimal} | {secs:.3f} |")
        print(rows[-1], flush=True)
    return rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="sizes up to 30 only")
    args = parser.parse_args()
    sizes = [8, 12, 16, 20, 30] if args.quick else [8, 12, 16, 20, 30, 50, 80, 100, 150]
    print("## Random uniform loops (median seconds to a proven optimum)\n", flush=True)
    out = random_table(sizes)
    print("\n## TSPLIB (DFJ)\n", flush=True)
    out += [""] + tsplib_table()
    print("\n" + "\n".join(out))


if __name__ == "__main__":
    main()
