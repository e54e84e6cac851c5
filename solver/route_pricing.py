"""Pricing day routes for column generation: the cheapest route at given client prizes.

Given a prize on each client (the dual values of a set-partitioning master),
find the day route from home and back whose km minus the prizes it collects is
least, keeping each visit's windows, the day's latest return and a cap on visits.
This is the elementary shortest path problem with resource constraints, solved
by forward label setting (Righini & Salani 2006) over *ng-routes* (Baldacci,
Mingozzi & Roberti 2011): a label remembers only the clients of its route that
lie in the neighbourhood of where it stands, so a route may come back to a
client it has "forgotten". Every elementary route is an ng-route, so the least
reduced cost over ng-routes is never above the least over real routes: a valid
basis for a lower bound. With a neighbourhood of every client the routes are
elementary (exact ESPPRC).

Relaxed on purpose (each only enlarges the set of routes priced, so bounds stay
valid): the break is not modelled, and labels whose every completion cannot
reach a negative reduced cost are dropped (the completion bound below ignores
time and elementarity).

Dominance: at the same client, a label dominates another if it costs no more,
leaves no later, has made no more visits and remembers a subset of the other's
clients (earlier is never worse: waiting is allowed).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .clock import Window
from .day import earliest_start
from .stopping import past

__all__ = ["PricingDay", "PricedRoute", "Pricing", "price_routes"]

_EPS = 1e-9
_HEURISTIC_REACH = 10  # moves tried from each label when pricing heuristically


@dataclass(frozen=True)
class PricingDay:
    """One day's route space. Local node 0 is home; node k is the k-th candidate client.

    ``km`` and ``minutes`` are square over home + candidates; ``service``,
    ``windows`` list each candidate (index k-1); ``max_visits`` None: no cap.
    """

    km: np.ndarray
    minutes: np.ndarray
    service: tuple[float, ...]
    windows: tuple[tuple[Window, ...], ...]
    start_min: float
    end_min: float
    max_visits: int | None = None

    @property
    def size(self) -> int:
        return len(self.service)

    def most_visits(self) -> int:
        """A cap on visits that time alone implies: the quickest visits that could fit."""
        n = self.size
        if n == 0:
            return 0
        inbound = self.minutes[:, 1:].copy()
        np.fill_diagonal(inbound[1:], np.inf)
        quickest = np.sort(np.asarray(self.service) + inbound.min(axis=0))
        fits = int(np.searchsorted(np.cumsum(quickest), self.end_min - self.start_min + _EPS,
                                   side="right"))
        cap = n if self.max_visits is None else min(n, self.max_visits)
        return min(cap, fits)


@dataclass(frozen=True)
class PricedRoute:
    """A route (local client nodes in order), its km and its reduced cost."""

    order: tuple[int, ...]
    km: float
    reduced_cost: float

    @property
    def elementary(self) -> bool:
        return len(set(self.order)) == len(self.order)


@dataclass(frozen=True)
class Pricing:
    """The routes found, cheapest first, and the least reduced cost when it was proven.

    ``least`` is min(0, least reduced cost over every priced route) when the
    search was exact and complete, else None.
    """

    routes: tuple[PricedRoute, ...]
    least: float | None
    labels: int


def neighbourhoods(day: PricingDay, size: int) -> list[int]:
    """Bit masks of each candidate's ``size`` nearest candidates (itself included)."""
    n = day.size
    masks = [0] * (n + 1)
    if n == 0:
        return masks
    near = day.km[1:, 1:] + day.km[1:, 1:].T
    for k in range(n):
        for j in np.argsort(near[k], kind="stable")[: max(1, size)]:
            masks[k + 1] |= 1 << (int(j) + 1)
        masks[k + 1] |= 1 << (k + 1)
    return masks


def _completion(day: PricingDay, prizes: np.ndarray, steps: int,
                ng: Sequence[int] | None = None) -> np.ndarray:
    """rest[r, j]: a lower bound on finishing from j with at most r more visits (km − prizes).

    A shortest-walk recursion without time, with 2-cycles j → k → j eliminated where
    the routes priced forbid them (q-routes without 2-cycles, Christofides, Mingozzi &
    Toth 1981): for elementary routes everywhere, for ng-routes where j lies in k's
    neighbourhood (bit masks ``ng``; None: elementary). Each step keeps the best
    finish from every client and the best whose first move goes elsewhere.
    """
    n = day.size
    km = day.km[: n + 1, : n + 1]
    # moves[i, k]: the cost of stepping from i to k (column 0: home, ending the route).
    moves = np.empty((n + 1, n + 1))
    moves[:, 0] = km[:, 0]
    moves[:, 1:] = km[:, 1:] - prizes[None, :]
    np.fill_diagonal(moves[1:, 1:], np.inf)
    moves[0, 0] = np.inf  # the route leaves home before it comes back
    index = np.arange(n + 1)
    if ng is None:
        forbidden = np.ones((n + 1, n + 1), dtype=bool)
    else:
        forbidden = np.array([[bool(ng[k] >> i & 1) for k in range(n + 1)]
                              for i in range(n + 1)])
    forbidden[:, 0] = False
    rest = np.empty((steps + 1, n + 1))
    rest[0] = km[:, 0]
    best, first = km[:, 0].copy(), np.zeros(n + 1, dtype=int)  # first move 0: straight home
    second = np.full(n + 1, np.inf)
    for r in range(1, steps + 1):
        # Finishing from k after arriving from i: k's best, unless that goes straight back
        # to i where the routes forbid it; then k's best going elsewhere.
        back_to_i = (first[None, :] == index[:, None]) & forbidden
        after = np.where(back_to_i, second[None, :], best[None, :])
        after[:, 0] = 0.0
        total = moves + after
        order = np.argsort(total, axis=1)
        first = order[:, 0]
        best = total[index, first]
        second = total[index, order[:, 1]]
        rest[r] = best
    return rest


