"""Trajectory problems of single series, built as the single-series fit builds them.

The vectorised solver and the pooled fits both need each series' :class:`Problem` (free constants,
bounds, predictions at the fitted points) and its candidate starts without solving it yet.

Notes
-----
The construction follows :mod:`growthcore.fit.trajectory` step for step (same specs, settings,
grid and prediction) so that :func:`growthcore.fit.problem.build_result` gives the same standard
errors, metrics and diagnostics. Inputs that the single-series fit rejects with a message (too few
points, ln of a non-positive state, an irregular grid) are not prepared: the caller hands them to
:func:`growthcore.fit.fit`, which gives the message.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from growthcore.data import Series
from growthcore.fit.problem import P0_DIFFERENCE, Problem
from growthcore.fit.result import FitSettings, Grid, as_error_model
from growthcore.fit.simulate import iterate
from growthcore.fit.starts import _linearised, capacity_start, curve_starts, mid_time
from growthcore.fit.trajectory import curve_origin, curve_problem
from growthcore.models.base import CurveForm, DifferenceForm, ModelForm

Array = np.ndarray


@dataclass(frozen=True)
class Prepared:
    """One series' trajectory problem and its candidate starts, in the order they are tried.

    ``offset`` holds the grid position of each fitted point (difference forms; ``None`` for curves).
    ``first`` is the first start; ``all_starts()`` gives every start (computed only when the first
    does not lead to an accepted optimum, since most series need no more).
    """

    problem: Problem
    first: Array
    offset: Array | None
    steps: int
    _starts: Callable[[], tuple[Array, ...]]

    def all_starts(self) -> tuple[Array, ...]:
        return self._starts()


def prepare(series: Series, form: ModelForm, *, model: str, error: str,
            fixed: Mapping[str, float] | None = None) -> Prepared | None:
    """The trajectory problem of ``series``, or None when the single-series fit must decide."""
    fixed = dict(fixed or {})
    used = series.used
    t, p = series.t[used], series.p[used]
    if p.size < 3:
        return None
    if (error == "log" or form.needs_positive) and np.any(p <= 0):
        return None
    if isinstance(form, DifferenceForm):
        return _difference(series, form, model=model, error=error, fixed=fixed)
    return _curve(series, t, p, form, model=model, error=error, fixed=fixed)


def _curve(series: Series, t: Array, p: Array, form: CurveForm, *, model: str, error: str,
           fixed: dict[str, float]) -> Prepared | None:
    problem = curve_problem(t, p, form, model=model, error=error, fixed=fixed,
                            t_first=float(series.t[0]), origin=curve_origin(form, series, None))
    if p.size <= len(problem.free):
        return None
    elapsed = t - problem.time_origin

    def vector(c: Mapping[str, float]) -> Array:
        return np.array([problem.spec(n).clip(c.get(n, 1.0)) for n in problem.free])

    def starts() -> tuple[Array, ...]:
        return tuple(vector(c) for c in curve_starts(form, elapsed, p))

    return Prepared(problem, vector(first_curve_start(form, elapsed, p)), None, 0, starts)


def first_curve_start(form: CurveForm, t: Array, p: Array) -> dict[str, float]:
    """The first of :func:`growthcore.fit.starts.curve_starts` (K = 1.05·max p), computed alone."""
    pmax = float(np.max(p))
    pos = p > 0
    first = float(p[pos][0]) if np.any(pos) else max(pmax, 1.0) * 1e-2
    k0 = max(pmax, 1e-12) * 1.05
    r0, p0 = _linearised(form.id, t, p, k0, first)
    start = {"K": k0, "r": r0, "p0": p0, "nu": 1.0, "t_mid": mid_time(k0, r0, p0)}
    return {n: start[n] for n in form.param_names if n in start}


def _difference(series: Series, form: DifferenceForm, *, model: str, error: str,
                fixed: dict[str, float]) -> Prepared | None:
    step = series.step()
    if not step.regular or step.index is None or step.h is None:
        return None
    used = series.used
    offset = step.index[used]
    t, p = series.t[used], series.p[used]
    specs = (*form.params, P0_DIFFERENCE)
    free = tuple(s.name for s in specs if s.name not in fixed)
    if p.size <= len(free):
        return None
    steps = int(step.index[-1])

    def predict(cols: Array) -> Array:
        values = problem.values(cols)
        return iterate(form, values["p0"], values, steps)[offset].reshape(offset.size, -1)

    problem = Problem(model, "trajectory", as_error_model(error), form, specs, free, dict(fixed), predict, t, p,
                      grid=Grid(float(series.t[0]), float(step.h)),
                      settings=FitSettings(fixed=dict(fixed), t_first=float(series.t[0])))
    first = float(series.p[0]) if used[0] else float(p[0])
    k0 = capacity_start(p)
    defaults = {"r": 0.5, "K": k0, "lambda": 1.6, "theta": 1.0,
                "A": 0.5 * float(np.min(p[p > 0])) if np.any(p > 0) else 1.0, "c": 0.0, "p0": max(first, 1e-9)}
    seeds = [{**defaults, "K": k0 * factor} for factor in (1.0, 1.5)]
    starts = tuple(np.array([problem.spec(n).clip(s.get(n, 1.0)) for n in free]) for s in seeds)
    return Prepared(problem, starts[0], offset, steps, lambda: starts)


def good_enough(problem: Problem, sse: float) -> bool:
    """The single-series fit's test for accepting a start: residuals small beside the data's spread."""
    spread = float(np.var(problem.scaled(problem.observed))) * problem.observed.size
    return sse < 0.5 * spread
