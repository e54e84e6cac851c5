"""The compact Miller–Tucker–Zemlin loop model on PuLP: the baseline the benchmark compares.

Miller, Tucker & Zemlin (1960), "Integer programming formulation of traveling
salesman problems", J. ACM 7(4):326-329. One binary per arc, in = out = 1, and
a position ``u_i`` per stop with ``u_i - u_j + (n-1) x_ij <= n-2``, which
forbids every cycle that avoids home. Its LP relaxation is weak, so it is kept
selectable for comparison and small cases, not as the default.
"""

from __future__ import annotations

import time

import numpy as np

from .milp_backend import pulp_solver, pulp_verdict
from .result import LoopResult

__all__ = ["solve_mtz"]


def solve_mtz(
    cost: np.ndarray,
    *,
    time_limit_s: float = 30.0,
    backend: str = "highs",
    incumbent: list[int] | None = None,
) -> LoopResult:
    """The shortest loop through all nodes from node 0 by the MTZ model.

    Proven only when the solver's solution status says optimal; on a time limit
    the solver's best loop (or the incumbent) is returned with the solver's bound.
    """
    import pulp

    started = time.perf_counter()
    n = len(cost)
    integral = bool(np.all(cost == np.round(cost)))
    prob = pulp.LpProblem("loop_mtz", pulp.LpMinimize)
    arcs = [(i, j) for i in range(n) for j in range(n) if i != j]
    x = {a: pulp.LpVariable(f"x_{a[0]}_{a[1]}", cat=pulp.LpBinary) for a in arcs}
    u = {i: pulp.LpVariable(f"u_{i}", lowBound=1, upBound=n - 1) for i in range(1, n)}
    prob += pulp.lpSum(float(cost[i, j]) * x[i, j] for i, j in arcs)
    for v in range(n):
        prob += pulp.lpSum(x[v, j] for j in range(n) if j != v) == 1, f"out_{v}"
        prob += pulp.lpSum(x[i, v] for i in range(n) if i != v) == 1, f"in_{v}"
    for i, j in arcs:
        if i != 0 and j != 0:
            prob += u[i] - u[j] + (n - 1) * x[i, j] <= n - 2, f"mtz_{i}_{j}"
    warm = incumbent is not None
    if warm:
        succ = {a: b for a, b in zip(incumbent, list(incumbent[1:]) + [incumbent[0]], strict=True)}
        for (i, j), var in x.items():
            var.setInitialValue(1 if succ[i] == j else 0)
        for pos, v in enumerate(incumbent[1:], start=1):
            u[v].setInitialValue(pos)
    solver = pulp_solver(backend=backend, time_limit_s=time_limit_s, integral_costs=integral)
    if warm and backend == "cbc":
        solver.optionsDict["warmStart"] = True
        solver.warmStart = True
    prob.solve(solver)
    verdict = pulp_verdict(prob)
    elapsed = time.perf_counter() - started
    order = _order_from(x, n) if verdict.has_solution else list(incumbent or range(n))
    length = float(sum(cost[a, b] for a, b in zip(order, order[1:] + order[:1], strict=True)))
    bound = length if verdict.proven else _bound_of(prob)
    return LoopResult.make(
        order,
        length,
        proven=verdict.proven,
        lower_bound=bound,
        seconds=elapsed,
        method=f"mtz-{backend}",
        solver_status=verdict.status,
        variables=len(x) + len(u),
    )


def _order_from(x, n: int) -> list[int]:
    succ = {i: j for (i, j), var in x.items() if (var.value() or 0) > 0.5}
    order, node = [0], succ[0]
    while node != 0 and len(order) < n:
        order.append(node)
        node = succ[node]
    return order


def _bound_of(prob) -> float:
    """The solver's dual bound when it exposes one; else no bound (0 for costs >= 0)."""
    bound = getattr(prob, "bestBound", None)
    return float(bound) if bound is not None else 0.0
