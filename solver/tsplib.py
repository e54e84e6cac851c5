"""TSPLIB95 instance and tour files, read into exact integer distance matrices.

The file format and the distance functions are those of G. Reinelt, "TSPLIB95"
(documentation, Universität Heidelberg), for the library described in
G. Reinelt, "TSPLIB — A Traveling Salesman Problem Library", ORSA Journal on
Computing 3(4):376–384, 1991. Node numbers in files and in error messages are
1-based, as in TSPLIB; matrix rows and tour orders passed to `tour_length` are
0-based.
"""

from __future__ import annotations

import math
import operator
import os
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from solver.errors import InvalidInput

__all__ = [
    "EDGE_WEIGHT_FORMATS",
    "EDGE_WEIGHT_TYPES",
    "GEO_EARTH_RADIUS_KM",
    "GEO_PI",
    "MAX_DIMENSION",
    "TsplibInstance",
    "parse_tour",
    "parse_tsplib",
    "read_tour",
    "read_tsplib",
    "tour_length",
]

GEO_PI = 3.141592  # TSPLIB95 §2.4 prints this truncated value; math.pi misses the published optima
GEO_EARTH_RADIUS_KM = 6378.388  # TSPLIB95 §2.4 "RRR"; equatorial radius of Hayford 1924
# A dense int64 matrix of 5000 x 5000 is 200 MB; beyond that a laptop suffers and the
# exact solver has no chance anyway (common practice, no source).
MAX_DIMENSION = 5000

EDGE_WEIGHT_TYPES = ("EUC_2D", "CEIL_2D", "ATT", "GEO", "EXPLICIT")
# TSPLIB95 §1.1.7. Each column-wise layout of a symmetric matrix lists the same numbers in
# the same order as the row-wise layout of the other triangle, so it shares its reader.
_TRIANGLE_OF_FORMAT = {
    "UPPER_ROW": ("upper", 1),
    "LOWER_ROW": ("lower", -1),
    "UPPER_DIAG_ROW": ("upper", 0),
    "LOWER_DIAG_ROW": ("lower", 0),
    "UPPER_COL": ("lower", -1),
    "LOWER_COL": ("upper", 1),
    "UPPER_DIAG_COL": ("lower", 0),
    "LOWER_DIAG_COL": ("upper", 0),
}
EDGE_WEIGHT_FORMATS = ("FULL_MATRIX", *_TRIANGLE_OF_FORMAT)

_KINDS = ("TSP", "ATSP")
_HEADER_KEYWORDS = frozenset(
    {
        "NAME",
        "TYPE",
        "COMMENT",
        "DIMENSION",
        "CAPACITY",
        "EDGE_WEIGHT_TYPE",
        "EDGE_WEIGHT_FORMAT",
        "EDGE_DATA_FORMAT",
        "NODE_COORD_TYPE",
        "DISPLAY_DATA_TYPE",
    }
)
_INSTANCE_SECTIONS = frozenset(
    {"NODE_COORD_SECTION", "DISPLAY_DATA_SECTION", "EDGE_WEIGHT_SECTION", "TOUR_SECTION"}
)
_TOUR_SECTIONS = frozenset({"TOUR_SECTION"})
_TWO_D_NODE_COORD_TYPES = ("TWOD_COORDS", "NO_COORDS")
_DISPLAY_DATA_TYPES = ("COORD_DISPLAY", "TWOD_DISPLAY", "NO_DISPLAY")
_SECTION_LINE = re.compile(r"([A-Za-z_]+_SECTION)\s*:?")
_KEYWORD_LINE = re.compile(r"([A-Za-z_]+)\s*:\s*(.*)")
_TOUR_END = -1  # TSPLIB95 §1.2: a tour in TOUR_SECTION is terminated by -1


