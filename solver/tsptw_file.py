"""Travelling-salesman-with-time-windows instances in the plain whitespace format.

The format is the one of the Dumas et al. (1995) benchmark as collected by
López-Ibáñez & Blum (2010): the node count N, the N x N travel-time matrix, then
one ``ready due`` pair per node. Node 0 is the depot (the rep's home); nodes are
0-based, as the file's rows are, in every message. Tour files for these instances
are TSPLIB tour files: read them with `solver.tsplib.read_tour`.
"""

from __future__ import annotations

import operator
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from solver.errors import InvalidInput

__all__ = ["TsptwInstance", "evaluate_tsptw_tour", "looks_like_tsptw", "parse_tsptw", "read_tsptw"]

DEPOT = 0  # the format puts the depot on the first row
_INTEGER = re.compile(r"[+-]?[0-9]+")


@dataclass(frozen=True, eq=False)
class TsptwInstance:
    """A time-window instance: read-only int64 arrays, node 0 the depot.

    ``matrix[i, j]`` is the travel time from i to j (service already folded in);
    ``ready[i]``/``due[i]`` bound the start of the visit to i; ``due[0]`` is the latest
    return home.
    """

    name: str
    matrix: np.ndarray
    ready: np.ndarray
    due: np.ndarray

    def __post_init__(self) -> None:
        n = len(self.ready)
        for field, array, shape in (
            ("matrix", self.matrix, (n, n)),
            ("ready", self.ready, (n,)),
            ("due", self.due, (n,)),
        ):
            values = np.asarray(array)
            if values.shape != shape or not np.issubdtype(values.dtype, np.integer):
                raise InvalidInput(
                    f"{field} has shape {values.shape} and dtype {values.dtype}; expected "
                    f"integers of shape {shape}",
                    field=field,
                    value=values.shape,
                )
            object.__setattr__(self, field, _frozen(values.astype(np.int64, copy=False)))


def read_tsptw(source: str | os.PathLike) -> TsptwInstance:
    """Read a TSPTW ``.txt`` file, named after the file; see `parse_tsptw`."""
    path = Path(source)
    try:
        return parse_tsptw(path.read_text(encoding="ascii"), name=path.stem)
    except UnicodeDecodeError as err:
        raise InvalidInput(
            f"{path}: byte {err.start} is not ASCII; a TSPTW file holds only numbers",
            field="file",
            value=str(path),
        ) from None
    except InvalidInput as err:
        raise InvalidInput(f"{path}: {err}", field=err.field, value=err.value) from err


def parse_tsptw(text: str, *, name: str = "") -> TsptwInstance:
    """Parse the whitespace-separated integers of a TSPTW instance.

    Guarantees an (N, N) matrix of non-negative travel times and, for each node,
    0 <= ready <= due; line breaks and blank padding carry no meaning. Anything
    else raises InvalidInput naming the entry (matrix row/column, or node) and its value.
    """
    tokens = text.split()
    if not tokens:
        raise InvalidInput(
            "TSPTW text is empty; expected the node count N first", field="N", value=""
        )
    n = _integer(tokens[0], field="N", where="N")
    if n < 1:
        raise InvalidInput(f"N is {n}; expected at least 1 (the depot)", field="N", value=n)
    needed = 1 + n * n + 2 * n
    if len(tokens) != needed:
        raise InvalidInput(
            f"TSPTW text has {len(tokens)} numbers; N = {n} needs {needed} (N, the "
            f"{n} x {n} travel times, then {n} 'ready due' pairs)",
            field="N",
            value=n,
        )
    values = [_integer(token, *_position(k, n)) for k, token in enumerate(tokens[1:], start=1)]
    matrix = np.array(values[: n * n], dtype=np.int64).reshape(n, n)
    windows = np.array(values[n * n :], dtype=np.int64).reshape(n, 2)
    ready, due = windows[:, 0].copy(), windows[:, 1].copy()
    _check(matrix, ready, due)
    for array in (matrix, ready, due):
        array.setflags(write=False)
    return TsptwInstance(name=name, matrix=matrix, ready=ready, due=due)


