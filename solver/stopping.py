"""Calling a solve off from another thread: every time-limit check also reads a stop signal.

A solve's loops check their deadline; ``past`` and ``left`` are those checks, and
they also answer "time is up" once the signal set by :func:`stop_when` says the
solve was called off (the web app's cancelled or superseded jobs). The solve
then winds down the way it does at its time limit, within a fraction of a second,
and frees its worker. The signal lives in a context variable, so each thread
(each job) has its own.
"""

from __future__ import annotations

import contextlib
import time
from collections.abc import Callable, Iterator
from contextvars import ContextVar

__all__ = ["stop_when", "called_off", "past", "left"]

_signal: ContextVar[Callable[[], bool] | None] = ContextVar("rondo_stop_signal", default=None)


@contextlib.contextmanager
def stop_when(check: Callable[[], bool]) -> Iterator[None]:
    """Solves run inside this block stop early once ``check()`` is true."""
    token = _signal.set(check)
    try:
        yield
    finally:
        _signal.reset(token)


def called_off() -> bool:
    check = _signal.get()
    return check is not None and bool(check())


def past(deadline: float) -> bool:
    """Whether the solve must stop now: its deadline passed, or it was called off."""
    return time.perf_counter() > deadline or called_off()


def left(deadline: float) -> float:
    """Seconds left before ``deadline`` (negative once past; 0 when called off)."""
    return 0.0 if called_off() else deadline - time.perf_counter()