@dataclass(frozen=True, eq=False)
class TsplibInstance:
    """One TSPLIB instance with its distance matrix exactly as TSPLIB95 defines it.

    ``matrix`` is a read-only (n, n) int64 array with a zero diagonal (ATSP filler
    values removed); ``coords`` holds the file's node or display coordinates, as
    written (GEO ones in DDD.MM), for drawing only, or is None.
    """

    name: str
    kind: str
    dimension: int
    edge_weight_type: str
    matrix: np.ndarray
    coords: np.ndarray | None
    comment: str = ""

    def __post_init__(self) -> None:
        matrix = np.asarray(self.matrix)
        if matrix.shape != (self.dimension, self.dimension):
            raise InvalidInput(
                f"matrix has shape {matrix.shape}; DIMENSION {self.dimension} needs "
                f"({self.dimension}, {self.dimension})",
                field="matrix",
                value=matrix.shape,
            )
        if not np.issubdtype(matrix.dtype, np.integer):
            raise InvalidInput(
                f"matrix has dtype {matrix.dtype}; TSPLIB weights are integers",
                field="matrix",
                value=str(matrix.dtype),
            )
        object.__setattr__(self, "matrix", _frozen(matrix.astype(np.int64, copy=False)))
        if self.coords is not None:
            coords = np.asarray(self.coords, dtype=np.float64)
            if coords.shape != (self.dimension, 2):
                raise InvalidInput(
                    f"coords has shape {coords.shape}; DIMENSION {self.dimension} needs "
                    f"({self.dimension}, 2)",
                    field="coords",
                    value=coords.shape,
                )
            object.__setattr__(self, "coords", _frozen(coords))


def read_tsplib(source: str | os.PathLike) -> TsplibInstance:
    """Read a TSPLIB ``.tsp`` or ``.atsp`` file; see `parse_tsplib` for what is guaranteed."""
    path = Path(source)
    text = _read_text(path)
    try:
        return parse_tsplib(text, name_hint=path.stem)
    except InvalidInput as err:
        raise InvalidInput(f"{path}: {err}", field=err.field, value=err.value) from err


def parse_tsplib(text: str, *, name_hint: str = "") -> TsplibInstance:
    """Parse the text of a TSPLIB instance of TYPE TSP or ATSP.

    Guarantees the integer distances of TSPLIB95 §2 (EUC_2D, CEIL_2D, ATT, GEO with
    the degree truncated toward zero, EXPLICIT in every EDGE_WEIGHT_FORMAT of §1.1.7),
    a zero diagonal, no negative weight and, for TYPE TSP, a symmetric matrix. Anything
    else raises InvalidInput naming the keyword or section and the offending value.
    ``name_hint`` names the instance when the file has no NAME.
    """
    header, sections = _split(text, allowed_sections=_INSTANCE_SECTIONS)
    kind = _choice(header, "TYPE", _KINDS)
    dimension = _dimension(header)
    weight_type = _choice(header, "EDGE_WEIGHT_TYPE", EDGE_WEIGHT_TYPES)
    if "NODE_COORD_TYPE" in header:
        _choice(header, "NODE_COORD_TYPE", _TWO_D_NODE_COORD_TYPES)
    if "DISPLAY_DATA_TYPE" in header:
        _choice(header, "DISPLAY_DATA_TYPE", _DISPLAY_DATA_TYPES)

    node_coords = _coordinates(sections, "NODE_COORD_SECTION", dimension)
    display_coords = _coordinates(sections, "DISPLAY_DATA_SECTION", dimension)
    if weight_type == "EXPLICIT":
        weight_format = _choice(header, "EDGE_WEIGHT_FORMAT", EDGE_WEIGHT_FORMATS)
        if "EDGE_WEIGHT_SECTION" not in sections:
            raise InvalidInput(
                f"EDGE_WEIGHT_TYPE EXPLICIT needs an EDGE_WEIGHT_SECTION; the file has none "
                f"(sections found: {', '.join(sections) or 'none'})",
                field="EDGE_WEIGHT_SECTION",
                value=None,
            )
        numbers = _integers(sections["EDGE_WEIGHT_SECTION"], "EDGE_WEIGHT_SECTION")
        matrix = _explicit_matrix(numbers, weight_format, dimension)
    else:
        if header.get("EDGE_WEIGHT_FORMAT", "FUNCTION").upper() != "FUNCTION":
            raise InvalidInput(
                f"EDGE_WEIGHT_FORMAT {header['EDGE_WEIGHT_FORMAT']!r} does not go with "
                f"EDGE_WEIGHT_TYPE {weight_type}; expected FUNCTION or no EDGE_WEIGHT_FORMAT",
                field="EDGE_WEIGHT_FORMAT",
                value=header["EDGE_WEIGHT_FORMAT"],
            )
        if node_coords is None:
            raise InvalidInput(
                f"EDGE_WEIGHT_TYPE {weight_type} needs a NODE_COORD_SECTION; the file has none",
                field="NODE_COORD_SECTION",
                value=None,
            )
        matrix = _DISTANCE_FUNCTIONS[weight_type](node_coords)

    np.fill_diagonal(matrix, 0)
    _check_weights(matrix, kind=kind)
    matrix.setflags(write=False)
    coords = display_coords if display_coords is not None else node_coords
    if coords is not None:
        coords.setflags(write=False)
    return TsplibInstance(
        name=_instance_name(header.get("NAME", ""), name_hint),
        kind=kind,
        dimension=dimension,
        edge_weight_type=weight_type,
        matrix=matrix,
        coords=coords,
        comment=header.get("COMMENT", ""),
    )


