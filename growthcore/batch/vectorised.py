"""Trajectory fits of one form to many series in one vectorised Levenberg–Marquardt run.

Notes
-----
The series of a chunk are padded to a common length; padded points give residual 0, so each
problem's SSE is its own. Every series first starts from the start the single-series fit tries
first; series whose optimum is not accepted there get all their other starts in a second run,
and the best accepted optimum is kept. A series with no accepted optimum is left for the
single-series fit (the caller's fallback), so the vectorised path is never worse than it.
Standard errors, metrics and diagnostics come from :func:`growthcore.fit.problem.build_result`.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import replace

import numpy as np

from growthcore.batch.problems import Prepared, good_enough
from growthcore.fit.batched import solve_batched
from growthcore.fit.problem import build_result
from growthcore.fit.result import FitResult
from growthcore.fit.simulate import iterate
from growthcore.models.base import ModelForm

Array = np.ndarray
#: Tighter than the solver's defaults so that the optimum matches the single-series fit closely.
FTOL = 1e-12
XTOL = 1e-10
MAX_ITER = 400


class _Stack:
    """Padded observations of a chunk of prepared problems of one form."""

    def __init__(self, form: ModelForm, preps: Sequence[Prepared], error: str, fixed: Mapping[str, float]) -> None:
        self.form = form
        self.error = error
        self.fixed = dict(fixed)
        self.free = preps[0].problem.free
        n = max(p.problem.observed.size for p in preps)
        m = len(preps)
        self.mask = np.zeros((n, m), dtype=bool)
        self.obs = np.zeros((n, m))
        self.t = np.zeros((n, m))
        self.offset = np.zeros((n, m), dtype=int)
        self.steps = max(p.steps for p in preps)
        for j, prep in enumerate(preps):
            size = prep.problem.observed.size
            self.mask[:size, j] = True
            self.obs[:size, j] = prep.problem.scaled(prep.problem.observed)
            self.t[:size, j] = prep.problem.t - prep.problem.time_origin
            if prep.offset is not None:
                self.offset[:size, j] = prep.offset

    def predict(self, x: Array, cols: Array) -> Array:
        """Predicted states (n, a, c) for x of shape (k, a, c) and the series ``cols``."""
        values: dict[str, Array | float] = dict(self.fixed)
        for i, name in enumerate(self.free):
            values[name] = x[i]
        with np.errstate(all="ignore"):
            if self.form.kind == "curve":
                return self.form.value(self.t[:, cols][:, :, None], values)
            path = iterate(self.form, values["p0"], values, self.steps)  # (steps + 1, a, c)
            return path[self.offset[:, cols], np.arange(cols.size)[None, :]]

    def residuals(self, x: Array, cols: Array) -> Array:
        """Observed minus predicted on the error scale, 0 at padded points; (n, a, c)."""
        pred = self.predict(x, cols)
        with np.errstate(all="ignore"):
            scaled = np.log(pred) if self.error == "log" else pred
            return np.where(self.mask[:, cols, None], self.obs[:, cols, None] - scaled, 0.0)


class _Known:
    """A problem's ``predict`` that answers from values already computed for the whole chunk.

    ``build_result`` asks for the prediction at the optimum and, when no Jacobian is given, for
    a central-difference Jacobian; both were computed for all series in one vectorised call.
    """

    def __init__(self, inner: Callable[[Array], Array], x: Array, predicted: Array) -> None:
        self.inner, self.x, self.predicted = inner, x, predicted

    def __call__(self, cols: Array) -> Array:
        if cols.shape[1] == 1 and np.array_equal(cols[:, 0], self.x):
            return self.predicted[:, None]
        return self.inner(cols)


def _central_jacobians(stack: _Stack, x: Array, cols: Array) -> tuple[Array, Array]:
    """Predictions (n, a) at x (k, a) and Jacobians d(prediction on the error scale)/dx, (a, n, k).

    The steps are those of :func:`growthcore.fit.nls.jacobian` (central differences).
    """
    k, a = x.shape
    h = np.finfo(float).eps ** (1.0 / 3.0) * np.maximum(np.abs(x), 1e-3)
    shifted = np.repeat(x[:, :, None], 2 * k + 1, axis=2)
    for i in range(k):
        shifted[i, :, 1 + i] += h[i]
        shifted[i, :, 1 + k + i] -= h[i]
    pred = stack.predict(shifted, cols)
    with np.errstate(all="ignore"):
        scaled = np.log(pred) if stack.error == "log" else pred
        jac = (scaled[:, :, 1:1 + k] - scaled[:, :, 1 + k:]) / (2.0 * h.T[None, :, :])
    return pred[:, :, 0], np.transpose(jac, (1, 0, 2))


def _run(stack: _Stack, preps: Sequence[Prepared], series_cols: Array, starts: Array) -> tuple[Array, Array, Array]:
    """Solve the problems (series_cols[j] started at starts[:, j]); returns x, sse, converged."""
    lower = np.stack([preps[s].problem.lower for s in series_cols], axis=1)
    upper = np.stack([preps[s].problem.upper for s in series_cols], axis=1)
    scale = max(preps[s].problem.scale for s in set(series_cols.tolist()))

    def fn(x: Array, idx: Array) -> Array:
        return stack.residuals(x, series_cols[idx])

    out = solve_batched(fn, starts, lower, upper, scale=scale, max_iter=MAX_ITER, ftol=FTOL, xtol=XTOL)
    return out.x, out.sse, out.converged


def fit_vectorised(form: ModelForm, preps: Sequence[Prepared], *, error: str,
                   fixed: Mapping[str, float] | None = None) -> list[FitResult | None]:
    """Fit every prepared problem; None where no optimum is accepted (fit it singly instead).

    All problems must come from the same form with the same fixed constants.
    """
    m = len(preps)
    if m == 0:
        return []
    stack = _Stack(form, preps, error, fixed or {})
    best_x: dict[int, Array] = {}
    best_sse = np.full(m, np.inf)
    iterations_note = "vectorised Levenberg–Marquardt"

    cols = np.arange(m)
    x, sse, ok = _run(stack, preps, cols, np.stack([p.first for p in preps], axis=1))
    accepted = np.zeros(m, dtype=bool)
    for j in range(m):
        if ok[j] and np.isfinite(sse[j]) and good_enough(preps[j].problem, float(sse[j])):
            best_x[j], best_sse[j], accepted[j] = x[:, j], sse[j], True
    retry = [j for j in range(m) if not accepted[j]]
    pairs = [(j, s) for j in retry for s in preps[j].all_starts()[1:]]
    if pairs:
        cols2 = np.array([j for j, _ in pairs])
        x2, sse2, ok2 = _run(stack, preps, cols2, np.stack([s for _, s in pairs], axis=1))
        for c, j in enumerate(cols2):
            better = ok2[c] and np.isfinite(sse2[c]) and sse2[c] < best_sse[j]
            if better and good_enough(preps[j].problem, float(sse2[c])):
                best_x[j], best_sse[j], accepted[j] = x2[:, c], sse2[c], True
    out: list[FitResult | None] = [None] * m
    done = [j for j in range(m) if accepted[j]]
    if not done:
        return out
    x_done = np.stack([best_x[j] for j in done], axis=1)
    pred, jac = _central_jacobians(stack, x_done, np.array(done))
    for c, j in enumerate(done):
        prep = preps[j]
        size = prep.problem.observed.size
        problem = replace(prep.problem, predict=_Known(prep.problem.predict, x_done[:, c], pred[:size, c]))
        result = build_result(problem, x_done[:, c], jac=jac[c, :size],
                              message=f"nonlinear least squares on the path ({iterations_note})",
                              solver="batched-lm")
        if result.metrics is not None and np.isfinite(result.metrics.sse):
            out[j] = result
    return out
