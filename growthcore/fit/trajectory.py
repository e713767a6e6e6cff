"""The trajectory method: nonlinear least squares on the whole path.

Notes
-----
A difference form is iterated from p0 over the step grid and compared with the observations at
their grid positions; a curve is evaluated at the observed times. Residuals are p − p̂ (additive
error) or ln p − ln p̂ (log, i.e. multiplicative error).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Iterator, Mapping
from typing import Any

import numpy as np

from growthcore.budget import check_budget
from growthcore.data import Series
from growthcore.fit.increments import consecutive_pairs, solve_increments
from growthcore.fit.lm import Evaluation, evaluation
from growthcore.fit.nls import NLSOutcome
from growthcore.fit.problem import P0_DIFFERENCE, Problem, Solved, solve_problem
from growthcore.fit.result import FitResult, FitSettings, Grid, as_error_model, failed
from growthcore.fit.sensitivity import path_jacobian
from growthcore.fit.simulate import iterate, path_of
from growthcore.fit.starts import capacity_start, curve_starts
from growthcore.models.base import CurveForm, DifferenceForm, ModelForm

Array = np.ndarray


def fit_trajectory(
    series: Series,
    form: ModelForm,
    *,
    model: str,
    error: str,
    fixed: Mapping[str, float],
    start: Mapping[str, float],
    terms: tuple[str, ...] = (),
    time_origin: float | None = None,
) -> FitResult:
    """Fit ``form`` to the observed path of ``series``.

    A curve's p0 is its state at ``time_origin`` (default: the first time in the series).
    """
    solved = solve_trajectory(series, form, model=model, error=error, fixed=fixed, start=start, terms=terms,
                              time_origin=time_origin)
    return solved if isinstance(solved, FitResult) else solved.result()


def solve_trajectory(
    series: Series,
    form: ModelForm,
    *,
    model: str,
    error: str,
    fixed: Mapping[str, float],
    start: Mapping[str, float],
    terms: tuple[str, ...] = (),
    time_origin: float | None = None,
) -> Solved | FitResult:
    """The optimum of :func:`fit_trajectory` before its result is built, or the failed result."""
    used = series.used
    t, p = series.t[used], series.p[used]
    if (error == "log" or form.needs_positive) and not p.min() > 0:
        j = int(np.flatnonzero(used)[p <= 0][0])
        need = "log error needs p > 0" if error == "log" else f"{form.id} takes ln of the state, which needs p > 0"
        advice = " (exclude it or use additive error)" if error == "log" else ""
        return failed(model, "trajectory", error,
                      f"{need}; row {series.row_of(j)} has p = {series.p[j]:g}{advice}", form=form)
    if isinstance(form, DifferenceForm):
        return _fit_difference(series, form, model=model, error=error, fixed=fixed, start=start, terms=terms)
    origin = curve_origin(form, series, time_origin)
    return _fit_curve(t, p, form, model=model, error=error, fixed=fixed, start=start,
                      t_first=float(series.t[0]), origin=origin)


def curve_origin(form: CurveForm, series: Series, time_origin: float | None) -> float:
    """The time a curve's p0 refers to: the given one, else the first time; 0 for a curve without p0.

    A curve without p0 (``logistic-mid-curve``) carries its own times (t_mid), which stay on the
    series' clock.
    """
    if time_origin is not None:
        return float(time_origin)
    return float(series.t[0]) if "p0" in form.param_names else 0.0


def _too_few(model: str, error: str, form: ModelForm, n: int, k: int) -> FitResult | None:
    if n <= k:
        return failed(model, "trajectory", error,
                      f"{n} usable points for {k} free constants: need more points than constants", form=form)
    return None


def _best(problem: Problem, candidates: Iterable[Array]) -> NLSOutcome | None:
    """Try starts in order (they may be built lazily) until one converges to a good enough fit."""
    best = None
    for x0 in candidates:
        check_budget()
        outcome = solve_problem(problem, x0)
        if outcome.finite and (best is None or outcome.sse < best.sse * (1 - 1e-9)):
            best = outcome
        if outcome.success and best is outcome and _good_enough(problem, outcome):
            break
    return best


def _good_enough(problem: Problem, outcome: NLSOutcome) -> bool:
    """A converged start is accepted unless residuals are large beside the spread of the data."""
    return outcome.sse < 0.5 * problem.spread


def _finish(problem: Problem, best: NLSOutcome | None, form: ModelForm) -> Solved | FitResult:
    if best is None:
        return failed(problem.model, "trajectory", problem.error,
                      "no start converged to a finite path: the form cannot follow these data "
                      "(overflow or non-finite values)",
                      form=form)
    if not best.success:
        return failed(problem.model, "trajectory", problem.error,
                      f"did not converge from any start: {best.message} (best SSE {best.sse:.6g}); "
                      "the form may not suit these data, or fix a constant", form=form)
    return Solved(problem, best.x, best.sse, f"nonlinear least squares on the path ({best.message})", best.solver,
                  nfev=best.nfev, jac=best.jac, predicted=best.predicted)


def curve_problem(t: Array, p: Array, form: CurveForm, *, model: str, error: str,
                  fixed: Mapping[str, float], t_first: float, origin: float) -> Problem:
    """The trajectory problem of a curve: p(t − origin) at the used times ``t``."""
    free = tuple(n for n in form.param_names if n not in fixed)
    elapsed = t - origin

    def predict(cols: Array) -> Array:
        values = {n: (v if np.ndim(v) == 0 else np.asarray(v)[None, :]) for n, v in problem.values(cols).items()}
        with np.errstate(all="ignore"):
            return np.broadcast_to(form.value(elapsed[:, None], values), (t.size, cols.shape[1]))

    exact = _curve_evaluation(form, free, fixed, elapsed, p, error) if form.value_partials is not None else None
    problem = Problem(model, "trajectory", as_error_model(error), form, form.params, free, dict(fixed), predict, t, p,
                      settings=FitSettings(fixed=dict(fixed), t_first=t_first, time_origin=origin), exact=exact)
    return problem


def _curve_evaluation(form: CurveForm, free: tuple[str, ...], fixed: Mapping[str, float], elapsed: Array,
                      observed: Array, error: str) -> Evaluation:
    """The curve's residuals and, on demand, its closed-form Jacobian."""
    partials = form.value_partials
    assert partials is not None

    def at(values: dict[str, Any]) -> tuple[Array, Callable[[], Array]]:
        # numpy scalars, not Python floats: a division by zero gives inf (a rejected step), not an error
        v = {n: np.float64(x) for n, x in values.items()}

        def states_jacobian() -> Array:
            parts = partials(elapsed, v)
            return np.array([np.broadcast_to(parts[n], elapsed.shape) for n in free]).T

        return np.broadcast_to(form.value(elapsed, v), elapsed.shape), states_jacobian

    return evaluation(free, fixed, observed, error, at)


