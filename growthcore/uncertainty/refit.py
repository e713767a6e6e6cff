"""A fitted result turned back into a batch of least-squares problems, for bootstrap refits.

Notes
-----
The residual function of the original fit is rebuilt from the result (times, grid positions,
fixed constants, error scale), with one target vector per resample: z*_b = ẑ + e*_b on the fitted
scale (the state itself, or its logarithm for multiplicative error). The increments method keeps
the observed states p_n as a fixed design and refits every constant, linear ones included.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.batched import BatchedOutcome, solve_batched
from growthcore.fit.increments import consecutive_pairs
from growthcore.fit.problem import P0_DIFFERENCE
from growthcore.fit.result import FitResult
from growthcore.fit.simulate import iterate
from growthcore.models.base import DifferenceForm, ParamSpec

Array = np.ndarray
Predict = Callable[[dict[str, Array | float]], Array]


@dataclass(frozen=True)
class RefitProblem:
    """The free constants, their bounds and a batched model of the fitted points."""

    names: tuple[str, ...]
    estimate: Array  # (k,)
    lower: Array
    upper: Array
    fixed: dict[str, float]
    fitted: Array  # (n,) fitted values on the error scale
    residuals: Array  # (n,) on the error scale
    predict: Predict  # values with (a, c) arrays -> (n, a, c) predicted states
    log_scale: bool

    def scaled(self, states: Array) -> Array:
        if self.log_scale:
            with np.errstate(all="ignore"):
                return np.log(states)
        return states

    def unscaled(self, z: Array) -> Array:
        return np.exp(z) if self.log_scale else z

    def solve(self, targets: Array, *, max_iter: int = 200) -> BatchedOutcome:
        """Refit every column of ``targets`` (n, m), warm-started from the estimate."""
        k = len(self.names)
        m = targets.shape[1]

        def fn(x: Array, idx: Array) -> Array:
            values: dict[str, Array | float] = dict(self.fixed)
            for i, name in enumerate(self.names):
                values[name] = x[i]
            with np.errstate(all="ignore"):
                return targets[:, idx, None] - self.scaled(self.predict(values))

        x0 = np.repeat(self.estimate[:, None], m, axis=1).reshape(k, m)
        scale = float(np.max(np.abs(self.fitted[np.isfinite(self.fitted)]))) if self.fitted.size else 1.0
        return solve_batched(fn, x0, self.lower, self.upper, scale=scale or 1.0, max_iter=max_iter)


    def solve_one(self, target: Array, x0: Array) -> tuple[Array, bool]:
        """One refit by scipy's trust-region solver (for the few the batch leaves unconverged)."""
        from growthcore.fit.nls import solve

        def fn(cols: Array) -> Array:
            values: dict[str, Array | float] = dict(self.fixed)
            for i, name in enumerate(self.names):
                values[name] = cols[i][None, :]
            with np.errstate(all="ignore"):
                return target[:, None] - self.scaled(self.predict(values)[:, 0, :])

        scale = float(np.max(np.abs(target[np.isfinite(target)]))) if target.size else 1.0
        start = np.clip(np.where(np.isfinite(x0), x0, self.estimate), self.lower, self.upper)
        outcome = solve(fn, start, self.lower, self.upper, scale=scale or 1.0, max_nfev=400)
        return outcome.x, bool(outcome.success)


def _spec(result: FitResult, name: str) -> ParamSpec:
    assert result.form is not None
    if name == "p0" and result.form.kind == "difference":
        return P0_DIFFERENCE
    return result.form.spec(name)


def refit_problem(result: FitResult, series: Series | None = None) -> RefitProblem:
    """The batch problem behind ``result``; the increments method needs the ``series`` it was fitted to.

    Raises GrowthcoreInputError for a failed fit or a missing series (an error of the caller, not
    of the numbers).
    """
    form = result.form
    if not result.success or form is None:
        raise GrowthcoreInputError(f"the {result.model} fit did not converge: nothing to resample")
    free = tuple(p.name for p in result.parameters if not p.fixed)
    fixed = {p.name: float(p.value) for p in result.parameters if p.fixed}
    estimate = np.array([result.values[n] for n in free], dtype=float)
    lower = np.array([_spec(result, n).lower for n in free])
    upper = np.array([_spec(result, n).upper for n in free])
    log_scale = result.error == "log"
    predict: Predict
    if result.method == "increments":
        if series is None:
            raise GrowthcoreInputError("bootstrapping an increments fit needs the series it was fitted to")
        pairs = consecutive_pairs(series)
        if isinstance(pairs, str):
            raise GrowthcoreInputError(pairs)
        _, x_now, _ = pairs
        if x_now.size != result.observed.size:
            raise GrowthcoreInputError(
                f"the series has {x_now.size} consecutive pairs but the fit used {result.observed.size}: "
                "pass the series the fit was made from")
        assert isinstance(form, DifferenceForm)
        xs = x_now[:, None, None]

        def predict(values: dict[str, Array | float]) -> Array:
            return xs + form.increment(xs, {n: _lift(v) for n, v in values.items()})
    elif isinstance(form, DifferenceForm):
        assert result.grid is not None
        offsets = np.rint((result.t - result.grid.t0) / result.grid.h).astype(int)
        steps = int(offsets.max()) if offsets.size else 0
        if "p0" not in result.values:
            raise GrowthcoreInputError("a trajectory fit of a difference form must carry p0")

        def predict(values: dict[str, Array | float]) -> Array:
            return iterate(form, values["p0"], values, steps)[offsets]
    else:
        times = (result.t - result.time_origin)[:, None, None]

        def predict(values: dict[str, Array | float]) -> Array:
            return form.value(times, {n: _lift(v) for n, v in values.items()})

    with np.errstate(all="ignore"):
        fitted = np.log(result.predicted) if log_scale else np.asarray(result.predicted, dtype=float)
    return RefitProblem(free, estimate, lower, upper, fixed, fitted, np.asarray(result.residuals, dtype=float),
                        predict, log_scale)


def _lift(v: Array | float) -> Array | float:
    """Constants broadcast against a leading axis of observations."""
    return v if np.ndim(v) == 0 else np.asarray(v)[None, ...]


def modified_residuals(residuals: Array, n_free: int) -> Array:
    """Centred residuals inflated by √(n/(n − k)), so resamples carry the error variance of the data.

    Davison & Hinkley (1997), Bootstrap Methods and their Application, §6.2.3 (leverage-free form).
    """
    n = residuals.size
    centred = residuals - residuals.mean()
    dof = n - n_free
    return centred * math.sqrt(n / dof) if dof > 0 else centred