def looks_like_tsptw(text: str) -> bool:
    """True if ``text`` has the shape of a TSPTW file: N alone on the first line, then
    exactly N*N + 2N more integers. Says nothing about whether the values are valid."""
    tokens = text.split()
    if not tokens or not _INTEGER.fullmatch(tokens[0]):
        return False
    first_line = text.lstrip().splitlines()[0].split()
    n = int(tokens[0])
    return (
        first_line == [tokens[0]]
        and n >= 1
        and len(tokens) == 1 + n * n + 2 * n
        and all(_INTEGER.fullmatch(token) for token in tokens)
    )


def evaluate_tsptw_tour(instance: TsptwInstance, order: Sequence[int]) -> tuple[bool, int]:
    """Simulate the closed tour ``order`` (0-based, starting at the depot 0) and return
    (feasible, total travel time including the leg back home).

    Implements the travel-time convention of Dumas et al. (1995) as tabulated by
    López-Ibáñez & Blum (2010): leave home at ``ready[0]``; arriving before ``ready``
    means waiting; arriving after ``due`` is infeasible; the return must come no later
    than ``due[0]``. The total counts travel only, never waiting, and is returned even
    when the tour is infeasible.
    """
    nodes = _tour_nodes(order, len(instance.ready))
    matrix = instance.matrix
    clock = int(instance.ready[DEPOT])
    travel = 0
    feasible = True
    for here, there in zip(nodes, nodes[1:] + [DEPOT], strict=True):
        leg = int(matrix[here, there])
        travel += leg
        clock += leg
        if clock > instance.due[there]:
            feasible = False
        clock = max(clock, int(instance.ready[there]))
    return feasible, travel


def _tour_nodes(order: Sequence[int], n: int) -> list[int]:
    nodes: list[int] = []
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
        nodes.append(node)
    if not nodes or nodes[0] != DEPOT:
        first = nodes[0] if nodes else None
        raise InvalidInput(
            f"order starts with {first}; a tour starts at the depot {DEPOT}",
            field="order",
            value=first,
        )
    seen: set[int] = set()
    for position, node in enumerate(nodes):
        if node in seen:
            hint = " (the return home is implied)" if node == DEPOT else ""
            raise InvalidInput(
                f"order visits node {node} twice (again at position {position}){hint}",
                field="order",
                value=node,
            )
        seen.add(node)
    if len(nodes) != n:
        missing = sorted(set(range(n)) - seen)
        shown = ", ".join(map(str, missing[:10])) + (", ..." if len(missing) > 10 else "")
        raise InvalidInput(
            f"order visits {len(nodes)} of {n} nodes; it misses {shown}",
            field="order",
            value=missing,
        )
    return nodes


def _position(k: int, n: int) -> tuple[str, str]:
    """The field of the k-th number of the file (0 is N) and where a reader finds it."""
    if k <= n * n:
        row, column = divmod(k - 1, n)
        return "matrix", f"matrix row {row} column {column}"
    node, which = divmod(k - 1 - n * n, 2)
    field = "due" if which else "ready"
    return field, f"{field} of node {node}"


def _integer(token: str, field: str, where: str) -> int:
    if not _INTEGER.fullmatch(token):
        raise InvalidInput(f"{where} is {token!r}; expected an integer", field=field, value=token)
    return int(token)


def _check(matrix: np.ndarray, ready: np.ndarray, due: np.ndarray) -> None:
    negative = np.argwhere(matrix < 0)
    if negative.size:
        i, j = negative[0]
        raise InvalidInput(
            f"travel time from node {i} to node {j} is {matrix[i, j]}; expected >= 0",
            field="matrix",
            value=int(matrix[i, j]),
        )
    for label, values in (("ready", ready), ("due", due)):
        bad = np.flatnonzero(values < 0)
        if bad.size:
            node = int(bad[0])
            raise InvalidInput(
                f"node {node} has {label} {values[node]}; expected >= 0",
                field=label,
                value=int(values[node]),
            )
    crossed = np.flatnonzero(ready > due)
    if crossed.size:
        node = int(crossed[0])
        raise InvalidInput(
            f"node {node} has ready {ready[node]} after due {due[node]}; expected ready <= due",
            field="ready",
            value=int(ready[node]),
        )


def _frozen(array: np.ndarray) -> np.ndarray:
    if array.flags.writeable:
        array = array.copy()
        array.setflags(write=False)
    return array
