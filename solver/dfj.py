"""Exact loops by subtour-elimination cuts on a live HiGHS model.

Dantzig, Fulkerson & Johnson (1954), "Solution of a large-scale
traveling-salesman problem", Operations Research 2(4):393-410: degree
constraints plus subtour-elimination constraints added only when violated.

The cut loop:
1. Root LP with degree rows; separate subtours on the fractional solution
   exactly (components, then minimum cuts after Padberg–Rinaldi shrinking, see
   :mod:`solver.subtours`) and add them in rounds until none is violated.
2. Fix to zero every variable whose reduced cost exceeds (incumbent − LP bound):
   any loop using it would be longer than the incumbent already in hand
   (reduced-cost fixing, Crowder, Johnson & Padberg 1983).
3. Solve the integer model with the whole cut pool, warm-started with the
   heuristic loop; if the integer solution still splits into subtours, add their
   cuts and re-solve. The model lives in one HiGHS instance throughout, so no
   round rebuilds it.

A symmetric cost matrix uses the undirected form (one variable per edge,
degree 2); otherwise the directed form (one per arc, in = out = 1).
Optimality is claimed only from a HiGHS status of optimal with zero gaps;
on a time limit the best loop is returned with a valid bound and its gap.
"""

from __future__ import annotations

import time

import numpy as np

from .heuristics import iterated_local_search, local_search, loop_cost
from .milp_backend import new_highs, proof_gaps
from .result import LoopResult
from .stopping import left, past
from .subtours import violated_blossoms, violated_subtours

__all__ = ["solve_dfj"]

_LP_THRESHOLD = 2.0 - 1e-3  # fractional cuts weaker than this are left to the integer phase
_MAX_LP_ROUNDS = 200
_LP_SHARE_OF_TIME = 0.4  # root cutting may use this share of the time limit
_KICKS_FROM_NODES = 40  # measured: below this, heuristic kicks cost more than they save


