"""TSPTW reader and tour evaluation checked against the published Dumas et al. optima.

Sources: Y. Dumas, J. Desrosiers, E. Gélinas, M. M. Solomon, Operations Research
43(2):367–371, 1995 (instances and proven optimal travel times, via
fixtures/tsptw/SOLUTIONS.tsv); the best tours LKH-3 (Helsgaun 2017) found, whose
lengths equal those optima; fixtures/tsptw/README.md for the format and the
travel-time convention ("Objective").
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from solver.errors import InvalidInput
from solver.tsplib import read_tour, tour_length
from solver.tsptw_file import (
    TsptwInstance,
    evaluate_tsptw_tour,
    looks_like_tsptw,
    parse_tsptw,
    read_tsptw,
)

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
TSPTW = FIXTURES / "tsptw"


def _solutions() -> list[dict[str, str]]:
    with (TSPTW / "SOLUTIONS.tsv").open(newline="") as handle:
        return list(csv.DictReader(handle, delimiter="\t"))


SOLUTIONS = _solutions()


def _ids(row: dict[str, str]) -> str:
    return row["name"]


def test_solutions_table_lists_every_instance_file():
    # fixtures/tsptw/README.md: 20 instances, one SOLUTIONS.tsv row each.
    assert {p.stem for p in TSPTW.glob("*.txt")} == {row["name"] for row in SOLUTIONS}
    assert len(SOLUTIONS) == 20


@pytest.mark.parametrize("row", SOLUTIONS, ids=_ids)
def test_instance_parses_with_its_published_size(row):
    # n counts the depot: 21 for n20, 41 for n40 (SOLUTIONS.tsv, fixtures/tsptw/README.md).
    instance = read_tsptw(TSPTW / f"{row['name']}.txt")
    n = int(row["n"])
    assert n in (21, 41)
    assert instance.name == row["name"]
    assert instance.matrix.shape == (n, n)
    assert instance.ready.shape == instance.due.shape == (n,)
    assert not instance.matrix.flags.writeable
    # Properties the README states for every file: symmetric, zero diagonal, depot ready 0.
    assert np.array_equal(instance.matrix, instance.matrix.T)
    assert np.all(np.diag(instance.matrix) == 0)
    assert instance.ready[0] == 0
    assert np.all(instance.ready <= instance.due)


@pytest.mark.parametrize("row", SOLUTIONS, ids=_ids)
def test_lkh3_tour_is_feasible_with_the_proven_optimal_travel_time(row):
    # Optimal travel time: Dumas et al. (1995) via SOLUTIONS.tsv; tour: LKH-3, whose file
    # name carries the same length.
    optimum = int(row["optimal_value"])
    instance = read_tsptw(TSPTW / f"{row['name']}.txt")
    tour = read_tour(TSPTW / f"{row['name']}.{optimum}.tour")
    assert tour[0] == 1  # the depot, numbered 1 in TSPLIB tour files
    assert evaluate_tsptw_tour(instance, [node - 1 for node in tour]) == (True, optimum)


def test_reversed_optimal_tour_breaks_the_windows():
    # Computed here, no source: the matrix is symmetric, so the reversed n20w20.001 tour has
    # the same travel time, 378, but its 20-unit windows no longer fit.
    instance = read_tsptw(TSPTW / "n20w20.001.txt")
    tour = [node - 1 for node in read_tour(TSPTW / "n20w20.001.378.tour")]
    assert evaluate_tsptw_tour(instance, [0, *tour[:0:-1]]) == (False, 378)


def test_zero_time_arc_between_customers_is_kept():
    # fixtures/tsptw/README.md: n40w20.001 has a zero-time arc between two distinct customers.
    matrix = read_tsptw(TSPTW / "n40w20.001.txt").matrix
    zero = np.argwhere((matrix == 0) & ~np.eye(len(matrix), dtype=bool))
    assert len(zero) >= 2 and all(0 not in pair for pair in zero.tolist())


# --- hand-made instances: every rule of the travel-time convention -----------------------


def _instance(matrix: list[list[int]], windows: list[tuple[int, int]]) -> TsptwInstance:
    lines = [str(len(matrix))]
    lines += [" ".join(map(str, row)) for row in matrix]
    lines += [f"{ready}   {due}   " for ready, due in windows]
    return parse_tsptw("\n".join(lines) + "\n", name="hand")


# Hand-made (no source). Loop 0->1->2->0 travels 2 + 3 + 5 = 10.
TRIANGLE = [[0, 2, 5], [2, 0, 3], [5, 3, 0]]


@pytest.mark.parametrize(("depot_due", "feasible"), [(10, True), (9, False)])
def test_depot_due_bounds_the_return_home(depot_due, feasible):
    # README "Objective": the return must come no later than the depot's due. The customers'
    # windows are loose, so only that rule decides; the shared instances never test it.
    instance = _instance(TRIANGLE, [(0, depot_due), (0, 100), (0, 100)])
    assert evaluate_tsptw_tour(instance, [0, 1, 2]) == (feasible, 10)


@pytest.mark.parametrize(("depot_due", "feasible"), [(16, True), (15, False)])
def test_waiting_delays_the_return_but_is_not_travel(depot_due, feasible):
    # README "Objective": arriving at node 1 at 2, before its ready 8, waits until 8; node 2
    # at 11, home at 16. Travel stays 10, since waiting is not counted.
    instance = _instance(TRIANGLE, [(0, depot_due), (8, 100), (0, 100)])
    assert evaluate_tsptw_tour(instance, [0, 1, 2]) == (feasible, 10)


def test_arriving_after_due_is_infeasible_and_on_due_is_fine():
    # README "Objective". Hand-made: 0->1->2 reaches node 2 at 5 > due 4; 0->2->1 reaches
    # node 2 at 4 (= due) and node 1 at 7 (= due), home at 9.
    instance = _instance([[0, 2, 4], [2, 0, 3], [4, 3, 0]], [(0, 100), (0, 7), (0, 4)])
    assert evaluate_tsptw_tour(instance, [0, 1, 2]) == (False, 9)
    assert evaluate_tsptw_tour(instance, [0, 2, 1]) == (True, 9)


@pytest.mark.parametrize(("depot_ready", "feasible"), [(4, True), (5, False)])
def test_the_tour_leaves_home_at_the_depot_ready_time(depot_ready, feasible):
    # README "Objective": leaving at the depot's ready time, node 1 (due 6) is reached at
    # depot_ready + 2.
    instance = _instance(TRIANGLE, [(depot_ready, 100), (0, 6), (0, 100)])
    assert evaluate_tsptw_tour(instance, [0, 1, 2]) == (feasible, 10)


def test_depot_alone_is_a_feasible_empty_tour():
    assert evaluate_tsptw_tour(_instance([[0]], [(0, 0)]), [0]) == (True, 0)


@st.composite
def _loose_instances(draw) -> tuple[TsptwInstance, list[int]]:
    n = draw(st.integers(min_value=1, max_value=8))
    times = st.integers(min_value=0, max_value=1000)
    matrix = [[0 if i == j else draw(times) for j in range(n)] for i in range(n)]
    customers = draw(st.permutations(range(1, n)))
    return _instance(matrix, [(0, 10**6)] * n), [0, *customers]


@given(case=_loose_instances())
def test_without_binding_windows_every_tour_is_feasible_and_costs_its_loop(case):
    # With windows wider than any tour, the travel time is the closed-loop length that the
    # independent TSPLIB tour_length reports for the same matrix.
    instance, order = case
    assert evaluate_tsptw_tour(instance, order) == (True, tour_length(instance.matrix, order))


# --- telling the format apart ------------------------------------------------------------


def test_every_fixture_looks_like_tsptw_and_no_tsplib_file_does():
    for path in TSPTW.glob("*.txt"):
        assert looks_like_tsptw(path.read_text()), path.name
    for path in [*(FIXTURES / "tsplib").glob("*.tsp"), *(FIXTURES / "tsplib").glob("*.atsp")]:
        assert not looks_like_tsptw(path.read_text()), path.name
    for path in TSPTW.glob("*.tour"):
        assert not looks_like_tsptw(path.read_text()), path.name


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("1\n0\n0 10\n", True),  # N = 1: one matrix entry and one window
        ("2\n0 3\n3 0\n0 20\n2 10\n", True),
        ("2\n0 -3\n3 0\n0 20\n2 10\n", True),  # the right shape; parse_tsptw names the value
        ("", False),
        ("name,latitude,longitude\nHome,51.5,-0.12\n", False),  # a CSV of stops
        ("1 0\n0 10\n", False),  # N not alone on line 1
        ("2\n0 3\n3 0\n0 20\n", False),  # a window missing
        ("2\n0 3.5\n3.5 0\n0 20\n2 10\n", False),  # not integers
        ("0\n", False),
    ],
)
def test_looks_like_tsptw(text, expected):
    assert looks_like_tsptw(text) is expected


# --- bad input ---------------------------------------------------------------------------

GOOD = "2\n0 3\n3 0\n0 20\n2 10\n"

BAD_TEXTS = [
    # (text, field, words); the layout is fixtures/tsptw/README.md "File format".
    ("", "N", "TSPTW text is empty"),
    ("two\n", "N", "N is 'two'; expected an integer"),
    ("0\n", "N", "N is 0; expected at least 1"),
    (GOOD.replace("2 10\n", "2\n"), "N", "has 8 numbers; N = 2 needs 9"),
    (GOOD + "7\n", "N", "has 10 numbers; N = 2 needs 9"),
    (GOOD.replace("0 3\n", "0 -3\n"), "matrix", "from node 0 to node 1 is -3; expected >= 0"),
    (GOOD.replace("3 0\n", "3.5 0\n"), "matrix", "matrix row 1 column 0 is '3.5'"),
    (GOOD.replace("2 10", "12 10"), "ready", "node 1 has ready 12 after due 10"),
    (GOOD.replace("2 10", "-2 10"), "ready", "node 1 has ready -2; expected >= 0"),
    (GOOD.replace("2 10", "2 ten"), "due", "due of node 1 is 'ten'"),
]


@pytest.mark.parametrize(("text", "field", "words"), BAD_TEXTS)
def test_bad_text_is_refused_with_field_and_value(text, field, words):
    with pytest.raises(InvalidInput) as caught:
        parse_tsptw(text)
    assert caught.value.field == field
    assert words in str(caught.value)


BAD_ORDERS = [
    ([1, 0, 2], "order starts with 1; a tour starts at the depot 0"),
    ([], "order starts with None"),
    ([0, 1, 1], "visits node 1 twice"),
    ([0, 1, 2, 0], "visits node 0 twice (again at position 3) (the return home is implied)"),
    ([0, 1], "visits 2 of 3 nodes; it misses 2"),
    ([0, 5, 1], "order[1] is node 5; expected 0..2"),
    ([0, "1", 2], "order[1] is '1'; expected an integer"),
    ([0, True, 2], "order[1] is True; expected an integer"),
]


@pytest.mark.parametrize(("order", "words"), BAD_ORDERS)
def test_bad_order_is_refused(order, words):
    instance = _instance(TRIANGLE, [(0, 100)] * 3)
    with pytest.raises(InvalidInput) as caught:
        evaluate_tsptw_tour(instance, order)
    assert caught.value.field == "order"
    assert words in str(caught.value)


def test_read_tsptw_names_the_file_in_its_error(tmp_path):
    path = tmp_path / "late.txt"
    path.write_text(GOOD.replace("2 10", "12 10"))
    with pytest.raises(InvalidInput, match=r"late\.txt: node 1 has ready 12 after due 10"):
        read_tsptw(path)
    path.write_bytes("2\n0 3\n3 0\n0 20\n2 10 \u00e9\n".encode())
    with pytest.raises(InvalidInput, match="is not ASCII"):
        read_tsptw(path)


def test_instance_built_by_hand_must_have_matching_shapes():
    with pytest.raises(InvalidInput, match=r"matrix has shape \(2, 3\)"):
        TsptwInstance("x", np.zeros((2, 3), dtype=int), np.zeros(2, int), np.ones(2, int))
    with pytest.raises(InvalidInput, match="due has shape"):
        TsptwInstance("x", np.zeros((2, 2), dtype=int), np.zeros(2, int), np.ones(3, int))
