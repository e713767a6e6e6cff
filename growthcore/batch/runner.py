"""Fitting every series of a batch with every chosen form, on this machine or on Dask.

Work is cut into tasks of one form and a fixed-size chunk of series, whatever the engine, so the
local and Dask runs do the same arithmetic and give identical results.
"""

from __future__ import annotations

import math
import multiprocessing
import os
from collections.abc import Callable, Iterable, Mapping, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, replace
from typing import Any

from growthcore.batch.dataset import BatchData, from_series
from growthcore.batch.tasks import Task, TaskOutput, run_task
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.result import ERROR_MODELS, METHODS, FitResult
from growthcore.models.base import ModelForm
from growthcore.models.catalogue import get_form

ENGINES: tuple[str, ...] = ("local", "dask")
#: Series per task: large enough to vectorise well, small enough to balance two or more workers.
DEFAULT_CHUNK = 128
Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class SeriesFit:
    """One form fitted to one series; ``path`` says whether the vectorised or the single fit made it."""

    series: str
    group: str | None
    result: FitResult
    path: str


@dataclass(frozen=True)
class BatchResult:
    """Every (series, form) fit of a batch, in series order within each form."""

    data: BatchData
    models: tuple[str, ...]
    method: str
    error: str
    fits: tuple[SeriesFit, ...]
    engine: str
    workers: int

    def for_model(self, model: str) -> tuple[SeriesFit, ...]:
        return tuple(f for f in self.fits if f.result.model == model)

    def get(self, series: str, model: str) -> SeriesFit:
        for f in self.fits:
            if f.series == series and f.result.model == model:
                return f
        raise GrowthcoreInputError(f"no fit of {model!r} to series {series!r} in this batch")

    @property
    def failed(self) -> tuple[SeriesFit, ...]:
        return tuple(f for f in self.fits if not f.result.success)


def _check(models: Sequence[str], method: str, error: str, engine: str, terms: Sequence[str]) -> dict[str, ModelForm]:
    if not models:
        raise GrowthcoreInputError("give at least one model form id")
    if method not in METHODS:
        raise GrowthcoreInputError(f"`method` must be one of {', '.join(METHODS)}; got {method!r}")
    if error not in ERROR_MODELS:
        raise GrowthcoreInputError(f"`error` must be one of {', '.join(ERROR_MODELS)}; got {error!r}")
    if engine not in ENGINES:
        raise GrowthcoreInputError(f"`engine` must be one of {', '.join(ENGINES)}; got {engine!r}")
    forms = {}
    for m in models:
        form = get_form(m, terms=terms)
        forms[form.id] = form
    if len(forms) != len(models):
        raise GrowthcoreInputError(f"a model form is listed twice in {', '.join(models)}")
    return forms


def make_tasks(series: Sequence[Series], forms: Iterable[str], *, method: str, error: str,
               terms: Sequence[str] = (), fixed: Mapping[str, float] | None = None,
               chunk_size: int = DEFAULT_CHUNK, vectorised: bool = True) -> list[Task]:
    """One task per form and chunk of ``chunk_size`` consecutive series."""
    if chunk_size < 1:
        raise GrowthcoreInputError(f"`chunk_size` must be at least 1; got {chunk_size}")
    tasks = []
    for model in forms:
        for start in range(0, len(series), chunk_size):
            tasks.append(Task(model, method, error, start, tuple(series[start:start + chunk_size]),
                              tuple(terms) if model == "custom" else (), dict(fixed or {}), vectorised))
    return tasks


def _fork_context() -> Any:
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("fork" if "fork" in methods else "spawn")


def run_local(tasks: Sequence[Task], *, workers: int, progress: Progress | None = None) -> list[TaskOutput]:
    """Run the tasks in this process (one worker) or in a pool of worker processes."""
    out: list[TaskOutput] = []
    total = len(tasks)
    if workers <= 1 or total <= 1:
        for i, task in enumerate(tasks):
            out.append(run_task(task))
            if progress:
                progress(i + 1, total)
        return out
    with ProcessPoolExecutor(max_workers=min(workers, total), mp_context=_fork_context()) as pool:
        for i, done in enumerate(pool.map(run_task, tasks)):
            out.append(done)
            if progress:
                progress(i + 1, total)
    return out


def default_workers() -> int:
    return max(1, len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1))


def fit_batch(
    data: BatchData | Sequence[Series],
    models: Sequence[str],
    *,
    method: str = "trajectory",
    error: str = "additive",
    terms: Sequence[str] = (),
    fixed: Mapping[str, float] | None = None,
    engine: str = "local",
    workers: int | None = None,
    scheduler: str | None = None,
    client: Any = None,
    chunk_size: int = DEFAULT_CHUNK,
    vectorised: bool = True,
    progress: Progress | None = None,
) -> BatchResult:
    """Fit each form in ``models`` to every series.

    Parameters
    ----------
    data : the batch (or plain series, ungrouped).
    models : form ids from the catalogue.
    method, error : as for :func:`growthcore.fit.fit`; the capacity profile is not computed.
    engine : ``local`` (this machine, ``workers`` processes; default all cores) or ``dask``
        (a Dask cluster at ``scheduler``, or ``client``, or a local Dask cluster of ``workers``).
    chunk_size : series per task; results do not depend on the engine or the number of workers.
    vectorised : solve trajectory fits of a chunk together (series whose optimum is not accepted
        are refitted singly); False fits every series singly.
    progress : called with (tasks done, tasks in all) as tasks finish.

    Returns
    -------
    BatchResult with one fit per series and form; a series that cannot be fitted has a failed
    result with its message, and the batch goes on.
    """
    batch = data if isinstance(data, BatchData) else from_series(list(data))
    forms = _check(list(models), method, error, engine, terms)
    n_workers = workers if workers is not None else default_workers()
    if n_workers < 1:
        raise GrowthcoreInputError(f"`workers` must be at least 1; got {n_workers}")
    tasks = make_tasks(batch.series, forms, method=method, error=error, terms=terms, fixed=fixed,
                       chunk_size=chunk_size, vectorised=vectorised)
    if engine == "dask":
        from growthcore.batch.dask_runner import run_dask  # dask is an optional extra

        outputs = run_dask(tasks, scheduler=scheduler, client=client, workers=n_workers, progress=progress)
    else:
        outputs = run_local(tasks, workers=n_workers, progress=progress)
    by_key = {(o.model, o.first): o for o in outputs}
    fits: list[SeriesFit] = []
    for task in tasks:
        o = by_key[(task.model, task.first)]
        form = forms[task.model]
        for s, r, path in zip(task.series, o.results, o.paths, strict=True):
            fits.append(SeriesFit(s.name, batch.group_of(s.name), replace(r, form=form), path))
    return BatchResult(batch, tuple(forms), method, error, tuple(fits), engine, n_workers)


def chunks_for(n_series: int, chunk_size: int = DEFAULT_CHUNK) -> int:
    return math.ceil(n_series / chunk_size) if n_series else 0