class _Model:
    """The edge (or arc) variables of the loop model and their rows in HiGHS."""

    def __init__(self, cost: np.ndarray, symmetric: bool, time_limit_s: float):
        import highspy

        self.highspy = highspy
        self.n = n = len(cost)
        self.symmetric = symmetric
        if symmetric:
            tail, head = np.triu_indices(n, 1)
        else:
            tail, head = np.nonzero(~np.eye(n, dtype=bool))
        self.tail, self.head = tail.astype(np.intp), head.astype(np.intp)
        self.costs = cost[self.tail, self.head].astype(float)
        self.m = len(self.costs)
        self.var_of = np.full((n, n), -1, dtype=np.intp)
        self.var_of[self.tail, self.head] = np.arange(self.m)
        if symmetric:
            self.var_of[self.head, self.tail] = np.arange(self.m)
        self.highs = new_highs(time_limit_s=time_limit_s)
        self.highs.addVars(self.m, np.zeros(self.m), np.ones(self.m))
        self.highs.changeColsCost(self.m, np.arange(self.m, dtype=np.int32), self.costs)
        self._add_degree_rows()
        self.cuts_added = 0

    def _add_degree_rows(self) -> None:
        n, cols = self.n, np.arange(self.m)
        if self.symmetric:
            rows = [np.concatenate((cols[self.tail == v], cols[self.head == v])) for v in range(n)]
            self._add_rows(rows, lower=2.0, upper=2.0)
        else:
            self._add_rows([cols[self.tail == v] for v in range(n)], lower=1.0, upper=1.0)
            self._add_rows([cols[self.head == v] for v in range(n)], lower=1.0, upper=1.0)

    def _add_rows(self, rows: list[np.ndarray], *, lower: float, upper) -> None:
        count = len(rows)
        starts = np.zeros(count, dtype=np.int32)
        lengths = np.array([len(r) for r in rows])
        starts[1:] = np.cumsum(lengths)[:-1]
        index = np.concatenate(rows).astype(np.int32)
        lows = np.full(count, lower)
        ups = np.asarray(upper, dtype=float) * np.ones(count)
        self.highs.addRows(count, lows, ups, len(index), starts, index, np.ones(len(index)))

    def add_subtour_cuts(self, subsets: list[list[int]]) -> int:
        """Add x(E(S)) <= |S| - 1 for each node set S of two or more nodes."""
        rows, uppers = [], []
        for subset in subsets:
            if len(subset) < 2:
                continue
            s = np.asarray(subset, dtype=np.intp)
            inside = self.var_of[np.ix_(s, s)]
            inside = inside[inside >= 0]
            rows.append(np.unique(inside))
            uppers.append(len(subset) - 1.0)
        if rows:
            self._add_rows(rows, lower=-self.highspy.kHighsInf, upper=np.array(uppers))
            self.cuts_added += len(rows)
        return len(rows)

    def add_blossoms(self, blossoms) -> int:
        """Add x(E(H)) + x(T) <= |H| + (|T| - 1) / 2 for each (handle H, teeth T)."""
        rows, uppers = [], []
        for handle, teeth in blossoms:
            h = np.asarray(handle, dtype=np.intp)
            inside = self.var_of[np.ix_(h, h)]
            tooth_vars = [self.var_of[a, b] for u, v in teeth for a, b in ((u, v), (v, u))]
            cols = np.concatenate((inside[inside >= 0], np.asarray(tooth_vars, dtype=np.intp)))
            rows.append(np.unique(cols[cols >= 0]))
            uppers.append(len(handle) + (len(teeth) - 1) / 2.0)
        if rows:
            self._add_rows(rows, lower=-self.highspy.kHighsInf, upper=np.array(uppers))
            self.cuts_added += len(rows)
        return len(rows)

    def flow_matrix(self, x: np.ndarray) -> np.ndarray:
        """x as a symmetric n x n matrix of flow between each pair, either way."""
        w = np.zeros((self.n, self.n))
        np.add.at(w, (self.tail, self.head), x)
        return w + w.T

    def vector_of(self, order) -> np.ndarray:
        x = np.zeros(self.m)
        idx = np.asarray(order, dtype=np.intp)
        x[self.var_of[idx, np.roll(idx, -1)]] = 1.0
        return x

    def cycles(self, x: np.ndarray) -> list[list[int]]:
        """The cycles of an integral solution, each in travel order; home's cycle first."""
        chosen = x > 0.5
        succ: dict[int, list[int]] = {v: [] for v in range(self.n)}
        for a, b in zip(self.tail[chosen].tolist(), self.head[chosen].tolist(), strict=True):
            succ[a].append(b)
            if self.symmetric:
                succ[b].append(a)
        seen: set[int] = set()
        cycles = []
        for start in range(self.n):
            if start in seen:
                continue
            cycle, prev, node = [start], -1, start
            seen.add(start)
            while True:
                options = [v for v in succ[node] if v != prev] or succ[node]
                nxt = options[0]
                if nxt == start or nxt in seen:
                    break
                cycle.append(nxt)
                seen.add(nxt)
                prev, node = node, nxt
            cycles.append(cycle)
        return cycles

    def run(self, time_left_s: float) -> None:
        self.highs.setOptionValue("time_limit", max(0.01, time_left_s))
        self.highs.run()

    def status(self):
        return self.highs.getModelStatus()


