"""The shortest loop from home through every stop: the one entry point for all methods.

``solve_loop(cost)`` validates the matrix once, handles the 0-, 1- and 2-stop
cases directly, and hands larger loops to the chosen method:

- ``"auto"``: Held–Karp up to :data:`AUTO_HELD_KARP_STOPS` stops, else cutting planes;
- ``"held-karp"``: dynamic programming (Held & Karp 1962), exact, small loops only;
- ``"dfj"``: subtour cuts with reduced-cost fixing on HiGHS (Dantzig, Fulkerson & Johnson 1954);
- ``"mtz"``: the compact Miller–Tucker–Zemlin model on PuLP (1960), the textbook baseline;
- ``"heuristic"``: nearest neighbour, 2-opt and Or-opt with kicks; never proven.

Node 0 is home. The matrix may be asymmetric and may hold zeros off the
diagonal (duplicate places, a stop at home); the diagonal is ignored.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence

import numpy as np

from .dfj import solve_dfj
from .errors import InvalidInput
from .held_karp import MAX_HELD_KARP_STOPS, held_karp
from .heuristics import iterated_local_search, loop_cost
from .mtz import solve_mtz
from .result import LoopResult

__all__ = ["METHODS", "AUTO_HELD_KARP_STOPS", "MAX_STOPS", "check_cost_matrix", "solve_loop",
           "simple_lower_bound"]

METHODS = ("auto", "dfj", "mtz", "held-karp", "heuristic")
AUTO_HELD_KARP_STOPS = 12  # below this, the dynamic programme beats building any MILP
MAX_STOPS = 500  # beyond this a dense model no longer fits a laptop's patience


def check_cost_matrix(cost, *, field: str = "matrix") -> np.ndarray:
    """The matrix as a float array with a zero diagonal, or InvalidInput naming the problem."""
    try:
        arr = np.array(cost, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InvalidInput(f"{field} must hold numbers only: {exc}", field=field) from exc
    if arr.ndim != 2 or arr.shape[0] != arr.shape[1]:
        raise InvalidInput(
            f"{field} must be square; got shape {arr.shape}", field=field, value=arr.shape
        )
    if arr.shape[0] == 0:
        raise InvalidInput(f"{field} must include home (at least 1 x 1)", field=field)
    if arr.shape[0] - 1 > MAX_STOPS:
        raise InvalidInput(
            f"{field} has {arr.shape[0] - 1} stops; at most {MAX_STOPS} can be planned at once",
            field=field,
            value=arr.shape[0] - 1,
        )
    np.fill_diagonal(arr, 0.0)
    bad = ~np.isfinite(arr)
    if bad.any():
        i, j = map(int, np.argwhere(bad)[0])
        raise InvalidInput(
            f"{field}[{i}][{j}] is {arr[i, j]}; expected a finite number",
            field=f"{field}[{i}][{j}]",
            value=float(arr[i, j]),
        )
    negative = arr < 0
    if negative.any():
        i, j = map(int, np.argwhere(negative)[0])
        raise InvalidInput(
            f"{field}[{i}][{j}] is {arr[i, j]}; a leg cannot be negative",
            field=f"{field}[{i}][{j}]",
            value=float(arr[i, j]),
        )
    arr.setflags(write=False)
    return arr


def simple_lower_bound(cost: np.ndarray) -> float:
    """A quick valid bound: every stop is left once and entered once (assignment-style)."""
    n = len(cost)
    if n < 2:
        return 0.0
    off = np.where(np.eye(n, dtype=bool), np.inf, cost)
    return float(max(off.min(axis=1).sum(), off.min(axis=0).sum()))


def solve_loop(
    cost,
    *,
    method: str = "auto",
    time_limit_s: float = 30.0,
    seed: int = 0,
    incumbent: Sequence[int] | None = None,
    backend: str = "highs",
) -> LoopResult:
    """The least-cost closed loop from node 0 through every other node, with its proof.

    ``proven_optimal`` is true only when the method proved it; a time-limited run
    returns its best loop with a valid ``lower_bound`` and ``gap``.
    """
    started = time.perf_counter()
    if method not in METHODS:
        raise InvalidInput(
            f"method {method!r} is not known; expected one of {', '.join(METHODS)}",
            field="method",
            value=method,
        )
    if not (isinstance(time_limit_s, int | float) and math.isfinite(time_limit_s)
            and time_limit_s > 0):
        raise InvalidInput(
            f"time limit {time_limit_s!r} s is not usable; expected a positive number of seconds",
            field="time_limit_s",
            value=time_limit_s,
        )
    cost = check_cost_matrix(cost)
    n = len(cost)
    if incumbent is not None:
        incumbent = _check_incumbent(incumbent, n)

    if n <= 3:
        return _tiny(cost, started)
    if method == "auto":
        method = "held-karp" if n - 1 <= AUTO_HELD_KARP_STOPS else "dfj"
    if method == "held-karp":
        if n - 1 > MAX_HELD_KARP_STOPS:
            raise InvalidInput(
                f"held-karp handles at most {MAX_HELD_KARP_STOPS} stops; got {n - 1}",
                field="method",
                value=method,
            )
        order, length = held_karp(cost)
        return LoopResult.make(order, length, proven=True, lower_bound=length,
                               seconds=time.perf_counter() - started, method="held-karp")
    if method == "heuristic":
        order = iterated_local_search(cost, time_budget_s=min(1.0, time_limit_s), seed=seed,
                                      start=incumbent)
        return LoopResult.make(order, loop_cost(cost, order), proven=False,
                               lower_bound=simple_lower_bound(cost),
                               seconds=time.perf_counter() - started, method="heuristic")
    if method == "mtz":
        return solve_mtz(cost, time_limit_s=time_limit_s, backend=backend,
                         incumbent=list(incumbent) if incumbent is not None else None)
    return solve_dfj(cost, time_limit_s=time_limit_s, seed=seed,
                     incumbent=list(incumbent) if incumbent is not None else None)


def _tiny(cost: np.ndarray, started: float) -> LoopResult:
    """0, 1 or 2 stops: every loop can be listed, so the best is proven by inspection."""
    n = len(cost)
    candidates = [list(range(n))]
    if n == 3:
        candidates.append([0, 2, 1])
    order = min(candidates, key=lambda o: (loop_cost(cost, o), o))
    length = loop_cost(cost, order)
    return LoopResult.make(order, length, proven=True,
                           lower_bound=length, seconds=time.perf_counter() - started,
                           method="enumeration")


def _check_incumbent(incumbent: Sequence[int], n: int) -> list[int]:
    order = [int(v) for v in incumbent]
    if sorted(order) != list(range(n)) or order[0] != 0:
        raise InvalidInput(
            f"starting loop {order!r} must list home (0) first and every stop once",
            field="incumbent",
            value=order,
        )
    return order