def read_tour(source: str | os.PathLike) -> list[int]:
    """Read a TSPLIB tour file; see `parse_tour` for what is guaranteed."""
    path = Path(source)
    text = _read_text(path)
    try:
        return parse_tour(text)
    except InvalidInput as err:
        raise InvalidInput(f"{path}: {err}", field=err.field, value=err.value) from err


def parse_tour(text: str) -> list[int]:
    """Parse the text of a TSPLIB tour file (TSPLIB95 §1.2, TOUR_SECTION).

    Returns the 1-based node numbers of the single tour, without the -1 terminator.
    Guarantees each number is positive and appears once, and that their count equals
    DIMENSION when the file gives one; otherwise raises InvalidInput.
    """
    header, sections = _split(text, allowed_sections=_TOUR_SECTIONS)
    if "TYPE" in header:
        _choice(header, "TYPE", ("TOUR",))
    if "TOUR_SECTION" not in sections:
        raise InvalidInput("tour file has no TOUR_SECTION", field="TOUR_SECTION", value=None)
    numbers = _integers(sections["TOUR_SECTION"], "TOUR_SECTION").tolist()
    if _TOUR_END not in numbers:
        raise InvalidInput(
            f"TOUR_SECTION does not end with {_TOUR_END}; it ends with "
            f"{numbers[-1] if numbers else 'nothing'}",
            field="TOUR_SECTION",
            value=numbers[-1] if numbers else None,
        )
    end = numbers.index(_TOUR_END)
    tour, rest = numbers[:end], numbers[end + 1 :]
    if rest:
        raise InvalidInput(
            f"TOUR_SECTION has {len(rest)} numbers after the {_TOUR_END} that ends the first "
            f"tour (starting with {rest[0]}); only one tour per file is supported",
            field="TOUR_SECTION",
            value=rest[0],
        )
    bad = [node for node in tour if node < 1]
    if bad:
        raise InvalidInput(
            f"TOUR_SECTION lists node {bad[0]}; node numbers start at 1",
            field="TOUR_SECTION",
            value=bad[0],
        )
    seen: set[int] = set()
    for node in tour:
        if node in seen:
            raise InvalidInput(
                f"TOUR_SECTION lists node {node} twice", field="TOUR_SECTION", value=node
            )
        seen.add(node)
    if "DIMENSION" in header:
        dimension = _dimension(header)
        if len(tour) != dimension:
            raise InvalidInput(
                f"TOUR_SECTION lists {len(tour)} nodes; DIMENSION is {dimension}",
                field="DIMENSION",
                value=dimension,
            )
    return tour


def tour_length(
    matrix: np.ndarray | Sequence[Sequence[float]],
    order: Sequence[int],
    *,
    allow_subset: bool = False,
) -> int | float:
    """Length of the closed tour visiting ``order`` (0-based rows) and returning to its start.

    Guarantees the exact sum of the matrix entries along the tour, an int for an integer
    matrix. Each node may appear once; unless ``allow_subset``, every node must appear.
    """
    weights = np.asarray(matrix)
    if weights.ndim != 2 or weights.shape[0] != weights.shape[1]:
        raise InvalidInput(
            f"matrix has shape {weights.shape}; expected a square (n, n) array",
            field="matrix",
            value=weights.shape,
        )
    if weights.dtype == np.bool_ or not np.issubdtype(weights.dtype, np.number):
        raise InvalidInput(
            f"matrix has dtype {weights.dtype}; expected numbers",
            field="matrix",
            value=str(weights.dtype),
        )
    if not np.all(np.isfinite(weights)):
        row, col = np.argwhere(~np.isfinite(weights))[0]
        raise InvalidInput(
            f"matrix entry [{row}, {col}] is {weights[row, col]}; expected a finite number",
            field="matrix",
            value=weights[row, col],
        )
    nodes = _node_indices(order, weights.shape[0], allow_subset=allow_subset)
    integral = np.issubdtype(weights.dtype, np.integer)
    if len(nodes) < 2:
        return 0 if integral else 0.0
    visit = np.asarray(nodes)
    total = weights[visit, np.roll(visit, -1)].sum()
    return int(total) if integral else float(total)


