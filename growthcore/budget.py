"""A cooperative time budget: work checks the clock at its loop points and stops when it runs out.

A caller (the server, for each request) opens :func:`time_budget`; the engine calls
:func:`check_budget` where its work grows with the input (every residual evaluation of a solver,
every step of a simulation, every resample). Without a budget, as on the command line, a check is
one context-variable read. The budget lives in a :class:`contextvars.ContextVar`, so each thread
(each request of a threaded server) has its own and none leaks into another.

Running out raises :class:`BudgetExceeded`, a :class:`GrowthcoreInputError`: it stops the whole
request (fits that report numerical trouble as a status re-raise it) and every handler of input
errors shows it as a message.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from time import monotonic

from growthcore.errors import GrowthcoreInputError


class BudgetExceeded(GrowthcoreInputError):
    """The time budget of the work in progress ran out; ``what`` names that work."""

    def __init__(self, what: str, seconds: float) -> None:
        super().__init__(f"{what} ran out of its time budget of {seconds:g} s and was stopped")
        self.what = what
        self.seconds = seconds

    def __reduce__(self) -> tuple[type, tuple[str, float]]:  # crosses to and from worker processes
        return (type(self), (self.what, self.seconds))


class Budget:
    """One open budget: its deadline on the monotonic clock, and whether a check found it spent."""

    __slots__ = ("seconds", "what", "deadline", "outer", "exceeded")

    def __init__(self, seconds: float, what: str, deadline: float, outer: Budget | None) -> None:
        self.seconds = seconds
        self.what = what
        self.deadline = deadline
        self.outer = outer
        self.exceeded = False


_CURRENT: ContextVar[Budget | None] = ContextVar("growthcore_time_budget", default=None)


def check_budget() -> None:
    """Raise :class:`BudgetExceeded` if the current budget has run out; nothing without one."""
    budget = _CURRENT.get()
    if budget is not None and monotonic() > budget.deadline:
        budget.exceeded = True
        raise BudgetExceeded(budget.what, budget.seconds)


def current_budget() -> Budget | None:
    """The budget in force in this context, if any."""
    return _CURRENT.get()


@contextmanager
def time_budget(seconds: float, what: str) -> Iterator[Budget]:
    """Work inside the block may take ``seconds``; ``what`` names it in the message.

    Inside another budget the tighter of the two holds: an outer budget that ends first stays in
    force (and is the one yielded and named when it runs out).
    """
    if not seconds > 0:
        raise GrowthcoreInputError(f"a time budget must be a positive number of seconds; got {seconds!r}")
    outer = _CURRENT.get()
    deadline = monotonic() + seconds
    if outer is not None and outer.deadline <= deadline:
        yield outer
        return
    budget = Budget(float(seconds), what, deadline, outer)
    token = _CURRENT.set(budget)
    try:
        yield budget
    finally:
        _CURRENT.reset(token)


@contextmanager
def budget_paused() -> Iterator[None]:
    """No budget inside the block, and its time not counted: for waiting on work that has a budget
    of its own (a job in a worker process) or on a bound that says when it gives up (a free slot)."""
    budget = _CURRENT.get()
    if budget is None:
        yield
        return
    started = monotonic()
    token = _CURRENT.set(None)
    try:
        yield
    finally:
        _CURRENT.reset(token)
        waited = monotonic() - started
        link: Budget | None = budget
        while link is not None:
            link.deadline += waited
            link = link.outer


__all__ = ["Budget", "BudgetExceeded", "budget_paused", "check_budget", "current_budget", "time_budget"]
