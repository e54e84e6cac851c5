"""A good week for weeks too large to prove: insert, then move and swap visits between days.

Construction is cheapest feasible insertion (Solomon 1987's insertion family):
the most constrained clients first (fewest allowed days), then the farthest from
home, each placed where the timed order of that day grows least; a client that
fits nowhere may push one placed visit to another of its days. Every day is then
re-solved exactly, and local search tries moving one visit to another day and
swapping two, screened by the instant insertion estimate and accepted only when
the exact re-solve of both days confirms the saving. The result is a local
optimum in which each day's order is proven optimal for its clients.
"""

from __future__ import annotations

import itertools
import random
import time
from collections.abc import Sequence

from .day import earliest_start
from .day_exact import best_timing, plan_day
from .errors import Infeasible, SolverError
from .stopping import left, past

__all__ = ["improve_week", "polish_week"]

_SAVES = 1e-6  # a move must save more than this many km


class _Week:
    """Per day: the clients in visiting order, and cached timings and exact re-solves."""

    def __init__(self, problem, km, minutes, deadline, day_problem, cap_ok):
        self.problem, self.km, self.minutes = problem, km, minutes
        self.deadline = deadline
        self.day_problem, self.cap_ok = day_problem, cap_ok
        self.n_days = len(problem.days)
        self.orders: list[list] = [[] for _ in range(self.n_days)]
        self.taken: dict[str, list[int]] = {c.name: [] for c in problem.clients}
        self.exact: dict[tuple[int, frozenset], tuple[float, list] | None] = {}
        self.exact_solves = 0

    # --- the instant estimate: a given order, timed -----------------------------------------

    def timed_km(self, day: int, order: Sequence) -> float | None:
        """The km of visiting ``order`` on ``day`` as listed, or None if it breaks a rule."""
        spec = self.problem.days[day]
        if spec.max_visits is not None and len(order) > spec.max_visits:
            return None
        if not order:
            return 0.0
        if spec.rules.break_rule is None:
            return self._walk(day, order)
        sub = self.day_problem(self.problem, self.km, self.minutes, day, list(order))
        timed = best_timing(sub, list(range(1, len(order) + 1)))
        if timed is None or not self.cap_ok(spec, len(order), timed[1]["return_min"]):
            return None
        return timed[1]["total_km"]

    def _walk(self, day: int, order: Sequence) -> float | None:
        """The same rules as :func:`solver.day.simulate` for a day without a break, inlined:
        this estimate runs tens of thousands of times per week."""
        spec = self.problem.days[day]
        t, here, total = spec.rules.start_min, 0, 0.0
        km, minutes = self.km, self.minutes
        for client in order:
            t += minutes[here, client.node]
            total += km[here, client.node]
            begin = earliest_start(client.windows_on(day), t)
            if begin is None:
                return None
            t = begin + client.service_min
            here = client.node
        t += minutes[here, 0]
        total += km[here, 0]
        end = spec.rules.end_min
        if spec.max_work_min is not None:
            end = min(end, spec.rules.start_min + spec.max_work_min)
        if t > end + 1e-9 or not self.cap_ok(spec, len(order), t):
            return None
        return float(total)

    def best_insertion(self, day: int, client, order=None):
        """(added km, new order) of the cheapest feasible insertion of ``client``, or None."""
        order = self.orders[day] if order is None else order
        base = self.timed_km(day, order)
        if base is None:
            return None
        best = None
        for pos in range(len(order) + 1):
            trial = order[:pos] + [client] + order[pos:]
            grown = self.timed_km(day, trial)
            if grown is not None and (best is None or grown - base < best[0]):
                best = (grown - base, trial)
        return best

    def removal(self, day: int, client):
        """(km change, new order) of leaving ``client`` out of ``day``, or None if that breaks."""
        order = [c for c in self.orders[day] if c is not client]
        before, after = self.timed_km(day, self.orders[day]), self.timed_km(day, order)
        if before is None or after is None:
            return None
        return after - before, order

    # --- the proof: exact re-solves ----------------------------------------------------------

    def exact_cost(self, day: int, clients: Sequence):
        """(proven least km, clients in proven order) for ``day``; None if they do not fit."""
        key = (day, frozenset(c.name for c in clients))
        if key in self.exact:
            return self.exact[key]
        spec = self.problem.days[day]
        result = None
        if not clients:
            result = (0.0, [])
        elif spec.max_visits is None or len(clients) <= spec.max_visits:
            self.exact_solves += 1
            try:
                plan = plan_day(self.day_problem(self.problem, self.km, self.minutes, day,
                                                 list(clients)),
                                time_limit_s=max(1.0, min(10.0, left(self.deadline))),
                                explain=False, tie_break=False)
                if self.cap_ok(spec, len(clients), plan.return_min):
                    result = (plan.total_km, [clients[v.node - 1] for v in plan.visits])
            except Infeasible:
                result = None
            except SolverError:
                result = None  # not settled in time: never claim it fits
        self.exact[key] = result
        return result

    def place(self, day: int, order: list, client=None, *, leaving: int | None = None) -> None:
        self.orders[day] = order
        if client is not None:
            days = self.taken[client.name]
            if leaving is not None:
                days.remove(leaving)
            days.append(day)

    def gap_ok(self, client, day: int, *, ignoring: int | None = None) -> bool:
        others = [d for d in self.taken[client.name] if d != ignoring]
        return day not in others and all(abs(day - d) >= client.min_gap_days for d in others)

    def open_days(self, client) -> list[int]:
        return client.days_open(self.n_days)


