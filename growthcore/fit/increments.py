"""The increments method: the change per step regressed on the candidate term(s).

Notes
-----
With pairs (p_n, Δp_n = p_{n+1} − p_n) on consecutive grid steps, a form linear in some constants
gives Δp = Σ b_j·g_j(p; s) for shape constants s (K, θ, A). For fixed s this is least squares through
the origin; free s are found by minimising the concentrated SSE(s) (variable projection). Forms that
are not linear in any constant (Ricker, Beverton–Holt) fit p_{n+1} on p_n by nonlinear least squares.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping
from dataclasses import replace
from typing import Any

import numpy as np

from growthcore.data import Series
from growthcore.fit.lm import Evaluation, evaluation
from growthcore.fit.nls import solve
from growthcore.fit.problem import Problem, Solved, solve_problem
from growthcore.fit.result import FitResult, FitSettings, Grid, failed
from growthcore.fit.sensitivity import central_partial
from growthcore.fit.starts import capacity_start
from growthcore.models.base import DifferenceForm
from growthcore.stats import OriginRegression, regression_through_origin

Array = np.ndarray


def consecutive_pairs(series: Series) -> tuple[Array, Array, Array] | str:
    """(positions i, p_i, p_{i+1}) for used points one grid step apart, or why there are none."""
    return series.consecutive


def fit_increments(
    series: Series,
    form: DifferenceForm,
    *,
    model: str,
    fixed: Mapping[str, float],
    start: Mapping[str, float],
    terms: tuple[str, ...] = (),
) -> FitResult:
    """Fit ``form`` to the change per step of ``series`` (of its mean per time where it has replicates)."""
    solved = solve_increments(series, form, model=model, fixed=fixed, start=start, terms=terms)
    result = solved if isinstance(solved, FitResult) else solved.result()
    if series.has_replicates:
        note = (f"the increments method needs one value a step: it regresses the change of the mean at each time "
                f"({series.replicate_times} time(s) with replicates, {len(series)} points in all)")
        return replace(result, notes=(note, *result.notes))
    return result


def solve_increments(
    series: Series,
    form: DifferenceForm,
    *,
    model: str,
    fixed: Mapping[str, float],
    start: Mapping[str, float],
    terms: tuple[str, ...] = (),
) -> Solved | FitResult:
    """The optimum of :func:`fit_increments` before its result is built, or the failed result."""
    if series.has_replicates:
        series = series.means_per_time()
    pairs = consecutive_pairs(series)
    if isinstance(pairs, str):
        return failed(model, "increments", "additive", pairs, form=form)
    i, x, y_next = pairs
    if form.needs_positive and np.any(x <= 0):
        j = int(i[np.flatnonzero(x <= 0)[0]])
        return failed(model, "increments", "additive",
                      f"{form.id} takes ln of the state, which needs p > 0; "
                      f"row {series.row_of(j)} has p = {series.p[j]:g}",
                      form=form)
    free = tuple(n for n in form.param_names if n not in fixed)
    if x.size <= len(free):
        return failed(model, "increments", "additive",
                      f"{x.size} consecutive pairs for {len(free)} free constants: need more pairs than constants",
                      form=form)
    step = series.step()
    assert step.h is not None
    grid = Grid(float(series.t[series.used][0]), float(step.h))
    t_next = series.t[i + 1]

    def predict(cols: Array) -> Array:
        values = {n: (v if np.ndim(v) == 0 else np.asarray(v)[None, :]) for n, v in problem.values(cols).items()}
        with np.errstate(all="ignore"):
            return x[:, None] + form.increment(x[:, None], values)

    problem = Problem(model, "increments", "additive", form, form.params, free, dict(fixed), predict,
                      t_next, y_next, grid=grid, terms=terms,
                      settings=FitSettings(fixed=dict(fixed), pairs=int(x.size), t_first=grid.t0,
                                          p_first=float(series.p[series.used][0])),
                      exact=None if form.basis is not None and form.linear else
                      pairs_evaluation(form, free, fixed, x, y_next))
    dy = y_next - x
    if form.basis is not None and form.linear:
        return _fit_linear(problem, form, x, dy, start)
    return _fit_nonlinear(problem, form, x, start)


def _linear_solution(
    form: DifferenceForm, problem: Problem, x: Array, dy: Array, shape: Mapping[str, float]
) -> tuple[dict[str, float] | None, Array | None, OriginRegression | None]:
    """Free linear coefficients for given shape values, through the origin, with fixed ones subtracted."""
    values = {**problem.fixed, **shape}
    assert form.basis is not None
    with np.errstate(all="ignore"):
        cols = form.basis(x, {**values, **{n: 0.0 for n in form.linear if n not in values}})
    target = dy.copy()
    design = []
    names = []
    for name, col in zip(form.linear, cols, strict=True):
        if name in problem.fixed:
            target = target - problem.fixed[name] * col
        else:
            design.append(col)
            names.append(name)
    if not names:
        return {}, target, None
    xmat = np.column_stack(design)
    if not np.all(np.isfinite(xmat)):
        return None, None, None
    reg = regression_through_origin(xmat, target)
    return dict(zip(names, (float(c) for c in reg.coef), strict=True)), reg.residuals, reg


def _fit_linear(problem: Problem, form: DifferenceForm, x: Array, dy: Array,
                start: Mapping[str, float]) -> Solved | FitResult:
    free_shape = tuple(n for n in form.shape if n in problem.free)
    shape_fixed = {n: problem.fixed[n] for n in form.shape if n in problem.fixed}
    if free_shape:
        x0 = np.array([_shape_start(n, start, problem.observed, x) for n in free_shape])
        lower = np.array([problem.spec(n).lower for n in free_shape])
        upper = np.array([problem.spec(n).upper for n in free_shape])
        x0 = np.array([problem.spec(n).clip(v) for n, v in zip(free_shape, x0, strict=True)])

        def concentrated(cols: Array) -> Array:
            out = np.empty((dy.size, cols.shape[1]))
            for m in range(cols.shape[1]):
                column_shape = {**shape_fixed, **dict(zip(free_shape, cols[:, m], strict=True))}
                coef, res, _ = _linear_solution(form, problem, x, dy, column_shape)
                out[:, m] = res if res is not None else np.nan
            return out

        outcome = solve(concentrated, x0, lower, upper, scale=float(np.max(np.abs(dy))) or 1.0)
        if not outcome.finite:
            return failed(problem.model, "increments", "additive",
                          f"the concentrated regression did not converge ({outcome.message})", form=form)
        shape = {**shape_fixed, **dict(zip(free_shape, outcome.x, strict=True))}
        if not outcome.success:
            return failed(problem.model, "increments", "additive",
                          f"the concentrated regression did not converge: {outcome.message}", form=form)
    else:
        shape = shape_fixed
    coef, res, reg = _linear_solution(form, problem, x, dy, shape)
    if coef is None or (reg is not None and reg.rank < len(coef)):
        return failed(problem.model, "increments", "additive",
                      "the rate terms are collinear or not finite on these data: "
                      "their coefficients cannot be separated",
                      form=form)
    assert res is not None  # coefficients come with their residuals
    with np.errstate(over="ignore", invalid="ignore"):
        sse, dyy = float(res @ res), float(dy @ dy)
    if not (math.isfinite(sse) and math.isfinite(dyy)):
        return failed(problem.model, "increments", "additive",
                      "the squared changes overflow: the values are too large to regress "
                      "(rescale the data, e.g. to other units)",
                      form=form)
    all_values = {**shape, **coef}
    xvec = np.array([all_values[n] for n in problem.free])
    r2u = 1.0 - sse / dyy if dyy > 0 else math.nan
    jac = None
    if not free_shape and reg is not None:
        jac = np.column_stack([_column(form, problem, x, all_values, n) for n in problem.free])
    message = "closed-form least squares through the origin" if not free_shape else \
        f"least squares through the origin, {', '.join(free_shape)} by minimising the concentrated SSE"
    if free_shape:
        return Solved(problem, xvec, sse, message, outcome.solver, nfev=outcome.nfev, r2_uncentered=r2u)
    return Solved(problem, xvec, sse, message, "linear", jac=jac, r2_uncentered=r2u)


def _column(form: DifferenceForm, problem: Problem, x: Array, values: Mapping[str, float], name: str) -> Array:
    """d(predicted)/d(coefficient) for a linear coefficient: its basis column."""
    assert form.basis is not None
    cols = form.basis(x, {**problem.fixed, **values})
    return cols[form.linear.index(name)]


def _shape_start(name: str, start: Mapping[str, float], observed: Array, x: Array) -> float:
    if name in start:
        return float(start[name])
    states = np.concatenate([x, observed[-1:]])
    if name == "K":
        return capacity_start(states)
    if name == "theta":
        return 1.0
    if name == "A":
        positive = states[states > 0]
        return 0.5 * float(np.min(positive)) if positive.size else 1.0
    return 1.0


def _fit_nonlinear(problem: Problem, form: DifferenceForm, x: Array,
                   start: Mapping[str, float]) -> Solved | FitResult:
    candidates = _nonlinear_starts(problem, x, start)
    best = None
    for x0 in candidates:
        outcome = solve_problem(problem, x0)
        if outcome.finite and (best is None or outcome.sse < best.sse):
            best = outcome
        if outcome.success:
            break
    if best is None:
        return failed(problem.model, "increments", "additive",
                      "nonlinear least squares of p_{n+1} on p_n did not converge from any start", form=form)
    if not best.success:
        return failed(problem.model, "increments", "additive",
                      f"nonlinear least squares of p_{{n+1}} on p_n did not converge: {best.message}", form=form)
    return Solved(problem, best.x, best.sse, f"nonlinear least squares of p_{{n+1}} on p_n ({best.message})",
                  best.solver, nfev=best.nfev, jac=best.jac, predicted=best.predicted)


def _nonlinear_starts(problem: Problem, x: Array, start: Mapping[str, float]) -> Iterator[Array]:
    """Guesses from the data with K at 1, 1.5 and 0.7 times its first guess, each completed by ``start``;
    a ``start`` for every free constant (each refit of the K profile) is the one start."""
    def vector(values: Mapping[str, float]) -> Array:
        return np.array([problem.spec(n).clip(values.get(n, 1.0)) for n in problem.free])

    if all(n in start for n in problem.free):
        yield vector(start)
        return
    states = np.concatenate([x, problem.observed[-1:]])
    k0 = capacity_start(states)
    growth = float(np.median(problem.observed / np.where(x != 0, x, np.nan)))
    growth = growth if math.isfinite(growth) and growth > 0 else 1.5
    guesses = {"K": k0, "lambda": max(growth, 1.05) ** 2, "r": max(math.log(max(growth, 1.05)) * 2.0, 0.05), "c": 0.0}
    for factor in (1.0, 1.5, 0.7):
        yield vector({**guesses, "K": k0 * factor, **start})


def pairs_evaluation(form: DifferenceForm, free: tuple[str, ...], fixed: Mapping[str, float], x: Array,
                      y_next: Array) -> Evaluation | None:
    """p_{n+1} predicted from p_n and, on demand, its exact Jacobian (∂Δ/∂θ; central differences for a
    constant the form has no closed-form partial for); None for a form without partials."""
    partials = form.increment_partials
    if partials is None:
        return None

    def at(values: dict[str, Any]) -> tuple[Array, Callable[[], Array]]:
        # numpy scalars, not Python floats: a division by zero gives inf (a rejected step), not an error
        v = {n: np.float64(value) for n, value in values.items()}

        def states_jacobian() -> Array:
            known = partials(x, v)
            return np.array([np.broadcast_to(known[n] if n in known else central_partial(form, x, v, n), x.shape)
                             for n in free]).T

        return np.broadcast_to(x + form.increment(x, v), x.shape), states_jacobian

    return evaluation(free, fixed, y_next, "additive", at)
