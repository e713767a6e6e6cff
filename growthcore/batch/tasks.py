"""The unit of batch work: one form fitted to a chunk of series, run the same way by every engine.

A task and its output are plain picklable data (series, ids, numbers); the model form travels by
its id and is looked up again where the task runs, because forms hold functions.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace

from growthcore.batch.problems import prepare
from growthcore.batch.vectorised import fit_vectorised
from growthcore.budget import BudgetExceeded
from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.result import FitResult, failed
from growthcore.models.catalogue import get_form

#: Where a result came from: the vectorised solver or the single-series fit.
VECTORISED = "vectorised"
SINGLE = "single"


@dataclass(frozen=True)
class Task:
    """Fit ``model`` by ``method`` to ``series`` (positions ``first``.. in the batch)."""

    model: str
    method: str
    error: str
    first: int
    series: tuple[Series, ...]
    terms: tuple[str, ...] = ()
    fixed: Mapping[str, float] = field(default_factory=dict)
    vectorised: bool = True


@dataclass(frozen=True)
class TaskOutput:
    """Results in the order of the task's series, without their form (re-attached by the caller)."""

    model: str
    first: int
    results: tuple[FitResult, ...]
    paths: tuple[str, ...]


def _single(series: Series, task: Task) -> FitResult:
    """The single-series fit; an unexpected numerical error becomes a failed row, not a stop."""
    try:
        return fit(series, task.model, method=task.method, error=task.error, fixed=task.fixed or None,
                   terms=task.terms, profile=False)
    except BudgetExceeded:
        raise  # out of time stops the whole batch, not one series
    except Exception as exc:  # noqa: BLE001 - one bad series must never stop the batch
        return failed(task.model, task.method, task.error, f"fit stopped: {type(exc).__name__}: {exc}")


def run_task(task: Task) -> TaskOutput:
    """Fit the task's series: vectorised where the trajectory method allows, singly otherwise."""
    results: list[FitResult | None] = [None] * len(task.series)
    paths = [SINGLE] * len(task.series)
    if task.vectorised and task.method == "trajectory":
        try:
            form = get_form(task.model, terms=task.terms)
            preps = [prepare(s, form, model=form.id, error=task.error, fixed=task.fixed) for s in task.series]
            ready = [j for j, p in enumerate(preps) if p is not None]
            solved = fit_vectorised(form, [preps[j] for j in ready], error=task.error, fixed=task.fixed)  # type: ignore[misc]
            for j, r in zip(ready, solved, strict=True):
                if r is not None:
                    results[j], paths[j] = r, VECTORISED
        except BudgetExceeded:
            raise
        except (FloatingPointError, OverflowError, ZeroDivisionError, ValueError, ArithmeticError,
                IndexError, TypeError, KeyError):
            pass  # the whole chunk falls back to single fits, which report their own failures
    for j, s in enumerate(task.series):
        if results[j] is None:
            results[j] = _single(s, task)
    stripped = tuple(replace(r, form=None) for r in results if r is not None)
    return TaskOutput(task.model, task.first, stripped, tuple(paths))