def improve_week(problem, km, minutes, deadline, *, day_problem, cap_ok, starts: int = 8,
                 seed: int = 0):
    """Every due visit's day (lists of clients in proven order), stats, and the pool of
    (day, client names, proven km) sets re-solved along the way.

    Runs ``starts`` constructions (the first in the documented order, the others
    with the order shuffled within each level of constraint), each followed by
    local search, and keeps the best; the pool of all proven day sets lets the
    caller recombine them.
    """
    rng = random.Random(seed)
    exact: dict = {}
    best = None
    runs = 0
    # Later starts only while most of the time is still left, so the best one can finish.
    began = time.perf_counter()
    last_start_at = began + 0.4 * max(0.0, deadline - began)
    for start in range(starts):
        if start and past(last_start_at):
            break
        week = _Week(problem, km, minutes, deadline, day_problem, cap_ok)
        week.exact = exact  # proven day sets are shared by every start
        noise = {c.name: (rng.random() if start else 0.0) for c in problem.clients}
        order = sorted(
            (c for c in problem.clients for _ in range(c.visits)),
            key=lambda c, nz=noise: (len(c.days_open(week.n_days)) - c.visits,
                                     -float(km[0, c.node]) * (1.0 + nz[c.name]), c.name),
        )
        try:
            _construct(week, order)
        except Infeasible:
            if start == 0 and best is None and starts == 1:
                raise
            continue
        for d in range(week.n_days):
            solved = week.exact_cost(d, week.orders[d])
            if solved is not None:
                week.orders[d] = solved[1]
        moves = _local_search(week)
        total = sum((week.exact_cost(d, week.orders[d]) or (float("inf"),))[0]
                    for d in range(week.n_days))
        runs += 1
        if best is None or total < best[0] - _SAVES:
            best = (total, [list(o) for o in week.orders], moves)
    if best is None:
        raise Infeasible(
            "no start could place every visit on an allowed day",
            explanation={"summary": "the visits could not all be placed on their allowed days "
                         "(windows, caps or the gap between visits)"})
    stats = {"exact_day_solves": len(exact), "starts": runs, "moves": best[2],
             "stopped": "time limit" if past(deadline) else "no move helps"}
    pool = [(day, names, value[0]) for (day, names), value in exact.items() if value is not None]
    return best[1], stats, pool


def polish_week(problem, km, minutes, deadline, assignment, *, day_problem, cap_ok):
    """``assignment`` (clients per day) improved by the same moves and swaps, each day
    re-solved exactly: (clients per day in proven order, moves made, pool of proven day
    sets), or None when a day of it does not fit as given."""
    week = _Week(problem, km, minutes, deadline, day_problem, cap_ok)
    for d, clients in enumerate(assignment):
        solved = week.exact_cost(d, list(clients))
        if solved is None:
            return None
        week.orders[d] = solved[1]
        for client in clients:
            week.taken[client.name].append(d)
    moves = _local_search(week)
    pool = [(day, names, value[0]) for (day, names), value in week.exact.items()
            if value is not None]
    return [list(o) for o in week.orders], moves, pool


