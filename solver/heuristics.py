"""Fast loop heuristics: the incumbent for the exact search and the estimate shown meanwhile.

A loop is a sequence of node indices starting at home (node 0) and closing back
to it implicitly. All moves keep home at position 0 and are valid for
asymmetric cost matrices: a reversed segment is charged its reversed arcs.

Methods:
- nearest neighbour construction (Rosenkrantz, Stearns & Lewis 1977);
- 2-opt segment reversal (Croes 1958), best improvement, vectorised with numpy;
- Or-opt segment relocation of 1-3 stops, either orientation (Or 1976);
- iterated local search with double-bridge kicks (Martin, Otto & Felten 1991;
  Lourenço, Martin & Stützle 2003), which keeps what it found when time runs out.
"""

from __future__ import annotations

import random
import time
from collections.abc import Sequence

import numpy as np

from .stopping import past

__all__ = [
    "loop_cost",
    "nearest_neighbour",
    "two_opt",
    "or_opt",
    "local_search",
    "iterated_local_search",
    "cheapest_insertion_position",
]

_IMPROVES = 1e-9  # a move must save more than this to count (floating-point noise)
_NEIGHBOUR_LISTS_FROM = 30  # symmetric loops this large use the neighbour-list search


def loop_cost(cost: np.ndarray, order: Sequence[int]) -> float:
    """Length of the closed loop ``order`` (home first) under ``cost``."""
    idx = np.asarray(order, dtype=np.intp)
    if len(idx) < 2:
        return 0.0
    return float(cost[idx, np.roll(idx, -1)].sum())


def nearest_neighbour(cost: np.ndarray, *, start: int = 0) -> list[int]:
    """Greedy loop from ``start``: always drive to the closest unvisited stop."""
    n = len(cost)
    unvisited = np.ones(n, dtype=bool)
    unvisited[start] = False
    order = [start]
    current = start
    for _ in range(n - 1):
        row = np.where(unvisited, cost[current], np.inf)
        current = int(np.argmin(row))
        unvisited[current] = False
        order.append(current)
    if start != 0:
        home = order.index(0)
        order = order[home:] + order[:home]
    return order


def two_opt(cost: np.ndarray, order: Sequence[int]) -> list[int]:
    """Apply the best improving segment reversal until none improves (Croes 1958).

    For an asymmetric matrix the reversed segment's arcs are priced in their new
    direction, using prefix sums of the forward and backward arc costs.
    """
    tour = np.asarray(order, dtype=np.intp).copy()
    n = len(tour)
    if n < 4:
        return tour.tolist()
    i_idx = np.arange(n)[:, None]
    j_idx = np.arange(n)[None, :]
    allowed = j_idx > i_idx + 1
    while True:
        nxt = np.roll(tour, -1)
        fwd = cost[tour, nxt]
        bwd = cost[nxt, tour]
        f_pre = np.concatenate(([0.0], np.cumsum(fwd)))
        b_pre = np.concatenate(([0.0], np.cumsum(bwd)))
        # Reverse tour[i+1 .. j]: arcs (t_i, t_i+1) and (t_j, t_j+1) become
        # (t_i, t_j) and (t_i+1, t_j+1); the inside arcs flip direction.
        delta = (
            cost[tour[:, None], tour[None, :]]
            + cost[nxt[:, None], nxt[None, :]]
            - fwd[:, None]
            - fwd[None, :]
            + (b_pre[j_idx] - b_pre[i_idx + 1])
            - (f_pre[j_idx] - f_pre[i_idx + 1])
        )
        delta = np.where(allowed, delta, np.inf)
        flat = int(np.argmin(delta))
        i, j = divmod(flat, n)
        if not delta[i, j] < -_IMPROVES:
            return tour.tolist()
        tour[i + 1 : j + 1] = tour[i + 1 : j + 1][::-1].copy()


def or_opt(cost: np.ndarray, order: Sequence[int], *, max_segment: int = 3) -> list[int]:
    """Move a run of 1..``max_segment`` stops elsewhere, either way round (Or 1976).

    Takes the first improving move found scanning segments in loop order and
    repeats until no move improves.
    """
    tour = list(order)
    n = len(tour)
    if n < 4:
        return tour
    improved = True
    while improved:
        improved = False
        for seg_len in range(1, min(max_segment, n - 2) + 1):
            start = 1
            while start + seg_len <= n:
                move = _best_relocation(cost, tour, start, seg_len)
                if move is not None:
                    tour = move
                    improved = True
                start += 1
    return tour