class _Search:
    """What both label searches read, as plain lists for speed.

    ``ahead[left][0 or 1][here]``: the candidates from ``here`` with ``left`` visits to
    spare, sorted by the key cost-so-far must stay below for the route to close within
    ``limit``: km[here][i] − prize[i] + rest[left][i] − day_dual − limit. A search stops
    scanning a row at the first key ≥ −cost (every later one is larger).
    """

    def __init__(self, day: PricingDay, prizes: np.ndarray, day_dual: float, *,
                 limit: float, ng: Sequence[int] | None):
        n = day.size
        self.steps = day.most_visits()
        rest = _completion(day, prizes, self.steps, ng)
        self.km = day.km.tolist()
        self.minutes = day.minutes.tolist()
        self.prize = [0.0] + prizes.tolist()
        self.service = (0.0,) + tuple(day.service)
        self.windows = ((),) + tuple(day.windows)
        self.end = day.end_min
        self.back = [self.minutes[i][0] for i in range(n + 1)]
        self.limit = limit
        step_cost = day.km[:, 1:] - prizes[None, :]
        self.ahead = []
        for left in range(self.steps):
            key = step_cost + rest[left][None, 1:] - day_dual - limit
            key[np.arange(1, n + 1), np.arange(n)] = np.inf
            rank = np.argsort(key, axis=1, kind="stable")
            self.ahead.append((np.take_along_axis(key, rank, axis=1).tolist(),
                               (rank + 1).tolist()))


def price_routes(day: PricingDay, prizes: Sequence[float], day_dual: float = 0.0, *,
                 ng_size: int = 8, bucket: int | None = None, max_routes: int = 30,
                 deadline: float | None = None) -> Pricing:
    """The routes of least reduced cost km − Σ prizes − ``day_dual``, most negative first.

    ``bucket`` keeps at most that many labels per client (a fast heuristic: the
    result's ``least`` is then None); without it the search is exact over
    ng-routes with neighbourhoods of ``ng_size`` (elementary when ``ng_size`` ≥
    the number of candidates) unless ``deadline`` passes first.
    """
    n = day.size
    prizes = np.asarray(prizes, dtype=float)
    if n == 0:
        return Pricing((), min(0.0, -day_dual), 0)
    ng = neighbourhoods(day, n if bucket is not None else ng_size)
    # only labels that could still close with a negative reduced cost matter
    search = _Search(day, prizes, day_dual, limit=-1e-7, ng=ng)
    steps, km, minutes, prize = search.steps, search.km, search.minutes, search.prize
    service, windows, end, back = search.service, search.windows, search.end, search.back
    ahead, limit = search.ahead, search.limit
    reach = n if bucket is None else min(n, _HEURISTIC_REACH)
    # A label: [cost, leave_min, count, memory, node, parent, alive]
    root = [0.0, day.start_min, 0, 0, 0, None, True]
    kept: list[list[list]] = [[] for _ in range(n + 1)]
    layer = [root]
    found: dict[tuple[int, ...], PricedRoute] = {}
    labels = 0
    complete = True
    for count in range(1, steps + 1):
        nxt: list[list] = []
        for label in layer:
            if not label[6]:
                continue
            if deadline is not None and past(deadline):
                complete = False
                break
            cost0, t0, _, mem, here, _, _ = label
            row_km, row_min = km[here], minutes[here]
            keys, nodes = ahead[steps - count]
            # The heuristic tries only the most promising moves from each label.
            for i, key in zip(nodes[here][:reach], keys[here][:reach], strict=True):
                if key >= -cost0:
                    break
                if mem >> i & 1:
                    continue
                cost = cost0 + row_km[i] - prize[i]
                # The timing rules of solver.day.simulate, inlined in both searches (the
                # innermost loop: a call per extension costs a tenth of the search).
                begin = earliest_start(windows[i], t0 + row_min[i])
                if begin is None:
                    continue
                leave = begin + service[i]
                if leave + back[i] > end + _EPS:
                    continue
                memory = (mem & ng[i]) | (1 << i)
                new = [cost, leave, count, memory, i, label, True]
                if not _insert(kept[i], new, bucket):
                    continue
                labels += 1
                nxt.append(new)
                closed = cost + km[i][0] - day_dual
                if closed < limit:
                    _record(found, new, closed, km)
        else:
            layer = nxt
            if not layer:
                break
            continue
        break
    routes = tuple(sorted(found.values(), key=lambda r: r.reduced_cost)[:max_routes])
    least = None
    if complete and bucket is None:
        least = min([0.0, -day_dual] + [r.reduced_cost for r in routes])
    return Pricing(routes, least, labels)