def _construct(week: _Week, order) -> None:
    """Cheapest feasible insertion of every visit in ``order``; Infeasible if one fits nowhere."""
    for client in order:
        best = None
        for d in week.open_days(client):
            if not week.gap_ok(client, d):
                continue
            found = week.best_insertion(d, client)
            if found is not None and (best is None or found[0] < best[0]):
                best = (found[0], d, found[1])
        if best is None:
            best = _exact_insertion(week, client)
        if best is None and not _make_room(week, client):
            raise Infeasible(
                f"{client.name} fits on none of its days next to the visits already placed",
                explanation={"summary": f"{client.name} could not be placed on any allowed day "
                             "(windows, caps or the gap between visits)", "client": client.name})
        if best is not None:
            week.place(best[1], best[2], client)


def _exact_insertion(week: _Week, client):
    """(added km, day, proven order) of the cheapest day where ``client`` fits once the
    whole day is re-ordered (inserting into the current order can miss it), or None."""
    best = None
    for d in week.open_days(client):
        if not week.gap_ok(client, d):
            continue
        before = week.exact_cost(d, week.orders[d])
        after = week.exact_cost(d, week.orders[d] + [client])
        if before is not None and after is not None and (
                best is None or after[0] - before[0] < best[0]):
            best = (after[0] - before[0], d, after[1])
    return best


def _make_room(week: _Week, client) -> bool:
    """Push one placed visit to another of its days so ``client`` fits; True if done."""
    best = None
    for d in week.open_days(client):
        if not week.gap_ok(client, d):
            continue
        for other in week.orders[d]:
            out = week.removal(d, other)
            if out is None:
                continue
            put = week.best_insertion(d, client, out[1])
            if put is None:
                continue
            for e in week.open_days(other):
                if e == d or not week.gap_ok(other, e, ignoring=d):
                    continue
                moved = week.best_insertion(e, other)
                if moved is None:
                    continue
                extra = out[0] + put[0] + moved[0]
                if best is None or extra < best[0]:
                    best = (extra, d, put[1], other, e, moved[1])
    if best is None:
        return False
    _, d, new_d, other, e, new_e = best
    week.place(e, new_e, other, leaving=d)
    week.place(d, new_d, client)
    return True


def _local_search(week: _Week) -> int:
    """Moves and swaps between days until none saves km (or time runs out)."""
    moves = 0
    improved = True
    while improved and not past(week.deadline):
        improved = False
        for a, b in itertools.permutations(range(week.n_days), 2):
            for client in list(week.orders[a]):
                if past(week.deadline):
                    return moves
                if client not in week.orders[a] or b not in week.open_days(client):
                    continue
                if not week.gap_ok(client, b, ignoring=a):
                    continue
                out, put = week.removal(a, client), week.best_insertion(b, client)
                if out is None or put is None or out[0] + put[0] >= -_SAVES:
                    continue
                if _confirm(week, {a: out[1], b: put[1]}):
                    week.taken[client.name].remove(a)
                    week.taken[client.name].append(b)
                    moves += 1
                    improved = True
        for a, b in itertools.combinations(range(week.n_days), 2):
            for x, y in itertools.product(list(week.orders[a]), list(week.orders[b])):
                if past(week.deadline):
                    return moves
                if x not in week.orders[a] or y not in week.orders[b]:
                    continue
                if b not in week.open_days(x) or a not in week.open_days(y):
                    continue
                if not (week.gap_ok(x, b, ignoring=a) and week.gap_ok(y, a, ignoring=b)):
                    continue
                new_a = week.best_insertion(a, y, [c for c in week.orders[a] if c is not x])
                new_b = week.best_insertion(b, x, [c for c in week.orders[b] if c is not y])
                if new_a is None or new_b is None:
                    continue
                before = (week.timed_km(a, week.orders[a]) or 0.0) + (
                    week.timed_km(b, week.orders[b]) or 0.0)
                after = week.timed_km(a, new_a[1]) + week.timed_km(b, new_b[1])
                if after - before >= -_SAVES:
                    continue
                if _confirm(week, {a: new_a[1], b: new_b[1]}):
                    for c, old, new in ((x, a, b), (y, b, a)):
                        week.taken[c.name].remove(old)
                        week.taken[c.name].append(new)
                    moves += 1
                    improved = True
    return moves


def _confirm(week: _Week, proposal: dict[int, list]) -> bool:
    """Accept ``proposal`` (day -> clients) if the exact re-solves confirm it saves km."""
    old_total = new_total = 0.0
    solved = {}
    for day, clients in proposal.items():
        old = week.exact_cost(day, week.orders[day])
        new = week.exact_cost(day, clients)
        if old is None or new is None:
            return False
        old_total += old[0]
        new_total += new[0]
        solved[day] = new[1]
    if new_total >= old_total - _SAVES:
        return False
    for day, clients in solved.items():
        week.orders[day] = clients
    return True

