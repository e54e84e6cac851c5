"""The solver's exceptions, in one place.

Each derives from a builtin so callers that do not know Rondo still catch it,
and each message names the offending field and value.
"""

from __future__ import annotations

__all__ = ["SolverError", "InvalidInput", "Infeasible", "SolverUnavailable"]


class SolverError(Exception):
    """Base class of everything the solver package raises on purpose."""


class InvalidInput(SolverError, ValueError):
    """Input that cannot be planned with: the message names the field and the value."""

    def __init__(self, message: str, *, field: str | None = None, value: object = None):
        super().__init__(message)
        self.field = field
        self.value = value


class Infeasible(SolverError):
    """No plan keeps every rule; ``explanation`` says why in the rep's words."""

    def __init__(self, message: str, *, explanation: object = None):
        super().__init__(message)
        self.explanation = explanation


class SolverUnavailable(SolverError, RuntimeError):
    """The requested MILP back-end is not installed or failed to start."""