def _node_indices(order: Sequence[int], n: int, *, allow_subset: bool) -> list[int]:
    nodes: list[int] = []
    seen: set[int] = set()
    for position, raw in enumerate(order):
        try:
            if isinstance(raw, bool | np.bool_):
                raise TypeError
            node = operator.index(raw)
        except TypeError:
            raise InvalidInput(
                f"order[{position}] is {raw!r}; expected an integer node index",
                field="order",
                value=raw,
            ) from None
        if not 0 <= node < n:
            raise InvalidInput(
                f"order[{position}] is node {node}; expected 0..{n - 1}",
                field="order",
                value=node,
            )
        if node in seen:
            raise InvalidInput(
                f"order visits node {node} twice (again at position {position})",
                field="order",
                value=node,
            )
        seen.add(node)
        nodes.append(node)
    if not allow_subset and len(nodes) != n:
        missing = sorted(set(range(n)) - seen)
        shown = ", ".join(map(str, missing[:10])) + (", ..." if len(missing) > 10 else "")
        raise InvalidInput(
            f"order visits {len(nodes)} of {n} nodes; it misses {shown}",
            field="order",
            value=missing,
        )
    return nodes


# --- reading the keyword/section structure --------------------------------------------


def _read_text(path: Path) -> str:
    data = path.read_bytes()
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        # Old TSPLIB comments carry Latin-1 umlauts; the numbers are ASCII either way.
        return data.decode("latin-1")


def _split(
    text: str, *, allowed_sections: frozenset[str]
) -> tuple[dict[str, str], dict[str, list[tuple[int, str]]]]:
    """Header keywords and the data lines (with line numbers) of each section."""
    header: dict[str, str] = {}
    sections: dict[str, list[tuple[int, str]]] = {}
    current: list[tuple[int, str]] | None = None
    for line_no, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line:
            continue
        if line.upper() == "EOF":
            break
        section = _SECTION_LINE.fullmatch(line)
        if section:
            name = section.group(1).upper()
            if name not in allowed_sections:
                raise InvalidInput(
                    f"line {line_no}: {name} is not supported; expected one of "
                    f"{', '.join(sorted(allowed_sections))}",
                    field=name,
                    value=line,
                )
            if name in sections:
                raise InvalidInput(f"line {line_no}: {name} appears twice", field=name, value=line)
            current = sections[name] = []
            continue
        keyword = _KEYWORD_LINE.fullmatch(line)
        if keyword:
            key, value = keyword.group(1).upper(), keyword.group(2).strip()
            if key not in _HEADER_KEYWORDS:
                raise InvalidInput(
                    f"line {line_no}: keyword {key!r} is not a TSPLIB95 keyword",
                    field=key,
                    value=value,
                )
            if key == "COMMENT" and key in header:
                header[key] += "\n" + value
            elif key in header:
                raise InvalidInput(
                    f"line {line_no}: {key} appears twice ({header[key]!r} and {value!r})",
                    field=key,
                    value=value,
                )
            else:
                header[key] = value
            current = None
            continue
        if current is None:
            raise InvalidInput(
                f"line {line_no} {line[:40]!r} is neither a 'KEYWORD : value' line nor "
                f"inside a data section",
                field="line",
                value=line,
            )
        current.append((line_no, line))
    return header, sections


def _choice(header: dict[str, str], key: str, allowed: Sequence[str]) -> str:
    if key not in header:
        raise InvalidInput(
            f"{key} is missing; expected one of {', '.join(allowed)}", field=key, value=None
        )
    value = header[key].upper()
    if value not in allowed:
        raise InvalidInput(
            f"{key} {header[key]!r} is not supported; expected one of {', '.join(allowed)}",
            field=key,
            value=header[key],
        )
    return value


