"""A lower bound on the week's km by column generation, and better weeks from its columns.

The week is a set-partitioning problem: choose for each working day one route
(a column) so that every client gets its visits (Balinski & Quandt 1964). Its
linear relaxation over *all* routes is far stronger than any bound built from
one loop, and column generation solves it without listing the routes
(Desrochers, Desrosiers & Solomon 1992): the restricted master LP over the
routes known so far gives dual prizes on the clients, and the pricing problem
(:mod:`solver.route_pricing`) finds the routes whose km minus prizes is negative.

The bound is Lagrangian, valid at every round whose pricing was exact (Lasdon
1970): with duals ``u`` (clients), ``v`` ≤ 0 (one route a day, gaps between
repeated visits), and ``r_d`` the least reduced cost over day d's routes,

    week km ≥ Σ visits·u + Σ v + Σ_d min(0, r_d),

because every day takes at most one route. It holds for any duals of the right
sign, so it is computed from the duals as read (clipped to their signs), never
from the LP's optimality. The routes are priced as ng-routes without the break,
a superset of the real routes: the bound stays valid, only slightly weaker.

The routes generated are also real plans: a dive through the LP (fix the route
it uses most, price again) and a set-partitioning integer programme over them
and the improvement pool ("price and branch", a heuristic) often find a cheaper
week than local search. At the converged duals no route of reduced cost above
UB − LB can be in a week cheaper than UB, so listing every route within that
gap (:meth:`WeekColumns.columns_within`) makes set partitioning exact.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from .day_exact import best_timing, plan_day
from .errors import SolverError
from .milp_backend import new_highs
from .route_pricing import PricingDay, price_routes, routes_within
from .stopping import left, past

__all__ = ["ColumnBound", "WeekColumns"]

_NEGATIVE = -1e-6  # a column enters the master when its reduced cost is below this


@dataclass
class ColumnBound:
    """The best valid bound found (None if no round priced exactly), and the real routes."""

    bound: float | None
    lp_value: float | None
    converged: bool
    rounds: int
    exact_rounds: int
    routes: list[tuple[int, frozenset, float]] = field(default_factory=list)
    seconds: float = 0.0
    uncovered: bool = False  # converged, yet the LP still leans on an artificial column

    def stats(self) -> dict:
        return {"cg_rounds": self.rounds, "cg_exact_rounds": self.exact_rounds,
                "cg_converged": self.converged, "cg_routes": len(self.routes),
                "cg_uncovered": self.uncovered,
                "cg_lp": None if self.lp_value is None else round(self.lp_value, 6),
                "cg_seconds": round(self.seconds, 3)}


def _meets(bound: float | None, upper: float | None) -> bool:
    """Whether ``bound`` proves ``upper`` optimal (up to float noise)."""
    return bound is not None and upper is not None and bound >= upper - 1e-6 * max(
        1.0, abs(upper))


class _Master:
    """The restricted master LP on a live HiGHS model: rows for clients, days and gaps.

    Each client row also has an artificial column (its visits at a prohibitive
    km), so the master stays feasible whatever is fixed; no plan may use one.
    """

    def __init__(self, problem, km):
        import highspy

        self.highspy = highspy
        self.problem = problem
        clients = problem.clients
        self.n_days = len(problem.days)
        self.row_of = {c.name: k for k, c in enumerate(clients)}
        self.n_clients = len(clients)
        self.gap_rows: list[tuple[str, tuple[int, ...]]] = []
        for c in clients:
            if c.visits > 1 and c.min_gap_days > 1:
                for first in range(self.n_days):
                    span = tuple(range(first, min(self.n_days, first + c.min_gap_days)))
                    if len(span) > 1:
                        self.gap_rows.append((c.name, span))
        self.highs = new_highs()
        self.inf = self.highs.getInfinity()
        visits = [float(c.visits) for c in clients]
        lower = visits + [-self.inf] * (self.n_days + len(self.gap_rows))
        upper = visits + [1.0] * (self.n_days + len(self.gap_rows))
        self.rhs = np.array(upper)
        count = len(lower)
        self.highs.addRows(count, np.array(lower), np.array(upper), 0,
                           np.zeros(count, dtype=np.int32), np.zeros(0, dtype=np.int32),
                           np.zeros(0))
        # (day or None, visits per client name, km, a real plan?)
        self.columns: list[tuple[int | None, dict[str, int], float, bool]] = []
        self.index: dict[tuple[int, tuple], int] = {}
        self.banned: set[int] = set()
        self.unban_found = True  # a banned column priced again comes back (not while diving)
        big = 10.0 * (1.0 + float(np.asarray(km, dtype=float).max())) * (2 + len(clients))
        for c in clients:
            self.highs.addCol(big, 0.0, self.inf, 1, np.array([self.row_of[c.name]],
                                                              dtype=np.int32), np.array([1.0]))
            self.columns.append((None, {c.name: 1}, big, False))

    def add(self, day: int, counts: dict[str, int], km: float, real: bool) -> bool:
        """Add a column, or lower the km of the one with the same visits; True if changed."""
        key = (day, tuple(sorted(counts.items())))
        if key in self.index:
            col = self.index[key]
            _, _, old_km, was_real = self.columns[col]
            if col in self.banned and self.unban_found:
                self.unban(col)
                self.highs.changeColCost(col, float(min(km, old_km)))
                self.columns[col] = (day, counts, min(km, old_km), was_real or real)
                return True
            if km >= old_km - 1e-9 and (was_real or not real):
                return False
            self.highs.changeColCost(col, float(min(km, old_km)))
            self.columns[col] = (day, counts, min(km, old_km), was_real or real)
            return km < old_km - 1e-9
        self.index[key] = len(self.columns)
        entries: dict[int, float] = {self.n_clients + day: 1.0}
        for name, times in counts.items():
            entries[self.row_of[name]] = float(times)
            for g, (who, span) in enumerate(self.gap_rows):
                if who == name and day in span:
                    entries[self.n_clients + self.n_days + g] = float(times)
        rows = sorted(entries)
        self.highs.addCol(float(km), 0.0, self.inf, len(rows), np.array(rows, dtype=np.int32),
                          np.array([entries[r] for r in rows]))
        self.columns.append((day, counts, km, real))
        return True

    def solve(self) -> tuple[float, np.ndarray, np.ndarray] | None:
        """(LP value, row duals clipped to their signs, column values), None if not solved."""
        self.highs.run()
        if self.highs.getModelStatus() != self.highspy.HighsModelStatus.kOptimal:
            return None
        solution = self.highs.getSolution()
        duals = np.asarray(solution.row_dual, dtype=float)
        # Rows "at most one" take non-positive duals in a minimisation; clip float noise.
        duals[self.n_clients:] = np.minimum(duals[self.n_clients:], 0.0)
        return (float(self.highs.getInfo().objective_function_value), duals,
                np.asarray(solution.col_value, dtype=float))

    def prizes(self, duals: np.ndarray, day: int, names: Sequence[str]) -> np.ndarray:
        """Each candidate's prize on ``day``: its client dual plus its gap rows' duals there."""
        where = {n: k for k, n in enumerate(names)}
        out = np.array([duals[self.row_of[n]] for n in names], dtype=float)
        for g, (who, span) in enumerate(self.gap_rows):
            if day in span and who in where:
                out[where[who]] += duals[self.n_clients + self.n_days + g]
        return out

    def day_dual(self, duals: np.ndarray, day: int) -> float:
        return float(duals[self.n_clients + day])

    def ban(self, col: int) -> None:
        self.highs.changeColBounds(col, 0.0, 0.0)
        self.banned.add(col)

    def unban(self, col: int) -> None:
        self.highs.changeColBounds(col, 0.0, self.inf)
        self.banned.discard(col)

    def fix(self, col: int) -> None:
        self.highs.changeColBounds(col, 1.0, 1.0)


class WeekColumns:
    """Column generation on the week's set-partitioning LP, and dives for plans from it.

    ``pool`` holds (day, client names, km) of real day plans (the improving
    method's); ``day_problem`` builds a day's own problem over given clients.
    """

    def __init__(self, problem, km, minutes, pool, *, day_problem: Callable,
                 ng_sizes: Sequence[int] = (4, 8)):
        self.problem = problem
        self.ng_sizes = tuple(ng_sizes)
        self.ng_size = self.ng_sizes[0]
        self.master = _Master(problem, km)
        n_days = len(problem.days)
        for d, names, cost in pool:
            self.master.add(d, {n: 1 for n in names}, float(cost), True)
        self.days: list[tuple | None] = []
        for d in range(n_days):
            open_here = [c for c in problem.clients if d in c.days_open(n_days)]
            if problem.days[d].max_visits == 0 or not open_here:
                self.days.append(None)
                continue
            sub = day_problem(problem, km, minutes, d, open_here)
            rules = sub.rules
            self.days.append((open_here, sub, PricingDay(
                np.asarray(sub.km, dtype=float), np.asarray(sub.minutes, dtype=float),
                tuple(v.service_min for v in sub.visits), tuple(v.windows for v in sub.visits),
                rules.start_min, rules.end_min, problem.days[d].max_visits)))
        self.real: dict[tuple[int, frozenset], float] = {
            (d, frozenset(names)): float(cost) for d, names, cost in pool}
        self.result = ColumnBound(None, None, False, 0, 0)
        self.settled: tuple[np.ndarray, float] | None = None  # duals and bound at convergence
        self.last_duals: np.ndarray | None = None
        self.started = time.perf_counter()

    # --- the bound -----------------------------------------------------------------------

    def bound(self, deadline: float, *, upper: float | None = None) -> ColumnBound:
        """Rounds until pricing proves no column is missing, the bound reaches ``upper``
        (the week is then proven), or ``deadline``.

        The ng neighbourhoods grow stage by stage (``ng_sizes``): small ones price
        fast and converge to a fair bound, whose columns warm-start the next stage.
        """
        for stage, size in enumerate(self.ng_sizes):
            self.ng_size = size
            self.result.converged = False
            if stage:
                # Routes with a repeated client came from smaller neighbourhoods: most are
                # not ng-routes now, and keeping them would hold the master at the old value.
                # Pricing brings back (unbans) those that still are, whenever they pay.
                for j, (day, counts, _, _) in enumerate(self.master.columns):
                    if day is not None and counts and max(counts.values()) > 1:
                        self.master.ban(j)
            self._rounds(deadline, upper)
            if not self.result.converged or _meets(self.result.bound, upper):
                break
        return self._report()

    def _rounds(self, deadline: float, upper: float | None) -> None:
        result = self.result
        while not past(deadline):
            solved = self.master.solve()
            if solved is None:
                break
            value, duals, x = solved
            self.last_duals = duals
            result.rounds += 1
            result.lp_value = value
            if self._price_all(duals, deadline, bucket=4):
                continue
            result.exact_rounds += 1
            least, added = 0.0, 0
            for d in range(len(self.days)):
                found = self._price_day(d, duals, deadline, bucket=None)
                if found is None:
                    break
                least += found[0]
                added += found[1]
            else:
                bound = float(self.master.rhs @ duals) + least
                bound -= 1e-7 * max(1.0, abs(bound))  # float safety: never claim more than holds
                if result.bound is None or bound > result.bound:
                    result.bound = bound
                if not added:
                    result.converged = True
                    self.settled = (duals, float(self.master.rhs @ duals))
                    # (A hint that no week exists; not a proof: the artificial km are finite.)
                    result.uncovered = bool(np.any(x[: self.master.n_clients] > 1e-6))
                    break
                if _meets(result.bound, upper):
                    break
                continue
            break  # the deadline cut an exact round short

    def _report(self) -> ColumnBound:
        result = self.result
        result.routes = [(d, names, cost) for (d, names), cost in self.real.items()]
        result.seconds = time.perf_counter() - self.started
        return result

    # --- pricing -------------------------------------------------------------------------

    def _price_all(self, duals, deadline, *, bucket, closed=frozenset(), done=frozenset()) -> int:
        added = 0
        for d in range(len(self.days)):
            if d in closed:
                continue
            found = self._price_day(d, duals, deadline, bucket=bucket, done=done)
            if found is not None:
                added += found[1]
        return added

    def _price_day(self, d, duals, deadline, *, bucket, done=frozenset()):
        """Price day ``d``: (min(0, its least reduced cost), columns added). The first
        figure is 0 for heuristic pricing (``bucket``), which proves nothing; None
        when the deadline cut an exact search short."""
        entry = self.days[d]
        if entry is None:
            return min(0.0, -self.master.day_dual(duals, d)), 0
        open_here, sub, pday = entry
        names = [c.name for c in open_here]
        prizes = self.master.prizes(duals, d, names)
        for k, name in enumerate(names):
            if name in done:
                prizes[k] = -1e12  # already fully visited on fixed days
        found = price_routes(pday, prizes, self.master.day_dual(duals, d), ng_size=self.ng_size,
                             bucket=bucket, deadline=deadline)
        added = self._enter(d, entry, found.routes)
        if bucket is None and found.least is None:
            return None
        return (found.least if found.least is not None else 0.0), added

    def _enter(self, d, entry, routes) -> int:
        open_here, sub, pday = entry
        added = 0
        for route in routes:
            if route.reduced_cost >= _NEGATIVE:
                continue
            counts: dict[str, int] = {}
            for k in route.order:
                name = open_here[k - 1].name
                counts[name] = counts.get(name, 0) + 1
            real = route.elementary and (sub.rules.break_rule is None
                                         or best_timing(sub, list(route.order)) is not None)
            added += self.master.add(d, counts, route.km, real)
            if real:
                key = (d, frozenset(counts))
                if key not in self.real or route.km < self.real[key]:
                    self.real[key] = route.km
        return added

    # --- every column that could matter ------------------------------------------------

    def most_promising(self, routes: dict, keep: int, *, always=()) -> dict:
        """The ``keep`` routes {(day, client names): km} of least reduced cost at the last
        duals (all of them before any), plus the keys in ``always``: what set partitioning
        gets when every route known would make its presolve too slow."""
        if len(routes) <= keep or self.last_duals is None:
            return dict(routes)
        duals = self.settled[0] if self.settled is not None else self.last_duals
        scored = []
        for (d, names), km in routes.items():
            entry = self.days[d]
            if entry is None:
                continue
            open_here = [c.name for c in entry[0]]
            prize = dict(zip(open_here, self.master.prizes(duals, d, open_here), strict=True))
            scored.append((km - sum(prize[n] for n in names) - self.master.day_dual(duals, d),
                           (d, names)))
        scored.sort(key=lambda item: item[0])
        chosen = {key: routes[key] for _, key in scored[:keep]}
        for key in always:
            if key in routes:
                chosen[key] = routes[key]
        return chosen

    @property
    def settled_bound(self) -> float | None:
        """The LP bound at the converged duals (None before convergence)."""
        return None if self.settled is None else self.settled[1]

    def columns_within(self, gap: float, deadline: float, *, max_labels: int = 150_000):
        """Every real (day, client names, km) whose reduced cost at the converged duals
        is at most ``gap``: all that a week within ``gap`` of the bound could use
        (:func:`solver.route_pricing.routes_within`). None if not converged, or if
        the routes are too many or time runs out."""
        if self.settled is None:
            return None
        duals, bound = self.settled
        # Float slack on the generous side: a route just past the gap is listed, never missed.
        threshold = max(0.0, gap) + 1e-6 * max(1.0, abs(bound))
        columns = []
        for d, entry in enumerate(self.days):
            if entry is None:
                continue
            open_here, sub, pday = entry
            names = [c.name for c in open_here]
            sets = routes_within(pday, self.master.prizes(duals, d, names),
                                 self.master.day_dual(duals, d), threshold,
                                 max_labels=max_labels, deadline=deadline)
            if sets is None:
                return None
            for length, order in sets.values():
                if sub.rules.break_rule is not None:
                    # Listed without the break: the set's own cost with it, proven.
                    try:
                        length = plan_day(replace(sub, todo=tuple(sorted(order))),
                                          time_limit_s=max(0.5, left(deadline)),
                                          explain=False, tie_break=False).total_km
                    except SolverError:
                        continue  # no break fits (or not settled): never used as a plan
                    if past(deadline):
                        return None
                columns.append((d, frozenset(open_here[k - 1].name for k in order), length))
        return columns

    # --- plans from the columns ----------------------------------------------------------

    def dive(self, deadline: float, *, first_rank: int = 0,
             backtracks: int = 4) -> list[tuple[int, frozenset]] | None:
        """A week from the LP by diving (a classic branch-and-price heuristic): fix the
        real route the LP uses most, price the open days again, repeat until the LP is
        integral. The first fix takes the route of rank ``first_rank`` instead (so that
        several dives go different ways); a fix that leaves some visit uncoverable is
        undone and that route set aside, up to ``backtracks`` times. Returns (day, client
        names) of each route, or None if the dive fails. Every bound changed here is
        restored on the way out."""
        master = self.master
        master.unban_found = False
        banned_before = set(master.banned)
        self._ban_unreal()
        fixed: list[int] = []
        plan = None
        try:
            while not past(deadline):
                solved = master.solve()
                if solved is None:
                    break
                _, duals, x = solved
                closed = {master.columns[j][0] for j in fixed}
                covered: dict[str, int] = {}
                for j in fixed:
                    for name, times in master.columns[j][1].items():
                        covered[name] = covered.get(name, 0) + times
                done = frozenset(c.name for c in self.problem.clients
                                 if covered.get(c.name, 0) >= c.visits)
                if self._price_all(duals, deadline, bucket=4, closed=closed, done=done):
                    self._ban_unreal()
                    continue
                support = np.flatnonzero(x > 1e-6).tolist()
                if any(master.columns[j][0] is None for j in support):
                    # The open days cannot cover every visit with the routes known.
                    if not fixed or backtracks <= 0:
                        break
                    backtracks -= 1
                    master.ban(fixed.pop())  # unfixed, and kept out of this dive
                    continue
                if all(x[j] > 1 - 1e-6 for j in support):
                    plan = [(master.columns[j][0], frozenset(master.columns[j][1]))
                            for j in support]
                    break
                ranked = sorted((j for j in support if j not in fixed), key=lambda j: -x[j])
                pick = ranked[min(first_rank, len(ranked) - 1)] if not fixed else ranked[0]
                master.fix(pick)
                fixed.append(pick)
        finally:
            for j in fixed + sorted(master.banned - banned_before):
                master.unban(j)
            master.unban_found = True
        return plan

    def _ban_unreal(self) -> None:
        """Keep routes that are not real plans (ng-routes, no room for the break) out."""
        for j, (day, _, _, real) in enumerate(self.master.columns):
            if day is not None and not real and j not in self.master.banned:
                self.master.ban(j)
