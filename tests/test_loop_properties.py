"""Properties of the loop solvers on random small instances, against independent oracles.

Oracles:
- a brute force over every order of the stops (itertools.permutations), written here;
- networkx 3 (Hagberg, Schult & Swart 2008) as an outside reference: its Christofides
  tour (Christofides 1976; at most 1.5 x the optimum on metric instances) and its
  ``traveling_salesman_problem``, used on symmetric metric instances only;
- ``networkx.stoer_wagner`` (Stoer & Wagner 1997) for the minimum cut behind each
  subtour constraint, which is violated exactly when the cut weighs less than 2
  (Dantzig, Fulkerson & Johnson 1954).
"""

from __future__ import annotations

import itertools
import math

import networkx as nx
import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from solver.loop import solve_loop
from solver.subtours import components, violated_subtours

SETTINGS = settings(max_examples=40, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


# --- instances ---------------------------------------------------------------------------


@st.composite
def instances(draw, kinds=("euclid-int", "euclid-float", "asymmetric")):
    """(kind, matrix as a numpy array) with 3..9 nodes, node 0 home."""
    kind = draw(st.sampled_from(kinds))
    n = draw(st.integers(min_value=3, max_value=9))
    if kind == "asymmetric":
        values = draw(st.lists(st.integers(0, 50), min_size=n * n, max_size=n * n))
        matrix = np.array(values, dtype=float).reshape(n, n)
        np.fill_diagonal(matrix, 0.0)
        return kind, matrix
    # Small integer grid: duplicate points (zero legs) and collinear points occur.
    points = draw(st.lists(st.tuples(st.integers(0, 40), st.integers(0, 40)),
                           min_size=n, max_size=n))
    matrix = np.array([[math.dist(p, q) for q in points] for p in points])
    if kind == "euclid-int":
        matrix = np.trunc(matrix + 0.5)  # TSPLIB95 EUC_2D nint rounding (Reinelt 1991)
    return kind, matrix


def brute_force(matrix: np.ndarray) -> float:
    """The least closed-loop length from node 0 over all (n-1)! orders of the stops."""
    n = len(matrix)
    perms = np.array(list(itertools.permutations(range(1, n))), dtype=np.intp)
    total = matrix[0, perms[:, 0]] + matrix[perms[:, -1], 0]
    for k in range(n - 2):
        total = total + matrix[perms[:, k], perms[:, k + 1]]
    return float(total.min())


def walk(matrix, order) -> float:
    return float(sum(matrix[a][b] for a, b in zip(order, [*order[1:], order[0]], strict=True)))


def same(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)


def assert_valid(result, matrix) -> None:
    assert result.order[0] == 0, "the loop starts at home"
    assert sorted(result.order) == list(range(len(matrix))), "each stop exactly once"
    assert same(result.length, walk(matrix, result.order)), "length is the order's length"


# --- exact methods against the brute force ------------------------------------------------

# An asymmetric matrix with many zero legs on which the cutting-plane method claims a
# proven optimum of 1 although the loop 0-4-3-2-1-5-0 has length 0 (the only such loop,
# by brute force); see test_loop_exact.test_cutting_planes_on_zero_legs_match_the_brute_force.
DFJ_WRONG_PROOF = np.array([[0, 0, 0, 0, 0, 0], [1, 0, 1, 1, 2, 0], [0, 0, 0, 0, 1, 0],
                            [0, 1, 0, 0, 2, 0], [0, 1, 0, 0, 0, 0], [0, 1, 0, 1, 2, 0]],
                           dtype=float)
METHODS = [
    pytest.param("held-karp", id="held-karp"),
    pytest.param("mtz", id="mtz-highs"),
    pytest.param("dfj", id="dfj"),
]


@pytest.mark.parametrize("method", METHODS)
@SETTINGS
@given(instances())
@example(("asymmetric", DFJ_WRONG_PROOF))
def test_every_exact_method_matches_the_brute_force(method, case):
    _, matrix = case
    optimum = brute_force(matrix)
    result = solve_loop(matrix, method=method, backend="highs", time_limit_s=30)
    assert result.proven_optimal, method
    assert same(result.length, optimum), (method, result.length, optimum)
    assert same(result.lower_bound, result.length)
    assert result.gap == 0.0
    assert_valid(result, matrix)


@SETTINGS
@given(instances())
def test_heuristic_is_a_valid_loop_never_shorter_than_the_optimum(case):
    _, matrix = case
    optimum = brute_force(matrix)
    result = solve_loop(matrix, method="heuristic", time_limit_s=0.02)
    assert_valid(result, matrix)
    assert result.length >= optimum - 1e-9
    assert result.lower_bound <= optimum + 1e-9


@pytest.mark.parametrize("method", [pytest.param("auto", id="auto"), *METHODS[1:]])
@SETTINGS
@given(instances(), st.permutations(range(1, 9)))
@example(("asymmetric", DFJ_WRONG_PROOF), list(range(1, 9)))
def test_relabelling_the_stops_leaves_the_optimum_unchanged(method, case, shuffled):
    _, matrix = case
    n = len(matrix)
    relabel = [0, *(v for v in shuffled if v < n)]  # a random permutation of 1..n-1
    # Stop k of the original is stop relabel[k] of the copy.
    copy = np.empty_like(matrix)
    for i in range(n):
        for j in range(n):
            copy[relabel[i], relabel[j]] = matrix[i, j]
    optimum = brute_force(matrix)
    result = solve_loop(copy, method=method, time_limit_s=30)
    assert same(result.length, optimum), method
    assert_valid(result, copy)
    back = [relabel.index(v) for v in result.order]
    assert same(walk(matrix, back), optimum)


# --- networkx as an outside reference (metric, symmetric instances only) ------------------


def _complete_graph(matrix: np.ndarray) -> nx.Graph:
    graph = nx.Graph()
    n = len(matrix)
    graph.add_nodes_from(range(n))
    for i in range(n):
        for j in range(i + 1, n):
            graph.add_edge(i, j, weight=float(matrix[i, j]))
    return graph


def _closed_walk_length(matrix, nodes) -> float:
    # networkx returns the cycle with its first node repeated at the end.
    return float(sum(matrix[a][b] for a, b in itertools.pairwise(nodes)))


@SETTINGS
@given(instances(kinds=("euclid-float",)).filter(lambda c: len(c[1]) >= 4))
def test_networkx_tours_are_never_shorter_than_our_optimum(case):
    # Plain Euclidean distances are a metric, so any closed walk through every stop is at
    # least the optimal loop (shortcutting), and Christofides' tour is at most 1.5 x the
    # optimum (Christofides 1976). networkx is not used on asymmetric or non-metric input,
    # where it returns walks rather than loops.
    _, matrix = case
    ours = solve_loop(matrix, time_limit_s=30)
    assert ours.proven_optimal
    graph = _complete_graph(matrix)
    christofides = nx.algorithms.approximation.christofides(graph, weight="weight")
    assert sorted(set(christofides)) == list(range(len(matrix)))
    length = _closed_walk_length(matrix, christofides)
    assert length >= ours.length - 1e-9
    assert length <= 1.5 * ours.length + 1e-9
    tsp = nx.algorithms.approximation.traveling_salesman_problem(graph, weight="weight",
                                                                 cycle=True)
    assert set(tsp) == set(range(len(matrix)))
    assert _closed_walk_length(matrix, tsp) >= ours.length - 1e-9


# --- subtour separation ------------------------------------------------------------------


def _weights(n: int, edges) -> np.ndarray:
    w = np.zeros((n, n))
    for i, j, value in edges:
        w[i, j] = w[j, i] = value
    return w


def _cut(w: np.ndarray, side) -> float:
    inside = np.zeros(len(w), dtype=bool)
    inside[list(side)] = True
    return float(w[np.ix_(inside, ~inside)].sum())


def _canonical(side, n: int) -> frozenset[int]:
    """The side of the cut that holds node 0: both sides name the same cut."""
    side = frozenset(side)
    return side if 0 in side else frozenset(range(n)) - side


def _stoer_wagner(w: np.ndarray) -> tuple[float, frozenset[int]]:
    graph = nx.Graph()
    graph.add_nodes_from(range(len(w)))
    for i in range(len(w)):
        for j in range(i + 1, len(w)):
            if w[i, j] > 1e-9:
                graph.add_edge(i, j, weight=float(w[i, j]))
    value, (side, _) = nx.stoer_wagner(graph)
    return float(value), _canonical(side, len(w))


TWO_TRIANGLES = _weights(6, [(0, 1, 1), (1, 2, 1), (0, 2, 1), (3, 4, 1), (4, 5, 1), (3, 5, 1)])
# Connected, every node of weight 2; the cut between {0,1,2} and {3,4,5} weighs
# 0.25 + 0.25 + 0.5 = 1 (worked by hand).
FRACTIONAL = _weights(6, [(0, 1, 1), (0, 2, 0.75), (1, 2, 0.75), (3, 4, 1), (3, 5, 0.75),
                          (4, 5, 0.75), (0, 3, 0.25), (1, 4, 0.25), (2, 5, 0.5)])
SINGLE_TOUR = _weights(6, [(0, 1, 1), (1, 2, 1), (2, 3, 1), (3, 4, 1), (4, 5, 1), (5, 0, 1)])
# Half of loop 0-1-2-3-4-5 plus half of loop 0-2-4-1-3-5: a convex combination of loops
# satisfies every subtour constraint.
TWO_TOURS_MIXED = (SINGLE_TOUR + _weights(6, [(0, 2, 1), (2, 4, 1), (4, 1, 1), (1, 3, 1),
                                              (3, 5, 1), (5, 0, 1)])) / 2


def test_hand_built_weights_have_degree_two_everywhere():
    for w in (TWO_TRIANGLES, FRACTIONAL, SINGLE_TOUR, TWO_TOURS_MIXED):
        np.testing.assert_allclose(w.sum(axis=1), 2.0)


def test_two_disjoint_triangles_are_both_found():
    # Each triangle is a subtour of its own, cut by weight 0 (worked by hand).
    found = violated_subtours(TWO_TRIANGLES)
    assert {frozenset(s) for s in found} == {frozenset({0, 1, 2}), frozenset({3, 4, 5})}
    assert all(_cut(TWO_TRIANGLES, s) == 0.0 for s in found)
    assert sorted(map(sorted, components(TWO_TRIANGLES))) == [[0, 1, 2], [3, 4, 5]]


def test_connected_fractional_point_with_a_light_cut_is_found():
    value, side = _stoer_wagner(FRACTIONAL)
    assert value == pytest.approx(1.0)  # hand-worked above
    assert side == frozenset({0, 1, 2})
    found = violated_subtours(FRACTIONAL)
    assert found
    assert all(_cut(FRACTIONAL, s) < 2.0 - 1e-6 for s in found)
    assert min(_cut(FRACTIONAL, s) for s in found) == pytest.approx(value)
    assert side in {_canonical(s, 6) for s in found}


@pytest.mark.parametrize("w", [SINGLE_TOUR, TWO_TOURS_MIXED], ids=["single tour", "two tours"])
def test_loops_and_their_mixtures_violate_nothing(w):
    value, _ = _stoer_wagner(w)
    assert value >= 2.0 - 1e-9
    assert violated_subtours(w) == []


# Connected, every node of weight 2, {0,1,2} cut by 0.5 + 0.5 = 1 < 2 (worked by hand):
# edges of weight 1 chain 0-1-2 and 3-4-5, so shrinking them leaves two groups only.
TWO_UNIT_PATHS = _weights(6, [(0, 1, 1), (1, 2, 1), (0, 2, 0.5), (3, 4, 1), (4, 5, 1),
                              (3, 5, 0.5), (0, 3, 0.5), (2, 5, 0.5)])


def test_light_cut_between_the_last_two_shrunk_groups_is_found():
    np.testing.assert_allclose(TWO_UNIT_PATHS.sum(axis=1), 2.0)
    value, side = _stoer_wagner(TWO_UNIT_PATHS)
    assert value == pytest.approx(1.0)
    found = violated_subtours(TWO_UNIT_PATHS)
    assert side in {_canonical(s, 6) for s in found}


@st.composite
def two_factor_mixtures(draw):
    """A convex combination of 1..3 random 2-factors (disjoint cycles of 3+ nodes covering
    every node): every node has weight 2, the points subtour separation works on."""
    n = draw(st.integers(min_value=6, max_value=10))
    w = np.zeros((n, n))
    factors = draw(st.integers(min_value=1, max_value=3))
    shares = draw(st.lists(st.integers(1, 4), min_size=factors, max_size=factors))
    for share in shares:
        nodes = draw(st.permutations(range(n)))
        sizes, left = [], n
        while left:
            size = left if left < 6 else draw(st.integers(min_value=3, max_value=left - 3))
            sizes.append(size)
            left -= size
        start = 0
        for size in sizes:
            cycle = nodes[start:start + size]
            for a, b in zip(cycle, [*cycle[1:], cycle[0]], strict=True):
                w[a, b] += share / sum(shares)
                w[b, a] += share / sum(shares)
            start += size
    return w


def _check_sound(w: np.ndarray, found) -> None:
    n = len(w)
    for side in found:
        assert 0 < len(side) < n
        assert 2 * len(side) <= n, "returned as the smaller side"
        assert _cut(w, side) < 2.0 - 1e-6


@SETTINGS
@given(two_factor_mixtures())
def test_every_returned_set_is_violated_and_none_when_the_min_cut_is_two(w):
    found = violated_subtours(w)
    _check_sound(w, found)
    groups = components(w)
    if len(groups) > 1:
        assert {_canonical(s, len(w)) for s in found} == {_canonical(g, len(w)) for g in groups}
        return
    value, _ = _stoer_wagner(w)
    if value >= 2.0 - 1e-6:
        assert found == []
    elif found:
        assert min(_cut(w, s) for s in found) == pytest.approx(value)


@SETTINGS
@given(two_factor_mixtures())
@example(TWO_UNIT_PATHS)
def test_separation_is_exact(w):
    # violated_subtours documents: "The list is empty only if no such set exists".
    found = violated_subtours(w)
    _check_sound(w, found)
    if len(components(w)) == 1:
        value, _ = _stoer_wagner(w)
        assert bool(found) == (value < 2.0 - 1e-6)
