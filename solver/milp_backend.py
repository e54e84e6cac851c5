"""The one place that picks and configures a MILP solver, and reads its verdict honestly.

Two routes are used: PuLP (the modelling layer, with CBC bundled or HiGHS
in-process) for compact models, and HiGHS through ``highspy`` directly where
a cut loop adds rows to a live model (PuLP would rebuild and re-write the whole
model at every round).

Pitfalls handled here (measured on this kind of machine):
- PuLP reports status "Optimal" when a time limit stopped the solver with an
  incumbent; only ``sol_status == LpSolutionOptimal`` means proven.
- HiGHS's default relative MIP gap (1e-4) stops short of the optimum and still
  says "optimal"; proof needs the gaps at zero (or below the cost unit).
"""

from __future__ import annotations

import contextlib
import os
import sys
from dataclasses import dataclass

from .errors import InvalidInput, SolverUnavailable

__all__ = [
    "BACKENDS",
    "MilpVerdict",
    "pulp_solver",
    "pulp_verdict",
    "new_highs",
    "proof_gaps",
    "stop_highs_when",
]

BACKENDS = ("highs", "cbc")


@dataclass(frozen=True)
class MilpVerdict:
    """What a MILP run established: proven, feasible but unproven, infeasible, or nothing."""

    proven: bool
    has_solution: bool
    infeasible: bool
    status: str


def proof_gaps(*, integral_costs: bool) -> tuple[float, float]:
    """(relative, absolute) MIP gaps under which "optimal" means proven.

    With integer costs every loop length is an integer, so an absolute gap just
    under 1 already proves optimality and spares the solver the last bound moves.
    """
    return 0.0, (1.0 - 1e-6) if integral_costs else 1e-9


def pulp_solver(*, backend: str = "highs", time_limit_s: float, integral_costs: bool = False):
    """A configured PuLP solver object with proof-grade gaps and a time limit."""
    import pulp

    rel_gap, abs_gap = proof_gaps(integral_costs=integral_costs)
    time_limit_s = max(0.01, float(time_limit_s))
    if backend == "highs":
        new_highs()  # HiGHS prints its banner once per process: let it go to /dev/null here
        solver = pulp.HiGHS(
            msg=False, timeLimit=time_limit_s, gapRel=rel_gap, gapAbs=abs_gap, threads=1
        )
    elif backend == "cbc":
        solver = pulp.PULP_CBC_CMD(
            msg=False, timeLimit=time_limit_s, gapRel=rel_gap, gapAbs=abs_gap, threads=1
        )
    else:
        raise InvalidInput(
            f"backend {backend!r} is not known; expected one of {', '.join(BACKENDS)}",
            field="backend",
            value=backend,
        )
    if not solver.available():
        raise SolverUnavailable(f"the {backend} MILP solver is not available to PuLP")
    return solver


def pulp_verdict(problem) -> MilpVerdict:
    """Read a solved PuLP problem's status without trusting the word "Optimal" alone."""
    import pulp

    sol_status = problem.sol_status
    status = pulp.LpStatus.get(problem.status, str(problem.status))
    return MilpVerdict(
        proven=sol_status == pulp.LpSolutionOptimal,
        has_solution=sol_status in (pulp.LpSolutionOptimal, pulp.LpSolutionIntegerFeasible),
        infeasible=sol_status == pulp.LpSolutionInfeasible or problem.status == -1,
        status=status,
    )


def new_highs(*, time_limit_s: float | None = None):
    """A silent in-process HiGHS instance (single thread; its start-up banner suppressed)."""
    try:
        import highspy
    except ImportError as exc:  # pragma: no cover - highspy is a declared dependency
        raise SolverUnavailable("highspy is not installed") from exc
    with _stdout_silenced():
        highs = highspy.Highs()
    highs.setOptionValue("output_flag", False)
    highs.setOptionValue("threads", 1)
    if time_limit_s is not None:
        highs.setOptionValue("time_limit", max(0.01, float(time_limit_s)))
    return highs


def stop_highs_when(highs, check) -> None:
    """Make ``highs`` stop its run (MIP search and simplex alike) once ``check()`` is true.

    HiGHS checks its own time limit only now and then (on set-partitioning models it
    was measured running 2-14 s past it); its interrupt callbacks come far more often.
    A run stopped this way reports an interrupted status, never "optimal".
    """
    import highspy

    kinds = highspy.cb.HighsCallbackType
    watched = (kinds.kCallbackMipInterrupt, kinds.kCallbackSimplexInterrupt,
               kinds.kCallbackIpmInterrupt)

    def on_event(kind, message, data_out, data_in, user_data) -> None:
        if kind in watched:
            data_in.user_interrupt = bool(check())

    highs.setCallback(on_event, None)
    for kind in watched:
        highs.startCallback(kind)


@contextlib.contextmanager
def _stdout_silenced():
    """HiGHS prints a banner on its first construction, at file-descriptor level."""
    try:
        fd = sys.stdout.fileno()
    except (AttributeError, OSError, ValueError):
        yield
        return
    sys.stdout.flush()
    saved = os.dup(fd)
    try:
        with open(os.devnull, "wb") as devnull:
            os.dup2(devnull.fileno(), fd)
            yield
    finally:
        os.dup2(saved, fd)
        os.close(saved)