def _best_relocation(cost: np.ndarray, tour: list[int], start: int, seg_len: int):
    """The best improving relocation of ``tour[start:start+seg_len]``, or None."""
    n = len(tour)
    seg = tour[start : start + seg_len]
    prev_node = tour[start - 1]
    next_node = tour[(start + seg_len) % n]
    first, last = seg[0], seg[-1]
    removal_gain = cost[prev_node, first] + cost[last, next_node] - cost[prev_node, next_node]
    rest = np.asarray(tour[:start] + tour[start + seg_len :], dtype=np.intp)
    a = rest
    b = np.roll(rest, -1)
    base = cost[a, b]
    insert_fwd = cost[a, first] + cost[last, b] - base
    seg_arr = np.asarray(seg, dtype=np.intp)
    inside_fwd = float(cost[seg_arr[:-1], seg_arr[1:]].sum()) if seg_len > 1 else 0.0
    inside_bwd = float(cost[seg_arr[1:], seg_arr[:-1]].sum()) if seg_len > 1 else 0.0
    insert_bwd = cost[a, last] + cost[first, b] - base + (inside_bwd - inside_fwd)
    # Re-inserting where it came from is no move.
    here = start - 1
    insert_fwd[here] = np.inf
    if seg_len == 1:
        insert_bwd[:] = np.inf
    best_fwd = int(np.argmin(insert_fwd))
    best_bwd = int(np.argmin(insert_bwd))
    if insert_fwd[best_fwd] <= insert_bwd[best_bwd]:
        pos, gain, piece = best_fwd, removal_gain - insert_fwd[best_fwd], seg
    else:
        pos, gain, piece = best_bwd, removal_gain - insert_bwd[best_bwd], seg[::-1]
    if gain <= _IMPROVES:
        return None
    rest_list = rest.tolist()
    return rest_list[: pos + 1] + list(piece) + rest_list[pos + 1 :]


def local_search(cost: np.ndarray, order: Sequence[int]) -> list[int]:
    """2-opt and Or-opt alternated until neither improves: a local optimum for both."""
    tour = list(order)
    best = loop_cost(cost, tour)
    while True:
        tour = or_opt(cost, two_opt(cost, tour))
        length = loop_cost(cost, tour)
        if length >= best - _IMPROVES:
            return tour
        best = length


def _double_bridge(tour: list[int], rng: random.Random) -> list[int]:
    """Cut the loop in four and reconnect A C B D: a move 2-opt cannot undo in one step."""
    n = len(tour)
    p1, p2, p3 = sorted(rng.sample(range(1, n), 3))
    return tour[:p1] + tour[p2:p3] + tour[p1:p2] + tour[p3:]


def iterated_local_search(
    cost: np.ndarray,
    *,
    time_budget_s: float = 0.5,
    max_kicks: int | None = None,
    seed: int = 0,
    start: Sequence[int] | None = None,
) -> list[int]:
    """The best loop found by local search from nearest neighbour, then kicked and re-searched.

    Guarantees a valid loop (home first, each stop once) however short the budget;
    never claims optimality. Deterministic for a given ``seed`` and ``max_kicks``.
    """
    n = len(cost)
    if n <= 3:
        return list(range(n))
    deadline = time.perf_counter() + time_budget_s
    rng = random.Random(seed)
    first = list(start) if start is not None else nearest_neighbour(cost)
    if n >= _NEIGHBOUR_LISTS_FROM and np.array_equal(cost, cost.T):
        found = _symmetric_ils(cost, first, deadline=deadline, max_kicks=max_kicks, rng=rng)
        return local_search(cost, found)
    best = local_search(cost, first)
    best_len = loop_cost(cost, best)
    if n < 8:
        return best
    kicks = 0
    while not past(deadline) and (max_kicks is None or kicks < max_kicks):
        kicks += 1
        candidate = local_search(cost, _double_bridge(best, rng))
        length = loop_cost(cost, candidate)
        if length < best_len - _IMPROVES:
            best, best_len = candidate, length
    return best


def cheapest_insertion_position(cost: np.ndarray, order: Sequence[int], node: int):
    """Where inserting ``node`` into the loop costs least: ``(position, added_cost)``.

    ``position`` is the index in ``order`` before which the node goes (len(order)
    means just before returning home).
    """
    idx = np.asarray(order, dtype=np.intp)
    a = idx
    b = np.roll(idx, -1)
    added = cost[a, node] + cost[node, b] - cost[a, b]
    k = int(np.argmin(added))
    return k + 1, float(added[k])