def _dimension(header: dict[str, str]) -> int:
    if "DIMENSION" not in header:
        raise InvalidInput("DIMENSION is missing", field="DIMENSION", value=None)
    text = header["DIMENSION"]
    try:
        dimension = int(text)
    except ValueError:
        raise InvalidInput(
            f"DIMENSION {text!r} is not a whole number", field="DIMENSION", value=text
        ) from None
    if not 1 <= dimension <= MAX_DIMENSION:
        raise InvalidInput(
            f"DIMENSION {dimension} is out of range; expected 1..{MAX_DIMENSION}",
            field="DIMENSION",
            value=dimension,
        )
    return dimension


def _instance_name(name: str, name_hint: str) -> str:
    # ulysses16 and ulysses22 give their file name, suffix included, as NAME.
    for suffix in (".tsp", ".atsp"):
        if name.lower().endswith(suffix):
            name = name[: -len(suffix)]
    return name or name_hint


def _integers(lines: list[tuple[int, str]], section: str) -> np.ndarray:
    # Line breaks in EDGE_WEIGHT_SECTION and TOUR_SECTION carry no meaning (TSPLIB95 §1.1).
    numbers: list[int] = []
    for line_no, line in lines:
        for token in line.split():
            try:
                numbers.append(int(token))
            except ValueError:
                raise InvalidInput(
                    f"{section} line {line_no} has {token!r}; expected an integer",
                    field=section,
                    value=token,
                ) from None
    try:
        return np.array(numbers, dtype=np.int64)
    except OverflowError:
        huge = next(x for x in numbers if not -(2**63) <= x < 2**63)
        raise InvalidInput(
            f"{section} has {huge}, beyond the 64-bit integer range", field=section, value=huge
        ) from None


def _coordinates(
    sections: dict[str, list[tuple[int, str]]], section: str, dimension: int
) -> np.ndarray | None:
    if section not in sections:
        return None
    lines = sections[section]
    coords = np.full((dimension, 2), np.nan)
    seen = np.zeros(dimension, dtype=bool)
    for line_no, line in lines:
        tokens = line.split()
        if len(tokens) != 3:
            raise InvalidInput(
                f"{section} line {line_no} {line!r} has {len(tokens)} fields; expected 'node x y'",
                field=section,
                value=line,
            )
        try:
            node = int(tokens[0])
        except ValueError:
            raise InvalidInput(
                f"{section} line {line_no} has node number {tokens[0]!r}; expected an integer",
                field=section,
                value=tokens[0],
            ) from None
        if not 1 <= node <= dimension:
            raise InvalidInput(
                f"{section} line {line_no} has node {node}; DIMENSION {dimension} allows "
                f"1..{dimension}",
                field=section,
                value=node,
            )
        if seen[node - 1]:
            raise InvalidInput(
                f"{section} line {line_no} gives node {node} a second time",
                field=section,
                value=node,
            )
        for axis, token in enumerate(tokens[1:]):
            try:
                value = float(token)
            except ValueError:
                value = math.nan
            if not math.isfinite(value):
                raise InvalidInput(
                    f"{section} line {line_no} gives node {node} the coordinate {token!r}; "
                    f"expected a finite number",
                    field=section,
                    value=token,
                )
            coords[node - 1, axis] = value
        seen[node - 1] = True
    if len(lines) != dimension:
        missing = int(np.flatnonzero(~seen)[0]) + 1
        raise InvalidInput(
            f"{section} has {len(lines)} nodes; DIMENSION is {dimension} (node {missing} "
            f"is missing)",
            field=section,
            value=len(lines),
        )
    return coords


# --- EXPLICIT weights ------------------------------------------------------------------