def _fit_curve(t: Array, p: Array, form: CurveForm, *, model: str, error: str, fixed: Mapping[str, float],
               start: Mapping[str, float], t_first: float, origin: float) -> Solved | FitResult:
    problem = curve_problem(t, p, form, model=model, error=error, fixed=fixed, t_first=t_first, origin=origin)
    too_few = _too_few(model, error, form, p.size, len(problem.free))
    if too_few:
        return too_few
    guesses = curve_starts(form, t - origin, p)
    candidates = [{**c, **start} for c in guesses] if not start else [dict(start)] + guesses
    vectors = [np.array([problem.spec(n).clip(c.get(n, 1.0)) for n in problem.free]) for c in candidates]
    return _finish(problem, _best(problem, vectors), form)


def _fit_difference(series: Series, form: DifferenceForm, *, model: str, error: str, fixed: Mapping[str, float],
                    start: Mapping[str, float], terms: tuple[str, ...]) -> Solved | FitResult:
    step = series.step()
    if not step.regular or step.index is None or step.h is None:
        return failed(model, "trajectory", error, step.message, form=form)
    used = series.used
    index = step.index[used]
    t, p = series.t[used], series.p[used]
    specs = (*form.params, P0_DIFFERENCE)
    free = tuple(s.name for s in specs if s.name not in fixed)
    too_few = _too_few(model, error, form, p.size, len(free))
    if too_few:
        return too_few
    steps = int(step.index[-1])
    offset = index

    def predict(cols: Array) -> Array:
        values = problem.values(cols)
        if cols.shape[1] == 1:  # one parameter set: the plain-float path
            single = {n: float(np.asarray(v).reshape(-1)[0]) for n, v in values.items()}
            return path_of(form, single["p0"], single, steps)[offset][:, None]
        return iterate(form, values["p0"], values, steps)[offset].reshape(offset.size, -1)

    grid = Grid(float(series.t[0]), float(step.h))
    problem = Problem(model, "trajectory", as_error_model(error), form, specs, free, dict(fixed), predict, t, p,
                      grid=grid,
                      terms=terms, settings=FitSettings(fixed=dict(fixed), t_first=float(series.t[0])),
                      exact=_path_evaluation(form, free, fixed, steps, offset, p, error))
    first = float(series.p[0]) if used[0] else float(p[0])
    k0 = capacity_start(p)
    defaults = {"r": 0.5, "K": k0, "lambda": 1.6, "theta": 1.0, "c": 0.0, "p0": max(first, 1e-9)}
    if "A" in free:
        positive = p[p > 0]
        defaults["A"] = 0.5 * float(positive.min()) if positive.size else 1.0
    shape_fixed = {n: v for n, v in fixed.items() if n != "p0"}

    def seeds() -> Iterator[dict[str, float]]:
        if start:
            yield {**defaults, **start}
        quick = quick_seed(series, form, {**defaults, **shape_fixed})
        if quick is not None:
            yield {**defaults, **quick, "p0": max(first, 1e-9)}
        inc = solve_increments(series, form, model=model, fixed=shape_fixed, start=start, terms=terms)
        if isinstance(inc, Solved):
            yield {**inc.values, "p0": first}
        for factor in (1.0, 1.5):
            yield {**defaults, "K": k0 * factor}

    vectors = (np.array([problem.spec(n).clip(s.get(n, defaults.get(n, 1.0))) for n in free]) for s in seeds())
    return _finish(problem, _best(problem, vectors), form)