def _symmetric_ils(cost: np.ndarray, start: Sequence[int], *, deadline: float,
                   max_kicks: int | None, rng: random.Random, neighbours: int = 10) -> list[int]:
    """Iterated 2-opt + Or-opt for symmetric costs with neighbour lists and don't-look bits.

    Bentley (1992), "Fast algorithms for geometric traveling salesman problems":
    only the ``neighbours`` nearest cities are tried as new partners, and a city
    whose surroundings did not change is not looked at again. Kicks are
    segment-local double bridges, so each re-search touches few cities.
    """
    n = len(cost)
    c = cost.tolist()
    near = np.argsort(np.where(np.eye(n, dtype=bool), np.inf, cost), axis=1)[:, :neighbours]
    near_list = near.tolist()
    tour = list(start)
    pos = [0] * n
    for i, v in enumerate(tour):
        pos[v] = i

    def reverse(b: int, e: int) -> None:
        """Reverse the path from city b to city e (in tour direction), the shorter way."""
        i, j = pos[b], pos[e]
        length = (j - i) % n + 1
        if 2 * length > n:
            i, j = (j + 1) % n, (i - 1) % n
            length = n - length
        for _ in range(length // 2):
            tour[i], tour[j] = tour[j], tour[i]
            pos[tour[i]], pos[tour[j]] = i, j
            i = (i + 1) % n
            j = (j - 1) % n

    def improve_city(a: int) -> list[int] | None:
        """Apply one improving move around city a; the cities whose edges changed, or None."""
        for forward in (True, False):
            b = tour[(pos[a] + 1) % n] if forward else tour[pos[a] - 1]
            ab = c[a][b]
            for x in near_list[a]:
                gain1 = ab - c[a][x]
                if gain1 <= _IMPROVES:
                    break
                if forward:
                    y = tour[(pos[x] + 1) % n]
                    if x == b or y == a:
                        continue
                    if gain1 + c[x][y] - c[b][y] > _IMPROVES:
                        reverse(b, x)
                        return [a, b, x, y]
                else:
                    y = tour[pos[x] - 1]
                    if x == b or y == a:
                        continue
                    if gain1 + c[y][x] - c[y][b] > _IMPROVES:
                        reverse(a, y)
                        return [a, b, x, y]
        # Or-opt: move the run of 1..3 cities starting at a (tour direction) elsewhere.
        for length in (1, 2, 3):
            if length + 3 > n:
                break
            i = pos[a]
            seg = [tour[(i + k) % n] for k in range(length)]
            p, nx = tour[i - 1], tour[(i + length) % n]
            s1, sl = seg[0], seg[-1]
            removed = c[p][s1] + c[sl][nx] - c[p][nx]
            if removed <= _IMPROVES:
                continue
            inside = set(seg)
            for end in (s1, sl):
                for x in near_list[end]:
                    if x in inside:
                        continue
                    y = tour[(pos[x] + 1) % n]
                    if y in inside or x == p:
                        continue
                    fwd = c[x][s1] + c[sl][y] - c[x][y]
                    bwd = c[x][sl] + c[s1][y] - c[x][y]
                    if removed - min(fwd, bwd) > _IMPROVES:
                        piece = seg if fwd <= bwd else seg[::-1]
                        rest = [v for v in tour if v not in inside]
                        at = rest.index(x) + 1
                        tour[:] = rest[:at] + piece + rest[at:]
                        for k, v in enumerate(tour):
                            pos[v] = k
                        return [p, nx, x, y, s1, sl]
        return None

    def search(active: list[int]) -> None:
        queue = list(dict.fromkeys(active))
        queued = set(queue)
        while queue:
            a = queue.pop()
            queued.discard(a)
            changed = improve_city(a)
            if changed is not None:
                for v in changed + [a]:
                    if v not in queued:
                        queue.append(v)
                        queued.add(v)

    def length() -> float:
        return sum(c[tour[k - 1]][tour[k]] for k in range(n))

    search(list(range(n)))
    best, best_len = tour[:], length()
    kicks = 0
    while not past(deadline) and (max_kicks is None or kicks < max_kicks):
        kicks += 1
        # A double bridge on a stretch of at most 50 positions, so only its cities move.
        span = min(n, 50)
        first = rng.randrange(n)
        cuts = sorted(rng.sample(range(1, span), 3))
        window = [tour[(first + k) % n] for k in range(span)]
        p1, p2, p3 = cuts
        window = window[:p1] + window[p2:p3] + window[p1:p2] + window[p3:]
        for k, v in enumerate(window):
            tour[(first + k) % n] = v
            pos[v] = (first + k) % n
        ends = [window[0], window[-1], window[p1 - 1], window[p1], window[p3 - p2 + p1 - 1],
                window[p3 - p2 + p1], window[p3 - 1], window[min(p3, span - 1)]]
        search([v for v in ends] + [tour[(first - 1) % n], tour[(first + span) % n]])
        current = length()
        if current < best_len - _IMPROVES:
            best, best_len = tour[:], current
        else:
            tour[:] = best
            for k, v in enumerate(tour):
                pos[v] = k
    home = best.index(0)
    return best[home:] + best[:home]