def solve_dfj(
    cost: np.ndarray,
    *,
    time_limit_s: float = 30.0,
    incumbent: list[int] | None = None,
    symmetric: bool | None = None,
    seed: int = 0,
    heuristic_budget_s: float | None = None,
    blossoms: bool = False,
) -> LoopResult:
    """The shortest loop from node 0 through all nodes, proven by cuts and branching.

    Needs at least 3 nodes. Returns ``proven_optimal=True`` only on a proven
    optimum; otherwise the best loop found, a valid lower bound, and the gap.
    """
    started = time.perf_counter()
    deadline = started + time_limit_s
    n = len(cost)
    if symmetric is None:
        symmetric = bool(np.allclose(cost, cost.T, rtol=0, atol=1e-9))
    integral = bool(np.all(cost == np.round(cost)))
    _, abs_gap = proof_gaps(integral_costs=integral)

    if incumbent is None:
        # Small loops are closed by the LP in a few rounds; kicks only pay off on larger ones.
        budget = heuristic_budget_s if heuristic_budget_s is not None else (
            min(0.002 * n, 0.1 * time_limit_s) if n >= _KICKS_FROM_NODES else 0.0
        )
        incumbent = iterated_local_search(cost, time_budget_s=budget, seed=seed,
                                          max_kicks=None if budget > 0 else 0)
    best_order = list(incumbent)
    best_len = loop_cost(cost, best_order)
    heuristic_len = best_len

    model = _Model(cost, symmetric, time_limit_s)
    stats = {"form": "symmetric" if symmetric else "directed", "variables": model.m}
    fixed = 0

    def finish(order, length, *, proven, bound, **extra):
        return LoopResult.make(
            order,
            length,
            proven=proven,
            lower_bound=bound,
            seconds=time.perf_counter() - started,
            method="dfj",
            heuristic_length=heuristic_len,
            cuts=model.cuts_added,
            fixed_by_reduced_cost=fixed,
            **stats,
            **extra,
        )

    # Phase 1: the root LP, cut until no subtour is violated.
    lp_bound = -np.inf
    rounds = 0
    lp_deadline = started + _LP_SHARE_OF_TIME * time_limit_s
    while rounds < _MAX_LP_ROUNDS:
        rounds += 1
        model.run(left(deadline))
        if model.status() != model.highspy.HighsModelStatus.kOptimal:
            break
        lp_bound = model.highs.getInfo().objective_function_value
        x = np.asarray(model.highs.getSolution().col_value)
        flow = model.flow_matrix(x)
        cuts = violated_subtours(flow, threshold=_LP_THRESHOLD)
        combs = violated_blossoms(flow) if blossoms and not cuts else []
        if not (cuts or combs) or past(lp_deadline):
            break
        model.add_subtour_cuts(cuts)
        model.add_blossoms(combs)
    stats["lp_rounds"] = rounds
    stats["root_bound"] = float(lp_bound)

    if _closed(best_len, lp_bound, abs_gap):
        return finish(best_order, best_len, proven=True, bound=best_len, mip_solves=0)

    # Phase 2: reduced-cost fixing against the incumbent.
    drop_mask = np.zeros(model.m, dtype=bool)
    reduced = None
    if np.isfinite(lp_bound):
        reduced = np.asarray(model.highs.getSolution().col_dual)
        keep = model.vector_of(best_order) > 0.5
        drop_mask = (reduced > best_len - lp_bound + 1e-6) & ~keep
        fixed = int(drop_mask.sum())
        if fixed:
            idx = np.flatnonzero(drop_mask).astype(np.int32)
            model.highs.changeColsBounds(fixed, idx, np.zeros(fixed), np.zeros(fixed))
    root_reduced = reduced if np.isfinite(lp_bound) else None

    def fix_more(upper: float, order) -> None:
        # A shorter incumbent lets the root's reduced costs exclude more variables.
        nonlocal fixed
        if root_reduced is None:
            return
        keep_now = model.vector_of(order) > 0.5
        more = (root_reduced > upper - lp_bound + 1e-6) & ~keep_now & ~drop_mask
        count = int(more.sum())
        if count:
            idx = np.flatnonzero(more).astype(np.int32)
            model.highs.changeColsBounds(count, idx, np.zeros(count), np.zeros(count))
            drop_mask[more] = True
            fixed += count

    # Phase 3: HiGHS branches on the integer model with the whole cut pool.
    outcome = _highs_mip(model, cost, best_order, best_len, lp_bound, abs_gap, deadline,
                         fix_more)
    order, length, proven, bound, extra = outcome
    return finish(order, length, proven=proven, bound=bound, **extra)