def _explicit_matrix(numbers: np.ndarray, weight_format: str, dimension: int) -> np.ndarray:
    n = dimension
    if weight_format == "FULL_MATRIX":
        needed = n * n
    else:
        triangle, offset = _TRIANGLE_OF_FORMAT[weight_format]
        needed = n * (n - 1) // 2 if offset else n * (n + 1) // 2
    if numbers.size != needed:
        raise InvalidInput(
            f"EDGE_WEIGHT_SECTION has {numbers.size} numbers; {weight_format} for "
            f"DIMENSION {n} needs {needed}",
            field="EDGE_WEIGHT_SECTION",
            value=numbers.size,
        )
    if weight_format == "FULL_MATRIX":
        return numbers.reshape(n, n).copy()
    matrix = np.zeros((n, n), dtype=np.int64)
    # triu/tril_indices enumerate row by row, the order TSPLIB95 §1.1.7 lists the entries.
    indices = np.triu_indices if triangle == "upper" else np.tril_indices
    rows, cols = indices(n, k=offset)
    matrix[rows, cols] = numbers
    matrix[cols, rows] = numbers
    return matrix


def _check_weights(matrix: np.ndarray, *, kind: str) -> None:
    negative = np.argwhere(matrix < 0)
    if negative.size:
        i, j = negative[0]
        raise InvalidInput(
            f"the weight from node {i + 1} to node {j + 1} is {matrix[i, j]}; weights must be >= 0",
            field="EDGE_WEIGHT_SECTION",
            value=int(matrix[i, j]),
        )
    if kind == "TSP":
        asymmetric = np.argwhere(matrix != matrix.T)
        if asymmetric.size:
            i, j = asymmetric[0]
            raise InvalidInput(
                f"TYPE TSP needs a symmetric matrix, but the weight from node {i + 1} to "
                f"node {j + 1} is {matrix[i, j]} and back is {matrix[j, i]}; use TYPE ATSP",
                field="TYPE",
                value=kind,
            )


# --- distance functions (TSPLIB95 §2), vectorised over all pairs -------------------------


def _nint(x: np.ndarray) -> np.ndarray:
    # TSPLIB95 §2: nint(x) = (int)(x + 0.5); the C cast truncates toward zero.
    return np.trunc(x + 0.5)


def _differences(coords: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    x, y = coords[:, 0], coords[:, 1]
    return x[:, None] - x[None, :], y[:, None] - y[None, :]


def _euc_2d(coords: np.ndarray) -> np.ndarray:
    # sqrt(dx*dx + dy*dy), not hypot, so every bit matches the C reference code.
    dx, dy = _differences(coords)
    return _nint(np.sqrt(dx * dx + dy * dy)).astype(np.int64)


def _ceil_2d(coords: np.ndarray) -> np.ndarray:
    dx, dy = _differences(coords)
    return np.ceil(np.sqrt(dx * dx + dy * dy)).astype(np.int64)


def _att(coords: np.ndarray) -> np.ndarray:
    dx, dy = _differences(coords)
    r = np.sqrt((dx * dx + dy * dy) / 10.0)
    t = _nint(r)
    return np.where(t < r, t + 1.0, t).astype(np.int64)


def _geo_radians(ddd_mm: np.ndarray) -> np.ndarray:
    # DDD.MM is degrees and minutes; truncation toward zero (C's (int)x), not nint and not
    # floor, is what reproduces the published optima (see fixtures/tsplib/README.md).
    degrees = np.trunc(ddd_mm)
    minutes = ddd_mm - degrees
    return GEO_PI * (degrees + 5.0 * minutes / 3.0) / 180.0


def _geo(coords: np.ndarray) -> np.ndarray:
    latitude, longitude = _geo_radians(coords[:, 0]), _geo_radians(coords[:, 1])
    q1 = np.cos(longitude[:, None] - longitude[None, :])
    q2 = np.cos(latitude[:, None] - latitude[None, :])
    q3 = np.cos(latitude[:, None] + latitude[None, :])
    # Rounding can push the cosine a hair past 1 for coincident points; acos would give NaN.
    cosine = np.clip(0.5 * ((1.0 + q1) * q2 - (1.0 - q1) * q3), -1.0, 1.0)
    return np.trunc(GEO_EARTH_RADIUS_KM * np.arccos(cosine) + 1.0).astype(np.int64)


_DISTANCE_FUNCTIONS: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "EUC_2D": _euc_2d,
    "CEIL_2D": _ceil_2d,
    "ATT": _att,
    "GEO": _geo,
}


def _frozen(array: np.ndarray) -> np.ndarray:
    """The array itself if already read-only, else a read-only copy (the caller's stays theirs)."""
    if array.flags.writeable:
        array = array.copy()
        array.setflags(write=False)
    return array
