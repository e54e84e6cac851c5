"""The working day as a mixed-integer programme: arcs, start times, and big-M links.

The compact time-window model (Miller, Tucker & Zemlin 1960's position
variables generalised to clock times; e.g. Desrochers & Laporte 1991 for the
time-window form): a binary ``x_ij`` per arc of the path from where the rep
starts through every visit to home, a start time ``T_j`` per visit inside one
of its windows (a binary per window when there are several), and

    T_j >= T_i + service_i + drive_ij - M_ij (1 - x_ij),

with ``M_ij`` tightened from the data (the latest the rep can leave i minus
the earliest j can start). Time alone does not forbid a cycle of zero-time
legs between visits of zero duration, so the subtour cuts of the loop solver
(Dantzig, Fulkerson & Johnson 1954) are added for any cycle the solution
shows, and the model is solved again.

It is the second exact method beside the label-setting programme of
:mod:`solver.day_exact` (used there as the fast path and here as the oracle);
it does not model the break, and it does not break ties (the label programme
does). Proof comes only from the solver's proven status.
"""

from __future__ import annotations

import time

import numpy as np

from .day import DayPlan, DayProblem, check_day_problem, simulate
from .errors import Infeasible, InvalidInput
from .milp_backend import pulp_solver, pulp_verdict
from .result import relative_gap
from .stopping import left

__all__ = ["plan_day_milp"]

_MAX_CUT_ROUNDS = 50


