"""A fitting problem (free and fixed constants, bounds, residuals) and how a solution becomes a result."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np

from growthcore.fit.lm import Evaluation, solve_exact
from growthcore.fit.nls import NLSOutcome, jacobian, solve
from growthcore.fit.result import ErrorModel, FitResult, FitSettings, Grid, Method, ParameterEstimate, SolverName
from growthcore.models.base import ModelForm, ParamSpec
from growthcore.numbers import finite_or_none
from growthcore.stats import (
    correlation,
    covariance_and_condition,
    fit_metrics,
    lack_of_fit,
    residual_diagnostics,
    t_quantile,
)

Array = np.ndarray
P0_DIFFERENCE = ParamSpec("p0", 0.0, math.inf, "state at the first time of the grid", "state")


@dataclass(frozen=True)
class Problem:
    """Everything a solver needs: which constants vary, their bounds, and the residual function.

    ``predict`` maps a (k, m) array of free-parameter columns to (n, m) predicted states at the
    fitted points; residuals are observed minus predicted on the error scale (identity or log).
    ``exact``, when given, evaluates the residuals of one parameter vector together with their
    exact Jacobian (see :mod:`growthcore.fit.lm`).
    """

    model: str
    method: Method
    error: ErrorModel
    form: ModelForm
    specs: tuple[ParamSpec, ...]
    free: tuple[str, ...]
    fixed: Mapping[str, float]
    predict: Callable[[Array], Array]
    t: Array
    observed: Array
    grid: Grid | None = None
    terms: tuple[str, ...] = ()
    settings: FitSettings = FitSettings()
    exact: Evaluation | None = None

    @property
    def time_origin(self) -> float:
        """The time from which curve forms measure t (0 for difference forms)."""
        origin = self.settings.time_origin
        return 0.0 if origin is None else origin

    @cached_property
    def lower(self) -> Array:
        return np.array([self.spec(n).lower for n in self.free])

    @cached_property
    def upper(self) -> Array:
        return np.array([self.spec(n).upper for n in self.free])

    @cached_property
    def spread(self) -> float:
        """The sum of squares of the observations about their mean, on the error scale."""
        target = self._target[:, 0]
        centred = target - float(target.sum()) / target.size
        return float(centred @ centred)

    def spec(self, name: str) -> ParamSpec:
        for s in self.specs:
            if s.name == name:
                return s
        raise KeyError(name)

    def values(self, cols: Array) -> dict[str, Array | float]:
        out: dict[str, Array | float] = dict(self.fixed)
        for i, name in enumerate(self.free):
            out[name] = cols[i]
        return out

    def scaled(self, states: Array) -> Array:
        if self.error == "log":
            with np.errstate(all="ignore"):
                return np.log(states)
        return states

    @cached_property
    def _target(self) -> Array:
        return self.scaled(self.observed)[:, None]

    def residuals(self, cols: Array) -> Array:
        return self._target - self.scaled(self.predict(cols))

    @property
    def scale(self) -> float:
        return float(np.max(np.abs(self.scaled(self.observed)))) or 1.0


def solve_problem(problem: Problem, x0: Array) -> NLSOutcome:
    """The exact-Jacobian solver where the problem has one, MINPACK where it stops short or at a bound."""
    lower, upper = problem.lower, problem.upper
    if problem.exact is not None:
        outcome = solve_exact(problem.exact, x0, lower, upper, max_nfev=100 * (x0.size + 1))
        at_bound = any(is_at_bound(v, problem.spec(n)) for v, n in zip(outcome.x.tolist(), problem.free, strict=True))
        if outcome.success and not at_bound:
            return outcome
    return solve(problem.residuals, x0, lower, upper, scale=problem.scale)


@dataclass(frozen=True)
class Solved:
    """A solver's optimum before its standard errors, metrics and diagnostics are worked out.

    The K profile's refits need only the sum of squares and the values; :meth:`result` builds the
    whole :class:`FitResult` (see :func:`build_result` for the other fields).
    """

    problem: Problem
    x: Array
    sse: float
    message: str
    solver: SolverName
    nfev: int | None = None
    jac: Array | None = None
    predicted: Array | None = None
    r2_uncentered: float | None = None

    @property
    def values(self) -> dict[str, float]:
        return {**self.problem.fixed, **dict(zip(self.problem.free, np.asarray(self.x, dtype=float).tolist(),
                                                 strict=True))}

    def result(self) -> FitResult:
        return build_result(self.problem, self.x, message=self.message, jac=self.jac, predicted=self.predicted,
                            r2_uncentered=self.r2_uncentered, solver=self.solver, nfev=self.nfev)


def build_result(
    problem: Problem,
    x: Array,
    *,
    message: str,
    jac: Array | None = None,
    predicted: Array | None = None,
    notes: tuple[str, ...] = (),
    r2_uncentered: float | None = None,
    t_residual: Array | None = None,
    solver: SolverName | None = None,
    nfev: int | None = None,
) -> FitResult:
    """Standard errors from the Jacobian at ``x``, t-based intervals, metrics and diagnostics.

    ``jac`` (d predictions on the error scale / dx) and ``predicted`` are computed when not given.
    """
    x = np.asarray(x, dtype=float)
    k = x.size
    with np.errstate(all="ignore"):
        if predicted is None:
            predicted = problem.predict(x[:, None])[:, 0]
        residuals = problem._target[:, 0] - problem.scaled(predicted)
        if jac is None:
            jac = -jacobian(problem.residuals, x) if k else np.zeros((residuals.size, 0))
    n = residuals.size
    sse = float(residuals @ residuals)
    dof = n - k
    cov, condition = covariance_and_condition(jac, sse, dof) if k else (np.zeros((0, 0)), math.nan)
    cov_finite = bool(np.isfinite(cov).all())
    tq = t_quantile(0.975, dof) if dof > 0 else math.nan
    notes_out = list(notes)
    estimates = []
    free_values = dict(zip(problem.free, zip(x.tolist(), cov.diagonal().tolist(), strict=True), strict=True))
    for spec in problem.specs:
        if spec.name in free_values:
            value, var = free_values[spec.name]
            se = math.sqrt(var) if var >= 0 else math.nan  # NaN fails the comparison too
            ci = (value - tq * se, value + tq * se) if math.isfinite(se) and math.isfinite(tq) else None
            at_bound = is_at_bound(value, spec)
            if at_bound:
                notes_out.append(f"{spec.name} = {value:.6g} is at its bound; its standard error is not reliable")
            estimates.append(
                ParameterEstimate(spec.name, value, finite_or_none(se), ci, False, at_bound,
                                  spec.description, spec.unit)
            )
        else:
            estimates.append(
                ParameterEstimate(spec.name, float(problem.fixed[spec.name]), None, None, True, False,
                                  spec.description, spec.unit)
            )
    if k and not cov_finite:
        notes_out.append("the Jacobian is singular at the optimum: the constants are not separately identifiable")
    elif k and condition > 1e10:
        notes_out.append(f"ill-conditioned fit (condition number {condition:.2g}): standard errors are fragile")
    if dof <= 0:
        notes_out.append("no residual degrees of freedom: no standard errors")
    metrics = fit_metrics(residuals, problem.observed, predicted, k, r2_uncentered=r2_uncentered)
    t_points = problem.t if t_residual is None else t_residual
    lof = lack_of_fit(t_points, problem._target[:, 0], problem.scaled(predicted), k) \
        if t_points.size > 1 and bool(np.any(np.diff(t_points) == 0)) else None
    if lof is not None:
        notes_out.append(lof.message)
    corr = correlation(cov) if k and cov_finite else None
    return FitResult(
        model=problem.model,
        method=problem.method,
        error=problem.error,
        status="converged",
        message=message,
        form=problem.form,
        parameters=tuple(estimates),
        metrics=metrics,
        diagnostics=replace(residual_diagnostics(residuals), lack_of_fit=lof),
        t=problem.t if t_residual is None else t_residual,
        observed=problem.observed,
        predicted=predicted,
        residuals=residuals,
        correlation=corr,
        notes=tuple(notes_out),
        grid=problem.grid,
        terms=problem.terms,
        settings=problem.settings,
        solver=solver,
        nfev=nfev,
    )


#: How close (relative) a constant must come to a bound to count as on it. The bounded solvers work in
#: squashed coordinates that approach a bound without reaching it (Richards' ν on carData::USPop stops at
#: 0.01000004 against the bound 0.01), so exact equality would miss estimates that sit on the bound.
AT_BOUND_RTOL = 1e-4


def is_at_bound(value: float, spec: ParamSpec) -> bool:
    """Whether ``value`` sits on one of the bounds of ``spec`` (to ``AT_BOUND_RTOL`` relative)."""
    scale = max(abs(value), 1e-12)
    return any(math.isfinite(b) and abs(value - b) <= AT_BOUND_RTOL * max(scale, abs(b))
               for b in (spec.lower, spec.upper))
