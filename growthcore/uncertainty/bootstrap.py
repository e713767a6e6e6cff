"""Bootstrap by residual resampling, in chunks that can be run one after another (for progress and
cancelling) and merged.

Notes
-----
Resample b draws n residuals with replacement from the modified residuals ẽ of the fit and refits
the form to ẑ + ẽ*_b (on the fitted scale), warm-started from the estimate; all resamples of a
chunk are solved together by :func:`growthcore.fit.batched.solve_batched`; the few it leaves
unconverged are retried one by one with scipy.optimize.least_squares. Draw b uses the random
generator seeded with (seed, b), so the same seed gives the same refits however the work is cut
into chunks. Percentile intervals: the 2.5% and 97.5% points of the refitted values (Efron &
Tibshirani 1993, An Introduction to the Bootstrap, ch. 13).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from growthcore.budget import check_budget
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.result import FitResult
from growthcore.limits import DEFAULT as LIMITS
from growthcore.numbers import finite_list
from growthcore.uncertainty.refit import RefitProblem, modified_residuals, refit_problem

Array = np.ndarray
DEFAULT_RESAMPLES = 1000
DEFAULT_SEED = 20240601
DEFAULT_CHUNK = 250
#: Refits per call that the batch leaves unconverged and scipy retries (each costs milliseconds).
MAX_RETRIES = 100


@dataclass(frozen=True)
class BootstrapResult:
    """Refitted constants for resamples ``start`` .. ``start + len(samples) − 1``.

    ``samples`` has one row per resample (NaN rows for refits that failed), one column per free
    constant in ``names``. ``requested`` is the total the user asked for; ``done`` how many are in.
    """

    model: str
    method: str
    names: tuple[str, ...]
    estimate: tuple[float, ...]
    samples: Array
    seed: int
    requested: int
    start: int = 0
    message: str = ""
    at_bound: int = 0
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def done(self) -> int:
        return int(self.samples.shape[0])

    @property
    def ok(self) -> Array:
        """Rows of refits that converged."""
        return np.all(np.isfinite(self.samples), axis=1)

    @property
    def failed(self) -> int:
        return int(self.done - self.ok.sum())

    @property
    def complete(self) -> bool:
        return self.start == 0 and self.done >= self.requested

    @property
    def status(self) -> str:
        if self.ok.sum() == 0:
            return "failed"
        return "complete" if self.complete else "partial"

    def good(self) -> dict[str, Array]:
        """The converged refits, name → values."""
        rows = self.samples[self.ok]
        return {n: rows[:, i] for i, n in enumerate(self.names)}

    def interval(self, name: str, level: float = 0.95) -> tuple[float, float] | None:
        """Percentile interval of one constant, None with fewer than 20 converged refits."""
        values = self.good().get(name)
        if values is None or values.size < 20:
            return None
        tail = 50.0 * (1.0 - level)
        lo, hi = np.percentile(values, [tail, 100.0 - tail])
        return float(lo), float(hi)

    def intervals(self, level: float = 0.95) -> dict[str, tuple[float, float] | None]:
        return {n: self.interval(n, level) for n in self.names}

    def merge(self, later: BootstrapResult) -> BootstrapResult:
        """This result followed by the next chunk (which must start where this one ends)."""
        if later.names != self.names or later.seed != self.seed or later.model != self.model:
            raise GrowthcoreInputError("bootstrap chunks of different fits or seeds cannot be merged")
        if later.start != self.start + self.done:
            raise GrowthcoreInputError(
                f"the next chunk must start at resample {self.start + self.done}; it starts at {later.start}")
        return BootstrapResult(self.model, self.method, self.names, self.estimate,
                               np.vstack([self.samples, later.samples]), self.seed, self.requested, self.start,
                               later.message or self.message, self.at_bound + later.at_bound,
                               tuple(dict.fromkeys((*self.notes, *later.notes))))

    def summary(self) -> dict[str, Any]:
        """Counts and intervals, without the samples: what the record and the table show."""
        return {
            "method": "residual resampling",
            "seed": self.seed,
            "requested": self.requested,
            "done": self.done,
            "succeeded": int(self.ok.sum()),
            "failed": self.failed,
            "at_bound": self.at_bound,
            "status": self.status,
            "message": self.message,
            "notes": list(self.notes),
            "intervals": {n: (list(ci) if ci else None) for n, ci in self.intervals().items()},
        }

    def to_dict(self) -> dict[str, Any]:
        """Everything, samples included (failed rows as null), for a browser store or a file."""
        rows = [finite_list(row) for row in self.samples]
        return {**self.summary(), "model": self.model, "fit_method": self.method, "names": list(self.names),
                "estimate": list(self.estimate), "start": self.start, "samples": rows}

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> BootstrapResult:
        names = tuple(data["names"])
        rows = [[math.nan if v is None else float(v) for v in row] for row in data["samples"]]
        samples = np.array(rows, dtype=float).reshape(len(rows), len(names))
        return cls(str(data["model"]), str(data["fit_method"]), names, tuple(float(v) for v in data["estimate"]),
                   samples, int(data["seed"]), int(data["requested"]), int(data.get("start", 0)),
                   str(data.get("message", "")), int(data.get("at_bound", 0)), tuple(data.get("notes", ())))


def _draws(seed: int, start: int, stop: int, n: int) -> Array:
    """Indices (n, stop − start) of the residuals each resample takes."""
    cols = [np.random.default_rng([seed, b]).integers(0, n, n) for b in range(start, stop)]
    return np.stack(cols, axis=1) if cols else np.zeros((n, 0), dtype=int)


def _empty(result: FitResult, names: tuple[str, ...], seed: int, requested: int, start: int,
           message: str) -> BootstrapResult:
    est = tuple(float(result.values.get(n, math.nan)) for n in names)
    return BootstrapResult(result.model, result.method, names, est, np.zeros((0, len(names))), seed, requested,
                           start, message)


def bootstrap(
    result: FitResult,
    *,
    series: Series | None = None,
    resamples: int = DEFAULT_RESAMPLES,
    seed: int = DEFAULT_SEED,
    start: int = 0,
    stop: int | None = None,
    problem: RefitProblem | None = None,
) -> BootstrapResult:
    """Refit resamples ``start`` .. ``stop − 1`` of ``resamples`` (all of them by default).

    Parameters
    ----------
    result : a converged fit (any form, either method).
    series : the data of the fit; needed for the increments method (its states p_n are the design).
    resamples : the total number of resamples the user asked for (for progress and ``complete``).
    seed : resample b uses the generator seeded with (seed, b).
    start, stop : the chunk to run now; merge chunks with :meth:`BootstrapResult.merge`.
    problem : the rebuilt refit problem, to reuse across chunks.

    Returns
    -------
    BootstrapResult; refits that fail to converge are NaN rows, counted in ``failed``. A fit that
    cannot be resampled (failed, too few points) gives an empty result whose ``message`` says why.
    """
    if resamples < 1:
        raise GrowthcoreInputError(f"`resamples` must be at least 1; got {resamples}")
    if not (isinstance(seed, (int, np.integer)) and not isinstance(seed, bool) and seed >= 0):
        raise GrowthcoreInputError(f"`seed` must be a whole number 0 or larger; got {seed!r}")
    if resamples > LIMITS.max_resamples:
        raise GrowthcoreInputError(f"{resamples:,} resamples, over the limit of {LIMITS.max_resamples:,}: refused")
    stop = resamples if stop is None else min(int(stop), resamples)
    if not 0 <= start <= stop:
        raise GrowthcoreInputError(f"`start` must lie in 0..{stop}; got {start}")
    free = tuple(p.name for p in result.parameters if not p.fixed)
    if not result.success:
        return _empty(result, free, seed, resamples, start, f"the fit did not converge: {result.message}")
    if problem is None:
        problem = refit_problem(result, series)
    n, k = problem.residuals.size, len(problem.names)
    if n <= k:
        return _empty(result, problem.names, seed, resamples, start,
                      f"{n} points for {k} constants: nothing to resample")
    if not np.all(np.isfinite(problem.fitted)) or not np.all(np.isfinite(problem.residuals)):
        return _empty(result, problem.names, seed, resamples, start,
                      "the fitted values are not all finite: no resampling")
    pool = modified_residuals(problem.residuals, k)
    targets = problem.fitted[:, None] + pool[_draws(seed, start, stop, n)]
    if targets.shape[1] == 0:
        return _empty(result, problem.names, seed, resamples, start, "")
    outcome = problem.solve(targets)
    x = outcome.x.T.copy()
    converged = outcome.converged.copy()
    # the batch solver can stall at an active bound; the few it leaves get one scipy refit each
    for j in np.flatnonzero(~converged)[:MAX_RETRIES]:
        check_budget()
        x_j, ok = problem.solve_one(targets[:, j], outcome.x[:, j])
        if ok:
            x[j], converged[j] = x_j, True
    x[~converged] = math.nan
    lo, hi = problem.lower, problem.upper
    with np.errstate(invalid="ignore"):
        near = ((np.isfinite(lo) & (np.abs(x - lo) <= 1e-7 * np.maximum(np.abs(lo), 1.0)))
                | (np.isfinite(hi) & (np.abs(x - hi) <= 1e-7 * np.maximum(np.abs(hi), 1.0))))
    at_bound = int(np.sum(np.any(near & np.isfinite(x), axis=1)))
    failed = int((~converged).sum())
    message = f"{failed} of {targets.shape[1]} refits did not converge and are left out" if failed else ""
    notes = (f"{at_bound} refits ended at a bound of a constant",) if at_bound else ()
    return BootstrapResult(result.model, result.method, problem.names, tuple(float(v) for v in problem.estimate),
                           x, int(seed), int(resamples), int(start), message, at_bound, notes)


def bootstrap_chunks(
    result: FitResult,
    *,
    series: Series | None = None,
    resamples: int = DEFAULT_RESAMPLES,
    seed: int = DEFAULT_SEED,
    chunk: int = DEFAULT_CHUNK,
) -> Iterator[BootstrapResult]:
    """The bootstrap so far after each chunk: stop iterating to cancel; the last one is complete."""
    if chunk < 1:
        raise GrowthcoreInputError(f"`chunk` must be at least 1; got {chunk}")
    problem = refit_problem(result, series) if result.success else None
    so_far: BootstrapResult | None = None
    for begin in range(0, resamples, chunk):
        check_budget()
        part = bootstrap(result, series=series, resamples=resamples, seed=seed, start=begin,
                         stop=begin + chunk, problem=problem)
        so_far = part if so_far is None else so_far.merge(part)
        yield so_far
        if part.done == 0:
            return