def _highs_mip(model, cost, best_order, best_len, lp_bound, abs_gap, deadline, fix_more):
    """Integer re-solves by HiGHS with the cut pool, cutting away the subtours they return."""
    highspy = model.highspy
    n = model.n
    model.highs.changeColsIntegrality(
        model.m,
        np.arange(model.m, dtype=np.int32),
        np.full(model.m, highspy.HighsVarType.kInteger),
    )
    model.highs.setOptionValue("mip_rel_gap", 0.0)
    model.highs.setOptionValue("mip_abs_gap", abs_gap)
    bound = lp_bound
    mip_solves = 0
    nodes = 0
    interrupts = 0
    retried_without_presolve = False
    watch = _SubtourWatch(model)
    while not past(deadline):
        hint = highspy.HighsSolution()
        hint.col_value = model.vector_of(best_order).tolist()
        model.highs.setSolution(hint)
        watch.cycles = None
        model.run(left(deadline))
        mip_solves += 1
        info = model.highs.getInfo()
        nodes += int(info.mip_node_count)
        status = model.status()
        extra = {"mip_solves": mip_solves, "nodes": nodes, "subtour_interrupts": interrupts}
        if watch.cycles is not None and status == highspy.HighsModelStatus.kInterrupt:
            # HiGHS found an integer point with subtours: cut it now rather than let it
            # prove that point optimal first (the proof would be thrown away).
            interrupts += 1
            if np.isfinite(info.mip_dual_bound):
                bound = max(bound, min(info.mip_dual_bound, best_len))
            cycles = watch.cycles
            model.add_subtour_cuts([_smaller(c, n) for c in cycles])
            patched = local_search(cost, [v for cycle in cycles for v in cycle])
            patched_len = loop_cost(cost, patched)
            if patched_len < best_len:
                best_order, best_len = patched, patched_len
                fix_more(best_len, best_order)
            continue
        if status != highspy.HighsModelStatus.kOptimal:
            # A time limit, or an "infeasible" that cannot be right (the incumbent is a
            # feasible point of this model): keep what is proven, claim nothing more.
            if np.isfinite(info.mip_dual_bound):
                bound = max(bound, min(info.mip_dual_bound, best_len))
            return best_order, best_len, False, bound, extra
        x = np.asarray(model.highs.getSolution().col_value)
        dual = float(info.mip_dual_bound)
        reported = float(info.objective_function_value)
        if abs(float(model.costs @ x) - reported) > 1e-6 * max(1.0, abs(reported)):
            # Seen on zero-cost arcs after a MIP start: HiGHS reported the presolved optimum
            # but handed back the start. Trust neither; solve again without presolve.
            if retried_without_presolve:
                return best_order, best_len, False, max(bound, min(dual, best_len)), extra
            model.highs.setOptionValue("presolve", "off")
            retried_without_presolve = True
            continue
        cycles = model.cycles(x)
        if len(cycles) == 1:
            length = loop_cost(cost, cycles[0])
            if length < best_len:
                best_order, best_len = cycles[0], length
            # Proof is the solver's bound meeting the loop in hand, never the status alone.
            proven = _closed(best_len, dual, abs_gap)
            return best_order, best_len, proven, max(bound, min(dual, best_len)), extra
        bound = max(bound, info.objective_function_value)
        model.add_subtour_cuts([_smaller(c, n) for c in cycles])
        patched = local_search(cost, [v for cycle in cycles for v in cycle])
        patched_len = loop_cost(cost, patched)
        if patched_len < best_len:
            best_order, best_len = patched, patched_len
            fix_more(best_len, best_order)
        if _closed(best_len, bound, abs_gap):
            return best_order, best_len, True, best_len, extra
    return best_order, best_len, False, bound, {"mip_solves": mip_solves, "nodes": nodes,
                                                 "integer_phase": "highs-mip"}


class _SubtourWatch:
    """HiGHS callbacks that stop the integer search at its first incumbent with subtours.

    The improving-solution callback records the cycles of each new incumbent; the
    interrupt callback then asks HiGHS to stop, so the cuts go in at once (the
    lazy-constraint idea of branch-and-cut, approximated by restarts).
    """

    def __init__(self, model: _Model):
        import highspy

        kinds = highspy.cb.HighsCallbackType
        self.model = model
        self.cycles: list[list[int]] | None = None
        self._improving = kinds.kCallbackMipImprovingSolution
        self._interrupt = kinds.kCallbackMipInterrupt
        model.highs.setCallback(self._on_event, None)
        model.highs.startCallback(self._improving)
        model.highs.startCallback(self._interrupt)

    def _on_event(self, kind, message, data_out, data_in, user_data) -> None:
        if kind == self._improving:
            cycles = self.model.cycles(np.asarray(data_out.mip_solution))
            if len(cycles) > 1:
                self.cycles = cycles
        elif kind == self._interrupt:
            # HiGHS keeps the flag between runs, so it is set both ways every time.
            data_in.user_interrupt = self.cycles is not None


def _closed(length: float, bound: float, abs_gap: float) -> bool:
    """The bound meets the loop: within the proof gap, or within float noise of summing legs
    (a loop's length summed in another order differs in the last bits)."""
    return length - bound <= max(abs_gap, 1e-9 * max(1.0, abs(length)))


def _smaller(cycle: list[int], n: int) -> list[int]:
    if 2 * len(cycle) <= n:
        return cycle
    inside = set(cycle)
    return [v for v in range(n) if v not in inside]

