"""TSPLIB95 reader checked against the published TSPLIB optima and the format's definitions.

Sources: G. Reinelt, "TSPLIB — A Traveling Salesman Problem Library", ORSA Journal on
Computing 3(4):376–384, 1991 (optimal tour lengths, via fixtures/tsplib/SOLUTIONS.tsv),
and G. Reinelt, "TSPLIB95" (documentation: §1.1.7 matrix layouts, §1.2 tours, §2
distance functions).
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from solver.errors import InvalidInput
from solver.tsplib import (
    EDGE_WEIGHT_FORMATS,
    TsplibInstance,
    parse_tour,
    parse_tsplib,
    read_tour,
    read_tsplib,
    tour_length,
)

TSPLIB = Path(__file__).resolve().parent.parent / "fixtures" / "tsplib"


def _solutions() -> list[dict[str, str]]:
    with (TSPLIB / "SOLUTIONS.tsv").open(newline="") as handle:
        return list(csv.DictReader(handle, delimiter="\t"))


SOLUTIONS = _solutions()
OPTIMUM = {row["name"]: int(row["optimal_length"]) for row in SOLUTIONS}


def _instance_path(row: dict[str, str]) -> Path:
    return TSPLIB / (row["name"] + (".tsp" if row["type"] == "TSP" else ".atsp"))


# --- the published instances -------------------------------------------------------------


def test_solutions_table_lists_every_instance_file():
    # fixtures/tsplib/README.md: 17 .tsp and 5 .atsp files, each with a SOLUTIONS.tsv row.
    on_disk = {p.name.split(".")[0] for p in TSPLIB.iterdir() if p.suffix in (".tsp", ".atsp")}
    assert on_disk == set(OPTIMUM)
    assert len(on_disk) == 22


@pytest.mark.parametrize("row", SOLUTIONS, ids=lambda row: row["name"])
def test_instance_parses_with_its_published_header(row):
    # name, type, dimension and edge_weight_type as SOLUTIONS.tsv records them from TSPLIB95.
    instance = read_tsplib(_instance_path(row))
    n = int(row["dimension"])
    assert instance.name == row["name"]
    assert instance.kind == row["type"]
    assert instance.dimension == n
    assert instance.edge_weight_type == row["edge_weight_type"]
    assert instance.matrix.shape == (n, n)
    assert instance.matrix.dtype == np.int64
    assert not instance.matrix.flags.writeable
    assert np.all(np.diag(instance.matrix) == 0)
    off_diagonal = ~np.eye(n, dtype=bool)
    assert instance.matrix[off_diagonal].min() >= 0
    if instance.kind == "TSP":
        assert np.array_equal(instance.matrix, instance.matrix.T)
    else:
        # TSPLIB's ATSP instances here are all genuinely asymmetric.
        assert not np.array_equal(instance.matrix, instance.matrix.T)


OPT_TOURS = sorted(TSPLIB.glob("*.opt.tour"))


def test_every_published_tour_for_these_instances_is_present():
    # fixtures/tsplib/README.md: "all the TSPLIB tour files that exist for the instances
    # above", none for ATSP. It counts 14, but names no fourteenth; the folder holds these 13.
    assert {p.name.split(".")[0] for p in OPT_TOURS} == {
        "att48", "bayg29", "bays29", "berlin52", "eil51", "eil76", "fri26",
        "gr24", "kroA100", "pr76", "st70", "ulysses16", "ulysses22",
    }  # fmt: skip


@pytest.mark.parametrize("tour_path", OPT_TOURS, ids=lambda p: p.name)
def test_published_optimal_tour_has_published_length(tour_path):
    # Optimal lengths: TSPLIB95 (Reinelt 1991), SOLUTIONS.tsv. Covers GEO (ulysses16/22),
    # ATT (att48), EUC_2D (eil51 ... kroA100) and EXPLICIT UPPER_ROW/FULL_MATRIX/LOWER_DIAG_ROW.
    name = tour_path.name.split(".")[0]
    row = next(r for r in SOLUTIONS if r["name"] == name)
    instance = read_tsplib(_instance_path(row))
    tour = read_tour(tour_path)
    assert sorted(tour) == list(range(1, instance.dimension + 1))
    assert tour_length(instance.matrix, [node - 1 for node in tour]) == OPTIMUM[name]


def test_tsplib95_quirks():
    # fixtures/tsplib/README.md "Quirks a parser must handle".
    assert read_tsplib(TSPLIB / "ulysses16.tsp").name == "ulysses16"  # NAME: ulysses16.tsp
    for name, n in (("bayg29", 29), ("bays29", 29), ("dantzig42", 42)):
        instance = read_tsplib(TSPLIB / f"{name}.tsp")
        assert instance.edge_weight_type == "EXPLICIT"
        assert instance.coords is not None and instance.coords.shape == (n, 2)
    assert read_tsplib(TSPLIB / "gr17.tsp").coords is None
    assert read_tsplib(TSPLIB / "att48.tsp").comment == "48 capitals of the US (Padberg/Rinaldi)"
    # The GEO coordinates stay as the file writes them (DDD.MM), node 11 of ulysses16 included.
    assert read_tsplib(TSPLIB / "ulysses16.tsp").coords[10].tolist() == [36.08, -5.21]


def test_atsp_filler_diagonal_is_removed_and_zero_arcs_kept():
    # fixtures/tsplib/README.md: br17's diagonal holds 9999; br17 has zero-cost arcs.
    text = (TSPLIB / "br17.atsp").read_text()
    raw = np.array(text.split("EDGE_WEIGHT_SECTION")[1].split("EOF")[0].split(), dtype=int)
    raw = raw.reshape(17, 17)
    assert set(np.diag(raw)) == {9999}
    matrix = read_tsplib(TSPLIB / "br17.atsp").matrix
    off_diagonal = ~np.eye(17, dtype=bool)
    assert np.array_equal(matrix[off_diagonal], raw[off_diagonal])
    assert (matrix[off_diagonal] == 0).any()


# --- GEO, checked against a scalar transcription of the TSPLIB95 §2.4 listing -------------


def _geo_listing(coords: list[list[float]], degrees) -> list[list[int]]:
    """TSPLIB95 §2.4 written out one pair at a time; ``degrees`` is the DDD part rule."""

    def radians(x: float) -> float:
        deg = degrees(x)
        return 3.141592 * (deg + 5.0 * (x - deg) / 3.0) / 180.0

    lat = [radians(c[0]) for c in coords]
    lon = [radians(c[1]) for c in coords]
    n = len(coords)
    out = [[0] * n for _ in range(n)]
    for i in range(n):
        for j in range(n):
            if i != j:
                q1 = math.cos(lon[i] - lon[j])
                q2 = math.cos(lat[i] - lat[j])
                q3 = math.cos(lat[i] + lat[j])
                arc = math.acos(0.5 * ((1.0 + q1) * q2 - (1.0 - q1) * q3))
                out[i][j] = int(6378.388 * arc + 1.0)
    return out


def _c_truncate(x: float) -> float:
    return float(int(x))


def _tsplib_nint(x: float) -> float:
    return float(int(x + 0.5))


@pytest.mark.parametrize("name", ["burma14", "ulysses16", "ulysses22"])
def test_geo_matrix_equals_the_scalar_listing_with_truncation(name):
    # TSPLIB95 §2.4 with deg = (int)x, the reading that reproduces the published optima.
    instance = read_tsplib(TSPLIB / f"{name}.tsp")
    assert instance.matrix.tolist() == _geo_listing(instance.coords.tolist(), _c_truncate)


@pytest.mark.parametrize(
    ("degrees", "length"),
    [
        (_c_truncate, 6859),  # TSPLIB95 published optimum of ulysses16 (Reinelt 1991)
        (_tsplib_nint, 7030),  # the pitfall value, fixtures/tsplib/README.md "GEO"
        (math.floor, 6747),  # floor instead of truncation: computed here, no source
    ],
)
def test_geo_degree_rule_decides_the_ulysses16_length(degrees, length):
    coords = read_tsplib(TSPLIB / "ulysses16.tsp").coords.tolist()
    tour = [node - 1 for node in read_tour(TSPLIB / "ulysses16.opt.tour")]
    assert tour_length(_geo_listing(coords, degrees), tour) == length


# --- the other distance functions, worked by hand from TSPLIB95 §2 ------------------------


def _two_nodes(weight_type: str, x: float, y: float) -> int:
    text = (
        f"NAME: pair\nTYPE: TSP\nDIMENSION: 2\nEDGE_WEIGHT_TYPE: {weight_type}\n"
        f"NODE_COORD_SECTION\n1 0 0\n2 {x} {y}\nEOF\n"
    )
    return int(parse_tsplib(text).matrix[0, 1])


@pytest.mark.parametrize(
    ("weight_type", "x", "y", "expected"),
    [
        ("EUC_2D", 3, 4, 5),  # §2.1: nint(5.0)
        ("EUC_2D", 1, 2, 2),  # §2.1: nint(2.236)
        ("EUC_2D", 1.5, 2, 3),  # §2.1: nint(2.5) = (int)3.0, halves round up
        ("CEIL_2D", 1, 1, 2),  # §2.6: ceil(1.414)
        ("CEIL_2D", 3, 4, 5),  # §2.6: ceil(5.0)
        ("ATT", 10, 0, 4),  # §2.5: r = 3.162, t = 3 < r, so 4
        ("ATT", 30, 40, 16),  # §2.5: r = 15.81, t = 16 >= r, so 16
        ("ATT", 10, 30, 10),  # §2.5: r = 10.0 exactly, t = 10
    ],
)
def test_distance_function_worked_by_hand(weight_type, x, y, expected):
    assert _two_nodes(weight_type, x, y) == expected


# --- EXPLICIT layouts: one hand-written matrix in every EDGE_WEIGHT_FORMAT ----------------

# Hand-written for this test (no source); each layout below follows TSPLIB95 §1.1.7.
HAND_MATRIX = [
    [0, 3, 4, 2, 7],
    [3, 0, 4, 6, 3],
    [4, 4, 0, 5, 8],
    [2, 6, 5, 0, 6],
    [7, 3, 8, 6, 0],
]
HAND_SECTIONS = {
    "FULL_MATRIX": "0 3 4 2 7\n3 0 4 6 3\n4 4 0 5 8\n2 6 5 0 6\n7 3 8 6 0",
    "UPPER_ROW": "3 4 2 7\n4 6 3\n5 8\n6",
    "LOWER_ROW": "3\n4 4\n2 6 5\n7 3 8 6",
    "UPPER_DIAG_ROW": "0 3 4 2 7\n0 4 6 3\n0 5 8\n0 6\n0",
    # Diagonal fillers, as some files have them, must not survive.
    "LOWER_DIAG_ROW": "9999\n3 9999\n4 4 9999\n2 6 5 9999\n7 3 8 6 9999",
    # Line breaks carry no meaning (TSPLIB95 §1.1): the same numbers, broken anywhere.
    "UPPER_COL": "3 4 4 2\n6 5 7 3 8 6",
    "LOWER_COL": "3 4 2 7 4 6 3 5 8 6",
    "UPPER_DIAG_COL": "0 3 0 4 4 0 2 6 5 0 7 3 8 6 0",
    "LOWER_DIAG_COL": "0 3 4 2 7 0 4 6 3 0 5 8 0 6 0",
}


def _explicit(weight_format: str, section: str, *, kind: str = "TSP", n: int = 5) -> str:
    return (
        f"NAME : hand{n}\nTYPE : {kind}\nDIMENSION : {n}\nEDGE_WEIGHT_TYPE : EXPLICIT\n"
        f"EDGE_WEIGHT_FORMAT : {weight_format}\nEDGE_WEIGHT_SECTION\n{section}\nEOF\n"
    )


def test_hand_sections_cover_every_supported_format():
    assert set(HAND_SECTIONS) == set(EDGE_WEIGHT_FORMATS)


@pytest.mark.parametrize("weight_format", sorted(HAND_SECTIONS))
def test_every_explicit_format_gives_the_hand_written_matrix(weight_format):
    instance = parse_tsplib(_explicit(weight_format, HAND_SECTIONS[weight_format]))
    assert instance.matrix.tolist() == HAND_MATRIX


def _layout(matrix: list[list[int]], weight_format: str) -> list[int]:
    """The numbers of ``matrix`` in the order TSPLIB95 §1.1.7 defines for the format."""
    n = len(matrix)
    pairs = {
        "FULL_MATRIX": [(i, j) for i in range(n) for j in range(n)],
        "UPPER_ROW": [(i, j) for i in range(n) for j in range(i + 1, n)],
        "LOWER_ROW": [(i, j) for i in range(n) for j in range(i)],
        "UPPER_DIAG_ROW": [(i, j) for i in range(n) for j in range(i, n)],
        "LOWER_DIAG_ROW": [(i, j) for i in range(n) for j in range(i + 1)],
        "UPPER_COL": [(i, j) for j in range(n) for i in range(j)],
        "LOWER_COL": [(i, j) for j in range(n) for i in range(j + 1, n)],
        "UPPER_DIAG_COL": [(i, j) for j in range(n) for i in range(j + 1)],
        "LOWER_DIAG_COL": [(i, j) for j in range(n) for i in range(j, n)],
    }[weight_format]
    return [matrix[i][j] for i, j in pairs]


@st.composite
def _symmetric_matrices(draw) -> list[list[int]]:
    n = draw(st.integers(min_value=1, max_value=8))
    matrix = [[0] * n for _ in range(n)]
    for i in range(n):
        for j in range(i + 1, n):
            matrix[i][j] = matrix[j][i] = draw(st.integers(min_value=0, max_value=10**6))
    return matrix


@given(matrix=_symmetric_matrices(), weight_format=st.sampled_from(EDGE_WEIGHT_FORMATS))
def test_written_layout_reads_back_as_the_same_matrix(matrix, weight_format):
    numbers = _layout(matrix, weight_format)
    section = "\n".join(" ".join(map(str, numbers[k : k + 7])) for k in range(0, len(numbers), 7))
    instance = parse_tsplib(_explicit(weight_format, section, n=len(matrix)))
    assert instance.matrix.tolist() == matrix


def test_keyword_spacing_and_trailing_blanks_do_not_matter():
    # fixtures/tsplib/README.md: "NAME: x", "NAME : x", "DIMENSION:  17", trailing blanks,
    # and ulysses16's " EOF" with a leading blank.
    tight = "NAME:t\nTYPE:TSP\nDIMENSION:3\nEDGE_WEIGHT_TYPE:EUC_2D\nNODE_COORD_SECTION\n"
    loose = "NAME :  t  \nTYPE : TSP \nDIMENSION:  3\nEDGE_WEIGHT_TYPE  :  EUC_2D   \n"
    loose += "NODE_COORD_SECTION  \n"
    nodes = "1 0 0\n2 3 4\n3 6 0\n"
    a = parse_tsplib(tight + nodes + "EOF\n")
    b = parse_tsplib(loose + "\n" + nodes.replace("\n", "   \n") + " EOF \n")
    assert a.name == b.name == "t"
    assert a.matrix.tolist() == b.matrix.tolist() == [[0, 5, 6], [5, 0, 5], [6, 5, 0]]


def test_name_hint_names_an_instance_without_name():
    text = "TYPE: ATSP\nDIMENSION: 2\nEDGE_WEIGHT_TYPE: EXPLICIT\nEDGE_WEIGHT_FORMAT: FULL_MATRIX\n"
    instance = parse_tsplib(text + "EDGE_WEIGHT_SECTION\n0 1 2 0\n", name_hint="pair")
    assert instance.name == "pair"
    assert instance.matrix.tolist() == [[0, 1], [2, 0]]


def test_instance_arrays_are_read_only_and_callers_arrays_untouched():
    instance = read_tsplib(TSPLIB / "gr17.tsp")
    with pytest.raises(ValueError):
        instance.matrix[0, 1] = 1
    mine = np.array([[0, 1], [1, 0]])
    built = TsplibInstance("two", "TSP", 2, "EXPLICIT", mine, None)
    assert mine.flags.writeable and not built.matrix.flags.writeable


# --- bad input ---------------------------------------------------------------------------

EUC = (
    "NAME: tiny\nTYPE: TSP\nDIMENSION: 3\nEDGE_WEIGHT_TYPE: EUC_2D\n"
    "NODE_COORD_SECTION\n1 0 0\n2 3 4\n3 6 0\nEOF\n"
)
UPPER = (
    "NAME: tri\nTYPE: TSP\nDIMENSION: 3\nEDGE_WEIGHT_TYPE: EXPLICIT\n"
    "EDGE_WEIGHT_FORMAT: UPPER_ROW\nEDGE_WEIGHT_SECTION\n5 6\n7\nEOF\n"
)
SEVENTEEN_UPPER = _explicit("UPPER_ROW", " ".join(["1"] * 130), n=17)

BAD_INSTANCES = [
    # (text, field, words the message must contain); all rules from TSPLIB95 §1.
    (EUC.replace("DIMENSION: 3\n", ""), "DIMENSION", "DIMENSION is missing"),
    (EUC.replace("DIMENSION: 3", "DIMENSION: three"), "DIMENSION", "'three' is not a whole"),
    (EUC.replace("DIMENSION: 3", "DIMENSION: 0"), "DIMENSION", "DIMENSION 0 is out of range"),
    (EUC.replace("DIMENSION: 3", "DIMENSION: 5001"), "DIMENSION", "5001 is out of range"),
    (
        EUC.replace("EUC_2D", "XRAY1"),
        "EDGE_WEIGHT_TYPE",
        "EDGE_WEIGHT_TYPE 'XRAY1' is not supported; expected one of EUC_2D, CEIL_2D, ATT, GEO, "
        "EXPLICIT",
    ),
    (EUC.replace("EUC_2D", "EUC_3D"), "EDGE_WEIGHT_TYPE", "'EUC_3D' is not supported"),
    (EUC.replace("EDGE_WEIGHT_TYPE: EUC_2D\n", ""), "EDGE_WEIGHT_TYPE", "is missing"),
    (EUC.replace("TYPE: TSP", "TYPE: CVRP"), "TYPE", "TYPE 'CVRP' is not supported"),
    (EUC.replace("TYPE: TSP\n", ""), "TYPE", "TYPE is missing"),
    (EUC.replace("DIMENSION: 3", "DIMENSION: 3\nDIMENSION: 4"), "DIMENSION", "appears twice"),
    (EUC.replace("NAME: tiny", "NAME: tiny\nFOO: bar"), "FOO", "'FOO' is not a TSPLIB95 keyword"),
    (EUC.replace("NAME: tiny", "hello there"), "line", "'hello there' is neither"),
    (
        EUC.replace("EUC_2D", "EUC_2D\nNODE_COORD_TYPE: THREED_COORDS"),
        "NODE_COORD_TYPE",
        "'THREED_COORDS' is not supported",
    ),
    (
        EUC.replace("EUC_2D", "EUC_2D\nEDGE_WEIGHT_FORMAT: FULL_MATRIX"),
        "EDGE_WEIGHT_FORMAT",
        "'FULL_MATRIX' does not go with EDGE_WEIGHT_TYPE EUC_2D",
    ),
    (EUC.split("NODE_COORD_SECTION")[0], "NODE_COORD_SECTION", "needs a NODE_COORD_SECTION"),
    (EUC.replace("3 6 0\n", ""), "NODE_COORD_SECTION", "has 2 nodes; DIMENSION is 3"),
    (EUC.replace("3 6 0", "3 6"), "NODE_COORD_SECTION", "has 2 fields; expected 'node x y'"),
    (EUC.replace("3 6 0", "4 6 0"), "NODE_COORD_SECTION", "node 4; DIMENSION 3 allows 1..3"),
    (EUC.replace("3 6 0", "2 6 0"), "NODE_COORD_SECTION", "gives node 2 a second time"),
    (EUC.replace("3 6 0", "x 6 0"), "NODE_COORD_SECTION", "node number 'x'"),
    (EUC.replace("3 6 0", "3 six 0"), "NODE_COORD_SECTION", "coordinate 'six'"),
    (EUC.replace("3 6 0", "3 nan 0"), "NODE_COORD_SECTION", "coordinate 'nan'"),
    (
        EUC.replace("EOF", "FIXED_EDGES_SECTION\n1 2\n-1\nEOF"),
        "FIXED_EDGES_SECTION",
        "FIXED_EDGES_SECTION is not supported",
    ),
    (
        EUC.replace("EOF", "NODE_COORD_SECTION\n1 0 0\nEOF"),
        "NODE_COORD_SECTION",
        "appears twice",
    ),
    (UPPER.replace("EDGE_WEIGHT_FORMAT: UPPER_ROW\n", ""), "EDGE_WEIGHT_FORMAT", "is missing"),
    (UPPER.replace("UPPER_ROW", "DIAGONAL"), "EDGE_WEIGHT_FORMAT", "'DIAGONAL' is not supp"),
    (UPPER.split("EDGE_WEIGHT_SECTION")[0], "EDGE_WEIGHT_SECTION", "needs an EDGE_WEIGHT_SEC"),
    (
        SEVENTEEN_UPPER,
        "EDGE_WEIGHT_SECTION",
        "EDGE_WEIGHT_SECTION has 130 numbers; UPPER_ROW for DIMENSION 17 needs 136",
    ),
    (UPPER.replace("5 6", "-5 6"), "EDGE_WEIGHT_SECTION", "node 1 to node 2 is -5; weights"),
    (UPPER.replace("5 6", "5 6.5"), "EDGE_WEIGHT_SECTION", "has '6.5'; expected an integer"),
    (UPPER.replace("5 6", "5 " + "9" * 20), "EDGE_WEIGHT_SECTION", "beyond the 64-bit"),
    (
        _explicit("FULL_MATRIX", "0 1 2 1 0 3 2 4 0", n=3),
        "TYPE",
        "from node 2 to node 3 is 3 and back is 4; use TYPE ATSP",
    ),
]


@pytest.mark.parametrize(("text", "field", "words"), BAD_INSTANCES)
def test_bad_instance_is_refused_with_field_and_value(text, field, words):
    with pytest.raises(InvalidInput) as caught:
        parse_tsplib(text)
    assert caught.value.field == field
    assert words in str(caught.value)


def test_read_tsplib_names_the_file_in_its_error(tmp_path):
    path = tmp_path / "broken.tsp"
    path.write_text(EUC.replace("EUC_2D", "XRAY1"))
    with pytest.raises(InvalidInput, match=r"broken\.tsp: EDGE_WEIGHT_TYPE 'XRAY1'") as caught:
        read_tsplib(path)
    assert (caught.value.field, caught.value.value) == ("EDGE_WEIGHT_TYPE", "XRAY1")


# --- tour files --------------------------------------------------------------------------

TOUR = "NAME : t.tour\nTYPE : TOUR\nDIMENSION : 3\nTOUR_SECTION\n1\n3\n2\n-1\nEOF\n"


def test_tour_section_may_spread_over_lines_and_comments_repeat():
    # TSPLIB95 §1.2; fixtures/tsptw/README.md: LKH-3 tour files carry two COMMENT lines.
    text = "NAME : t\nCOMMENT : a\nCOMMENT : b\nTYPE : TOUR\nTOUR_SECTION\n2 1\n4\n3 -1\nEOF\n"
    assert parse_tour(text) == [2, 1, 4, 3]
    assert parse_tour(TOUR) == [1, 3, 2]


BAD_TOURS = [
    # (text, field, words); TSPLIB95 §1.2: one tour, 1-based nodes, ended by -1.
    (TOUR.replace("-1\n", ""), "TOUR_SECTION", "does not end with -1"),
    (TOUR.replace("3\n2", "3\n3"), "TOUR_SECTION", "lists node 3 twice"),
    (TOUR.replace("1\n3", "0\n3"), "TOUR_SECTION", "lists node 0; node numbers start at 1"),
    (TOUR.replace("DIMENSION : 3", "DIMENSION : 4"), "DIMENSION", "lists 3 nodes; DIMENSION is 4"),
    (TOUR.replace("TYPE : TOUR", "TYPE : TSP"), "TYPE", "TYPE 'TSP' is not supported"),
    (TOUR.split("TOUR_SECTION")[0], "TOUR_SECTION", "has no TOUR_SECTION"),
    (TOUR.replace("-1", "-1\n3 2 1 -1"), "TOUR_SECTION", "only one tour per file"),
    (TOUR.replace("2\n-1", "2.0\n-1"), "TOUR_SECTION", "has '2.0'; expected an integer"),
    (TOUR.replace("EOF", "NODE_COORD_SECTION\nEOF"), "NODE_COORD_SECTION", "not supported"),
]


@pytest.mark.parametrize(("text", "field", "words"), BAD_TOURS)
def test_bad_tour_is_refused_with_field_and_value(text, field, words):
    with pytest.raises(InvalidInput) as caught:
        parse_tour(text)
    assert caught.value.field == field
    assert words in str(caught.value)


# --- tour_length ---------------------------------------------------------------------------

# Hand-written, asymmetric (no source): the tour 0->1->2->0 costs 1+1+1, 0->2->1->0 costs 9*3.
ONE_WAY = [[0, 1, 9], [9, 0, 1], [1, 9, 0]]


@pytest.mark.parametrize(("order", "length"), [([0, 1, 2], 3), ([0, 2, 1], 27), ([1, 2, 0], 3)])
def test_tour_length_follows_the_direction_of_travel(order, length):
    assert tour_length(ONE_WAY, order) == length
    assert isinstance(tour_length(ONE_WAY, order), int)


def test_tour_length_of_floats_and_of_subsets():
    assert tour_length(np.array([[0.0, 1.5], [2.5, 0.0]]), [0, 1]) == 4.0
    assert tour_length(ONE_WAY, [2, 0], allow_subset=True) == 10
    assert tour_length(ONE_WAY, [1], allow_subset=True) == 0


BAD_ORDERS = [
    ([[0, 1, 2]], [0], "matrix", "shape (1, 3); expected a square"),
    ([[0, float("nan")], [1, 0]], [0, 1], "matrix", "[0, 1] is nan"),
    ([["a", "b"], ["c", "d"]], [0, 1], "matrix", "expected numbers"),
    (ONE_WAY, [0, 1, 1], "order", "visits node 1 twice"),
    (ONE_WAY, [0, 1, 3], "order", "order[2] is node 3; expected 0..2"),
    (ONE_WAY, [0, 1.0, 2], "order", "order[1] is 1.0; expected an integer"),
    (ONE_WAY, [0, 2], "order", "visits 2 of 3 nodes; it misses 1"),
]


@pytest.mark.parametrize(("matrix", "order", "field", "words"), BAD_ORDERS)
def test_tour_length_refuses_bad_input(matrix, order, field, words):
    with pytest.raises(InvalidInput) as caught:
        tour_length(matrix, order)
    assert caught.value.field == field
    assert words in str(caught.value)


@st.composite
def _matrix_and_tour(draw):
    n = draw(st.integers(min_value=1, max_value=9))
    values = st.integers(min_value=0, max_value=10**9)
    matrix = [[0 if i == j else draw(values) for j in range(n)] for i in range(n)]
    return matrix, draw(st.permutations(range(n)))


@given(case=_matrix_and_tour(), shift=st.integers(min_value=0, max_value=8))
def test_closed_tour_length_does_not_depend_on_where_it_starts(case, shift):
    matrix, order = case
    k = shift % len(order)
    rotated = order[k:] + order[:k]
    assert tour_length(matrix, rotated) == tour_length(matrix, order)
    expected = sum(matrix[a][b] for a, b in zip(order, order[1:] + order[:1], strict=True))
    assert tour_length(matrix, order) == (expected if len(order) > 1 else 0)


@given(matrix=_symmetric_matrices(), data=st.data())
def test_symmetric_tour_length_does_not_depend_on_direction(matrix, data):
    order = data.draw(st.permutations(range(len(matrix))))
    assert tour_length(matrix, order[::-1]) == tour_length(matrix, order)