def _path_evaluation(form: DifferenceForm, free: tuple[str, ...], fixed: Mapping[str, float], steps: int,
                     offset: Array, observed: Array, error: str) -> Evaluation:
    """The path's residuals and, on demand, its Jacobian by forward sensitivities."""
    # no gaps and no replicates: the path itself is the prediction
    whole = offset.size == steps + 1 and bool(np.all(np.diff(offset) == 1))

    def at(values: dict[str, Any]) -> tuple[Array, Callable[[], Array]]:
        path = path_of(form, values["p0"], values, steps)

        def states_jacobian() -> Array:
            sens = path_jacobian(form, values, free, path)
            return sens if whole else sens[offset]

        return (path if whole else path[offset]), states_jacobian

    return evaluation(free, fixed, observed, error, at)


def quick_seed(series: Series, form: DifferenceForm, guesses: Mapping[str, float]) -> dict[str, float] | None:
    """Linear constants from one regression of the change per step, the others at their guesses."""
    pairs = consecutive_pairs(series)
    if isinstance(pairs, str) or form.basis is None or not form.linear or pairs[1].size <= len(form.linear):
        return None
    _, x, y_next = pairs
    with np.errstate(all="ignore"):
        columns = form.basis(x, {**guesses, **{n: 0.0 for n in form.linear}})
        change = y_next - x
        if len(columns) == 1:  # the usual case: one coefficient, in closed form
            column = columns[0] if np.shape(columns[0]) == x.shape else np.broadcast_to(columns[0], x.shape)
            size = float(column @ column)
            coef = [float(column @ change) / size if size > 0 else math.nan]
        else:
            design = np.column_stack(columns)
            if not np.isfinite(design).all():
                return None
            coef = np.linalg.lstsq(design, change, rcond=None)[0].tolist()
    if not all(math.isfinite(c) for c in coef):
        return None
    return {**{n: guesses[n] for n in form.shape if n in guesses}, **dict(zip(form.linear, coef, strict=True))}