def plan_day_milp(problem: DayProblem, *, time_limit_s: float = 30.0,
                  backend: str = "highs") -> DayPlan:
    """The proven best plan by the compact MILP; Infeasible when none keeps every rule."""
    import pulp

    started = time.perf_counter()
    km, minutes, todo = check_day_problem(problem)
    if problem.rules.break_rule is not None and not problem.break_taken:
        raise InvalidInput("the MILP method does not model the break; use the default method",
                           field="method", value="milp")
    rules = problem.rules
    objective = rules.objective
    origin = problem.start_node
    t0 = problem.start_min if problem.start_min is not None else rules.start_min
    home = "home"
    visits = {j: problem.visits[j - 1] for j in todo}
    windows = {j: tuple((w.start_min, w.end_min) for w in v.windows) or ((t0, rules.end_min),)
               for j, v in visits.items()}
    service = {j: float(v.service_min) for j, v in visits.items()}

    def node(v):
        return 0 if v == home else v

    arcs = [(origin, j) for j in todo] + [(i, j) for i in todo for j in todo if i != j]
    arcs += [(i, home) for i in todo] or [(origin, home)]
    # Bounds on each start from the quickest drives there and home. Entered drives need not
    # obey the triangle inequality (a detour via another visit can be quicker), so these are
    # shortest paths, never the direct legs: the direct leg would wrongly rule visits out.
    quickest = _shortest_paths(minutes)
    earliest = {j: max(windows[j][0][0], t0 + quickest[origin, j]) for j in todo}
    latest = {j: min(windows[j][-1][1], rules.end_min - service[j] - quickest[j, 0])
              for j in todo}
    for j in todo:
        if earliest[j] > latest[j] + 1e-9:
            raise Infeasible(f"{visits[j].name} cannot be fitted even alone",
                             explanation={"summary": f"{visits[j].name} cannot be fitted even "
                                          "alone", "unreachable": [{"name": visits[j].name}]})
    leave_latest = {origin: t0, **{i: latest[i] + service[i] for i in todo}}
    integral = bool(np.all(km == np.round(km)))
    cuts: list[list[int]] = []
    deadline = started + time_limit_s
    for round_no in range(_MAX_CUT_ROUNDS):
        prob = pulp.LpProblem("day", pulp.LpMinimize)
        x = {a: pulp.LpVariable(f"x_{a[0]}_{a[1]}", cat=pulp.LpBinary) for a in arcs}
        start_at = {j: pulp.LpVariable(f"T_{j}", lowBound=earliest[j], upBound=latest[j])
                    for j in todo}
        back = pulp.LpVariable("R", lowBound=t0, upBound=rules.end_min)
        drive_km = pulp.lpSum(float(km[node(i), node(j)]) * x[i, j] for i, j in arcs)
        prob += drive_km if objective == "km" else back
        prob += pulp.lpSum(x[a] for a in arcs if a[0] == origin) == 1
        prob += pulp.lpSum(x[a] for a in arcs if a[1] == home) == 1
        for j in todo:
            prob += pulp.lpSum(x[a] for a in arcs if a[1] == j) == 1
            prob += pulp.lpSum(x[a] for a in arcs if a[0] == j) == 1
            if len(windows[j]) > 1:
                pick = [pulp.LpVariable(f"w_{j}_{k}", cat=pulp.LpBinary)
                        for k in range(len(windows[j]))]
                prob += pulp.lpSum(pick) == 1
                prob += start_at[j] >= pulp.lpSum(p * w[0] for p, w in zip(pick, windows[j],
                                                                           strict=True))
                prob += start_at[j] <= pulp.lpSum(p * w[1] for p, w in zip(pick, windows[j],
                                                                           strict=True))
        for i, j in arcs:
            leave = t0 if i == origin else start_at[i] + service[i]
            drive = float(minutes[node(i), node(j)])
            if j == home:
                big_m = max(0.0, leave_latest[i] + drive - t0)
                prob += back >= leave + drive - big_m * (1 - x[i, j])
            else:
                big_m = max(0.0, leave_latest[i] + drive - earliest[j])
                prob += start_at[j] >= leave + drive - big_m * (1 - x[i, j])
        for i in todo:
            for j in todo:
                if i < j:
                    prob += x[i, j] + x[j, i] <= 1
        for subset in cuts:
            prob += pulp.lpSum(x[i, j] for i in subset for j in subset if i != j) \
                <= len(subset) - 1
        remaining = left(deadline)
        if remaining <= 0:
            break
        prob.solve(pulp_solver(backend=backend, time_limit_s=remaining,
                               integral_costs=integral and objective == "km"))
        verdict = pulp_verdict(prob)
        if verdict.infeasible:
            raise Infeasible("no plan keeps every time window (MILP)",
                             explanation={"summary": "no plan keeps every time window"})
        if not verdict.has_solution:
            break
        succ = {i: j for (i, j), var in x.items() if (var.value() or 0) > 0.5}
        order, here = [], origin
        while here != home and len(order) <= len(todo):
            here = succ[here]
            if here != home:
                order.append(here)
        missing = [j for j in todo if j not in order]
        if missing:
            cuts.extend(_cycles(succ, missing))
            continue
        ok, planned, summary = simulate(problem, order)
        value = summary["total_km"] if objective == "km" else summary["return_min"]
        bound = value if verdict.proven else float(prob.objective.value() or 0.0)
        if not ok:  # pragma: no cover - the model and the simulation share their rules
            raise InvalidInput(f"the MILP plan breaks a rule: {summary['reason']}",
                               field="method", value="milp")
        return DayPlan(
            visits=tuple(planned), start_node=origin, start_min=t0,
            return_min=summary["return_min"], return_leg_km=summary["return_leg_km"],
            return_leg_min=summary["return_leg_min"], break_before_return=None,
            total_km=summary["total_km"], total_drive_min=summary["total_drive_min"],
            total_wait_min=summary["total_wait_min"], proven_optimal=verdict.proven,
            lower_bound=value if verdict.proven else min(value, bound),
            gap=0.0 if verdict.proven else relative_gap(value, min(value, bound)),
            seconds=time.perf_counter() - started, method=f"milp-{backend}",
            objective=objective, stats={"cut_rounds": round_no, "cuts": len(cuts)})
    raise Infeasible("the MILP found no plan within its time limit",
                     explanation={"summary": "no plan was found within the time limit"})


def _cycles(succ: dict, missing: list[int]) -> list[list[int]]:
    """The cycles among the visits the path from the start did not reach."""
    seen: set[int] = set()
    cycles = []
    for v in missing:
        if v in seen:
            continue
        cycle, here = [], v
        while here not in seen:
            seen.add(here)
            cycle.append(here)
            here = succ[here]
        cycles.append(cycle)
    return cycles


def _shortest_paths(minutes: np.ndarray) -> np.ndarray:
    """All-pairs quickest drives (Floyd–Warshall, 1962), vectorised by intermediate node."""
    quickest = np.array(minutes, dtype=float)
    for k in range(len(quickest)):
        quickest = np.minimum(quickest, quickest[:, k : k + 1] + quickest[k : k + 1, :])
    return quickest