def _insert(kept: list, new: list, cap: int | None) -> bool:
    """Keep ``new`` unless a kept label dominates it; retire the kept labels it dominates.

    Labels are made in rounds of one more visit, so a kept label never has more
    visits than ``new``: only those of the same round can be dominated by it.
    With ``cap`` the list keeps at most that many labels, cheapest first.
    """
    cost, leave, count, mem = new[0], new[1], new[2], new[3]
    if cap is not None and len(kept) >= cap and kept[-1][0] <= cost:
        return False
    retire = False
    for old in kept:
        if old[0] <= cost + _EPS:
            if old[1] <= leave + _EPS and old[3] & ~mem == 0:
                return False
        elif (old[2] == count and leave <= old[1] + _EPS and mem & ~old[3] == 0):
            old[6] = False
            retire = True
    if retire:
        kept[:] = [old for old in kept if old[6]]
    if cap is None:
        kept.append(new)
        return True
    at = len(kept)
    while at and kept[at - 1][0] > cost:
        at -= 1
    kept.insert(at, new)
    if len(kept) > cap:
        kept.pop()[6] = False
    return True


def _record(found: dict, label: list, closed: float, km) -> None:
    order = []
    while label[5] is not None:
        order.append(label[4])
        label = label[5]
    order.reverse()
    key = tuple(order)
    if key not in found or closed < found[key].reduced_cost:
        length = km[0][order[0]] + sum(km[a][b] for a, b in zip(order, order[1:], strict=False))
        length += km[order[-1]][0]
        found[key] = PricedRoute(key, float(length), float(closed))


def routes_within(day: PricingDay, prizes: Sequence[float], day_dual: float, threshold: float,
                  *, max_labels: int = 400_000,
                  deadline: float | None = None) -> dict[int, tuple[float, tuple[int, ...]]] | None:
    """Every set of candidates whose cheapest elementary route has a reduced cost of at most
    ``threshold``, as {bit mask of the set: (km, that route)}; None if the search would
    keep more than ``max_labels`` labels or pass ``deadline``.

    This is route enumeration by reduced cost (Baldacci, Christofides & Mingozzi
    2008): with duals whose Lagrangian bound is LB and a week of km UB, no day of a
    better week can use a route of reduced cost above UB − LB, so a set-partitioning
    programme over these routes alone is exact. Labels are elementary and one
    dominates another only at the same client with the same set visited (cheaper
    and no later), so the cheapest route of every set survives.
    """
    n = day.size
    prizes = np.asarray(prizes, dtype=float)
    found: dict[int, tuple[float, tuple[int, ...]]] = {}
    if n == 0:
        return found
    search = _Search(day, prizes, day_dual, limit=threshold + 1e-7, ng=None)  # elementary
    steps, km, minutes, prize = search.steps, search.km, search.minutes, search.prize
    service, windows, end, back = search.service, search.windows, search.end, search.back
    ahead, limit = search.ahead, search.limit
    # A label: (cost, leave_min, km, order); one Pareto list per (client, set visited).
    layer: dict[tuple[int, int], list] = {(0, 0): [(0.0, day.start_min, 0.0, ())]}
    total = 0
    for count in range(1, steps + 1):
        nxt: dict[tuple[int, int], list] = {}
        keys, nodes = ahead[steps - count]
        for (here, mask), labels in layer.items():
            if deadline is not None and past(deadline):
                return None
            row_km, row_min = km[here], minutes[here]
            for cost0, t0, km0, order in labels:
                for i, key in zip(nodes[here], keys[here], strict=True):
                    if key >= -cost0:
                        break
                    if mask >> i & 1:
                        continue
                    begin = earliest_start(windows[i], t0 + row_min[i])
                    if begin is None:
                        continue
                    leave = begin + service[i]
                    if leave + back[i] > end + _EPS:
                        continue
                    cost = cost0 + row_km[i] - prize[i]
                    slot = nxt.setdefault((i, mask | 1 << i), [])
                    if any(c <= cost + _EPS and t <= leave + _EPS for c, t, _, _ in slot):
                        continue
                    slot[:] = [lab for lab in slot
                               if not (cost <= lab[0] + _EPS and leave <= lab[1] + _EPS)]
                    slot.append((cost, leave, km0 + row_km[i], order + (i,)))
                    total += 1
                    if total > max_labels:
                        return None
        for (i, mask), labels in nxt.items():
            for cost, _, km0, order in labels:
                if cost + km[i][0] - day_dual <= limit:
                    length = km0 + km[i][0]
                    if mask not in found or length < found[mask][0]:
                        found[mask] = (length, order)
        layer = nxt
        if not layer:
            break
    return found
