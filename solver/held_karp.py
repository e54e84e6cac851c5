"""Held–Karp dynamic programming for small loops: exact by construction.

Held & Karp (1962), "A dynamic programming approach to sequencing problems",
J. SIAM 10(1):196-210; independently Bellman (1962). ``best[S, j]`` is the
cheapest path from home through exactly the stops in ``S`` ending at ``j``;
the optimum closes the best full path back home. Time O(2^m m^2), memory
O(2^m m) for m stops, so it serves as the fast path for a dozen stops and as an
oracle in tests; it makes no assumption of symmetry or triangle inequality.
"""

from __future__ import annotations

import numpy as np

from .errors import InvalidInput

__all__ = ["MAX_HELD_KARP_STOPS", "held_karp"]

MAX_HELD_KARP_STOPS = 16  # 2^16 x 16 states: about 8 MB of float64, a few seconds


def held_karp(cost: np.ndarray) -> tuple[list[int], float]:
    """The optimal loop from node 0 through every other node and its length.

    Ties are broken towards the lowest node numbers, so the answer is deterministic.
    """
    n = len(cost)
    stops = n - 1
    if stops > MAX_HELD_KARP_STOPS:
        raise InvalidInput(
            f"held-karp handles at most {MAX_HELD_KARP_STOPS} stops; got {stops}",
            field="method",
            value="held-karp",
        )
    if stops <= 1:
        order = list(range(n))
        return order, float(cost[0, 1] + cost[1, 0]) if stops == 1 else 0.0
    full = (1 << stops) - 1
    best = np.full((1 << stops, stops), np.inf)
    parent = np.full((1 << stops, stops), -1, dtype=np.int16)
    inner = cost[1:, 1:]
    for j in range(stops):
        best[1 << j, j] = cost[0, j + 1]
    masks = np.arange(1 << stops)
    popcount = np.zeros(1 << stops, dtype=np.int16)
    for j in range(stops):
        popcount += (masks >> j) & 1
    for size in range(2, stops + 1):
        layer = masks[popcount == size]
        for j in range(stops):
            bit = 1 << j
            with_j = layer[(layer & bit) != 0]
            before = with_j ^ bit
            totals = best[before] + inner[:, j][None, :]
            k = np.argmin(totals, axis=1)
            best[with_j, j] = totals[np.arange(len(with_j)), k]
            parent[with_j, j] = k
    closing = best[full] + cost[1:, 0]
    last = int(np.argmin(closing))
    length = float(closing[last])
    path = []
    mask, j = full, last
    while j >= 0:
        path.append(j + 1)
        prev = int(parent[mask, j])
        mask ^= 1 << j
        j = prev
    return [0] + path[::-1], length
