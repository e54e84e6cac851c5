"""A solved loop together with what was proved about it."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

__all__ = ["LoopResult", "relative_gap"]


def relative_gap(length: float, lower_bound: float) -> float:
    """(length − bound) / length, the share by which the loop may exceed the optimum."""
    if length <= 0 or not math.isfinite(lower_bound):
        return 0.0 if length <= 0 else 1.0
    return max(0.0, (length - lower_bound) / length)


@dataclass(frozen=True)
class LoopResult:
    """A closed loop from home (node 0) through every stop, with its proof figures.

    ``order`` starts at home and does not repeat it at the end. When
    ``proven_optimal`` is true, ``lower_bound == length`` and ``gap == 0``;
    otherwise ``lower_bound`` is a valid bound on the optimum and ``gap`` says how
    far above the optimum the loop may be at most.
    """

    order: tuple[int, ...]
    length: float
    proven_optimal: bool
    lower_bound: float
    gap: float
    seconds: float
    method: str
    stats: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))

    @classmethod
    def make(
        cls,
        order,
        length: float,
        *,
        proven: bool,
        lower_bound: float,
        seconds: float,
        method: str,
        **stats: Any,
    ) -> LoopResult:
        bound = float(length) if proven else min(float(lower_bound), float(length))
        return cls(
            order=tuple(int(v) for v in order),
            length=float(length),
            proven_optimal=bool(proven),
            lower_bound=bound,
            gap=0.0 if proven else relative_gap(float(length), bound),
            seconds=float(seconds),
            method=method,
            stats=MappingProxyType(dict(stats)),
        )

    def as_dict(self) -> dict[str, Any]:
        """Plain JSON-ready form."""
        return {
            "order": list(self.order),
            "length": self.length,
            "proven_optimal": self.proven_optimal,
            "lower_bound": self.lower_bound,
            "gap": self.gap,
            "seconds": self.seconds,
            "method": self.method,
            "stats": dict(self.stats),
        }
