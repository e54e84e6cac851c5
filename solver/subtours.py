"""Finding violated subtour-elimination constraints in a (fractional) loop solution.

The solution is given as a symmetric weight matrix ``w`` where ``w[i, j]`` is
the flow between i and j in either direction (x_ij + x_ji for arcs, x_e for
edges). Every node then has weight 2, and a node set S violates subtour
elimination exactly when w(δ(S)) < 2 (Dantzig, Fulkerson & Johnson 1954).

Separation follows Padberg & Rinaldi (1990/1991): connected components first
(each component of a disconnected support graph is violated with cut value 0),
then, on a connected support graph, shrinking of edges of weight 1 (safe: a
violated set that splits such an edge can be moved across it without raising
its cut) and the Stoer–Wagner minimum cut (Stoer & Wagner 1997), keeping every
"cut of the phase" below the threshold, so one call yields many cuts.
"""

from __future__ import annotations

import numpy as np

__all__ = ["components", "violated_subtours", "violated_blossoms"]

_SUPPORT = 1e-6


def components(w: np.ndarray, *, support: float = _SUPPORT) -> list[list[int]]:
    """Connected components of the graph whose edges carry more than ``support``."""
    n = len(w)
    adjacent = w > support
    label = np.full(n, -1, dtype=np.intp)
    groups: list[list[int]] = []
    for root in range(n):
        if label[root] >= 0:
            continue
        label[root] = len(groups)
        frontier = np.zeros(n, dtype=bool)
        frontier[root] = True
        members = frontier.copy()
        while frontier.any():
            reached = adjacent[frontier].any(axis=0) & ~members
            members |= reached
            frontier = reached
        label[members] = len(groups)
        groups.append(np.flatnonzero(members).tolist())
    return groups


def violated_subtours(
    w: np.ndarray, *, threshold: float = 2.0 - 1e-6, max_cuts: int | None = None
) -> list[list[int]]:
    """Node sets S (never all nodes, never empty) with w(δ(S)) < ``threshold``.

    Each set is returned as its smaller side, the sparser form of the cut.
    The list is empty only if no such set exists (the separation is exact).
    """
    n = len(w)
    groups = components(w)
    if len(groups) > 1:
        return [_smaller_side(g, n) for g in groups]
    merged, w_small = _shrink_unit_edges(w)
    if len(merged) == 1:
        return []
    if len(merged) == 2:
        # Two groups left: their one cut is the only candidate.
        found = [[0]] if w_small[0, 1] < threshold else []
    else:
        found = _stoer_wagner_phase_cuts(w_small, threshold)
    result: list[list[int]] = []
    seen: set[frozenset[int]] = set()
    for super_nodes in found:
        members = sorted(m for s in super_nodes for m in merged[s])
        side = _smaller_side(members, n)
        key = frozenset(side)
        if 0 < len(side) < n and key not in seen:
            seen.add(key)
            result.append(side)
        if max_cuts is not None and len(result) >= max_cuts:
            break
    return result


def _smaller_side(members: list[int], n: int) -> list[int]:
    if 2 * len(members) <= n:
        return sorted(members)
    inside = set(members)
    return [v for v in range(n) if v not in inside]


def _shrink_unit_edges(w: np.ndarray) -> tuple[list[list[int]], np.ndarray]:
    """Contract every edge of weight >= 1 (Padberg & Rinaldi's first shrinking rule)."""
    n = len(w)
    parent = list(range(n))

    def find(v: int) -> int:
        while parent[v] != v:
            parent[v] = parent[parent[v]]
            v = parent[v]
        return v

    rows, cols = np.nonzero(np.triu(w, 1) >= 1.0 - 1e-9)
    for i, j in zip(rows.tolist(), cols.tolist(), strict=True):
        ri, rj = find(i), find(j)
        if ri != rj:
            parent[rj] = ri
    roots = sorted({find(v) for v in range(n)})
    index = {r: k for k, r in enumerate(roots)}
    merged: list[list[int]] = [[] for _ in roots]
    label = np.empty(n, dtype=np.intp)
    for v in range(n):
        k = index[find(v)]
        merged[k].append(v)
        label[v] = k
    m = len(roots)
    small = np.zeros((m, m))
    np.add.at(small, (label[:, None], label[None, :]), w)
    np.fill_diagonal(small, 0.0)
    return merged, small


def _stoer_wagner_phase_cuts(w: np.ndarray, threshold: float) -> list[list[int]]:
    """All cuts-of-the-phase lighter than ``threshold``, as lists of super-node ids."""
    w = w.copy()
    m = len(w)
    active = np.ones(m, dtype=bool)
    groups: list[list[int]] = [[v] for v in range(m)]
    cuts: list[list[int]] = []
    for _ in range(m - 1):
        start = int(np.flatnonzero(active)[0])
        in_a = np.zeros(m, dtype=bool)
        in_a[start] = True
        attach = w[start].copy()
        attach[~active | in_a] = -np.inf
        prev, last = start, start
        cut_weight = 0.0
        for _ in range(int(active.sum()) - 1):
            nxt = int(np.argmax(attach))
            cut_weight = float(attach[nxt])
            in_a[nxt] = True
            attach += w[nxt]
            attach[nxt] = -np.inf
            prev, last = last, nxt
        if cut_weight < threshold:
            cuts.append(list(groups[last]))
        w[prev] += w[last]
        w[:, prev] += w[:, last]
        w[prev, prev] = 0.0
        w[last] = 0.0
        w[:, last] = 0.0
        active[last] = False
        groups[prev].extend(groups[last])
    return cuts


def violated_blossoms(
    w: np.ndarray, *, tolerance: float = 1e-3
) -> list[tuple[list[int], list[tuple[int, int]]]]:
    """2-matching (blossom) inequalities violated by ``w``, found by odd components.

    Padberg & Hong (1980)'s fast heuristic: each connected component H of the
    fractional edges (0 < w < 1) is a handle; the edges of weight 1 leaving H
    are its teeth. With an odd number t >= 3 of teeth that share no node, the
    comb inequality x(E(H)) + x(T) <= |H| + (t - 1)/2 holds for every loop
    (Edmonds 1965) and is returned as ``(handle, teeth)`` when ``w`` violates it.
    """
    n = len(w)
    fractional = (w > tolerance) & (w < 1.0 - tolerance)
    found = []
    for handle in components(np.where(fractional, w, 0.0), support=0.0):
        if len(handle) < 2:
            continue
        inside = np.zeros(n, dtype=bool)
        inside[handle] = True
        teeth = [
            (u, v)
            for u in handle
            for v in np.flatnonzero((w[u] >= 1.0 - tolerance) & ~inside).tolist()
        ]
        outer = [v for _, v in teeth]
        if len(teeth) < 3 or len(teeth) % 2 == 0 or len(set(outer)) != len(outer):
            continue
        h = np.asarray(handle)
        lhs = w[np.ix_(h, h)].sum() / 2.0 + sum(w[u, v] for u, v in teeth)
        if lhs > len(handle) + (len(teeth) - 1) / 2.0 + tolerance:
            found.append((sorted(handle), teeth))
    return found
