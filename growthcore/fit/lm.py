"""A small Levenberg–Marquardt solver for problems that supply their exact Jacobian.

For a handful of constants and a few hundred residuals the cost of MINPACK's wrapper (shape checks,
finite differences, one call per Jacobian column) outweighs the arithmetic. Here each iteration is
one residual evaluation, one Jacobian when the step is accepted, and a k×k Cholesky solve in plain
floats (numpy's per-call overhead dominates at this size). Bounds are kept by projecting the trial
point; callers fall back to :func:`growthcore.fit.nls.solve` when this solver stops at a bound or
does not converge.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from operator import mul
from typing import Any

import numpy as np

from growthcore.budget import check_budget
from growthcore.fit.nls import NLSOutcome

Array = np.ndarray
#: x (plain floats) ↦ (residuals r, their sum of squares, a function giving M = d predictions / dx
#: at x, the predicted states), or None where not finite. Residuals are observed − predicted on the
#: error scale, so dr/dx = −M.
Evaluation = Callable[[Sequence[float]], "tuple[Array, float, Callable[[], Array], Array] | None"]

#: A step is taken when the sum of squares falls by at least this fraction of the predicted fall.
ACCEPT_RATIO = 1e-4


def solve_exact(
    evaluate: Evaluation,
    x0: Array,
    lower: Array,
    upper: Array,
    *,
    max_nfev: int,
    ftol: float = 1e-10,
    xtol: float = 1e-10,
) -> NLSOutcome:
    """Minimise the sum of squared residuals from ``x0`` within [lower, upper]; raises only when the
    time budget runs out (:class:`~growthcore.budget.BudgetExceeded`).

    Converged when the fall of the sum of squares that the next Gauss–Newton step predicts is at
    most ``ftol`` of it, or when the step shrinks below ``xtol`` relative to x. In the first case
    that last step is taken as well (kept if the sum of squares does not rise). The step is then
    below about sqrt(ftol·(n − k)) ≈ 1e-4 standard errors and, Gauss–Newton converging
    quadratically there, lands on the minimum to the square of that; its Jacobian is not
    recomputed, so the one returned belongs to a point that close, which moves standard errors in
    about the sixth digit.
    """
    lo, hi = lower.tolist(), upper.tolist()
    x = [min(max(v, a), b) for v, a, b in zip(np.asarray(x0, dtype=float).tolist(), lo, hi, strict=True)]
    last = evaluate(x)
    if last is None:
        return _stopped(x, 1, -1)
    sse, jac = last[1], last[2]()
    normal = _normal_equations(jac, last[0])
    if normal is None:
        return _stopped(x, 1, -2)
    a, g = normal
    scale = [max(a[i][i], 1e-300) for i in range(len(x))]
    damping, growth, nfev = 1e-3, 2.0, 1
    while nfev < max_nfev:
        check_budget()
        step = _solve_damped(a, g, damping, scale)
        if step is None:
            damping, growth = damping * growth, growth * 2.0
            continue
        trial = [min(max(xi + si, low), high) for xi, si, low, high in zip(x, step, lo, hi, strict=True)]
        step = [ti - xi for ti, xi in zip(trial, x, strict=True)]
        # the linear model's fall: ||r||² − ||r − M·s||² = 2·sᵀg − sᵀA·s
        predicted = 2.0 * _dot(step, g) - _quadratic(a, step)
        if predicted <= ftol * sse:
            newton = _solve_damped(a, g, 0.0, [0.0] * len(g))
            if newton is not None and _dot(newton, g) <= ftol * sse:
                return _last_step(evaluate, x, last, jac, newton, lo, hi, nfev)
        if math.sqrt(_dot(step, step)) <= xtol * (math.sqrt(_dot(x, x)) + xtol):
            return _converged(x, last, jac, 2, nfev)
        out = evaluate(trial)
        nfev += 1
        ratio = (sse - out[1]) / predicted if out is not None and predicted > 0.0 else -1.0
        if out is None or ratio < ACCEPT_RATIO:
            damping, growth = damping * growth, growth * 2.0
            continue
        x, last, sse, jac = trial, out, out[1], out[2]()
        normal = _normal_equations(jac, last[0])
        if normal is None:
            return _stopped(x, nfev, -3)
        a, g = normal
        scale = [max(s, a[i][i]) for i, s in enumerate(scale)]
        damping *= max(1.0 / 3.0, 1.0 - (2.0 * ratio - 1.0) ** 3)
        growth = 2.0
    return NLSOutcome(x=np.array(x), residuals=last[0], sse=sse, status=5, solver="exact-lm", nfev=nfev, finite=True,
                      jac=jac, predicted=last[3])


def evaluation(free: tuple[str, ...], fixed: Mapping[str, float], observed: Array, error: str,
                at: Callable[[dict[str, Any]], tuple[Array, Callable[[], Array]]]) -> Evaluation:
    """An :data:`Evaluation` from ``at(values)`` = (predicted states, d states / d free constants).

    Residuals and the Jacobian are on the error scale. Runs under the caller's ``np.errstate``
    (:func:`growthcore.fit.fit` silences numpy warnings).
    """
    log = error == "log"
    target = np.log(observed) if log else observed
    base = dict(fixed)

    def evaluate(x: Sequence[float]) -> tuple[Array, float, Callable[[], Array], Array] | None:
        values = dict(base)
        values.update(zip(free, x, strict=True))
        predicted, states_jacobian = at(values)
        residuals = target - (np.log(predicted) if log else predicted)
        sse = float(residuals @ residuals)
        if not math.isfinite(sse):
            return None

        def jacobian() -> Array:
            jac = states_jacobian()
            return jac / predicted[:, None] if log else jac

        return residuals, sse, jacobian, predicted

    return evaluate


def _normal_equations(jac: Array, r: Array) -> tuple[list[list[float]], list[float]] | None:
    """A = MᵀM and g = Mᵀr as nested lists, or None if M is not finite."""
    a = jac.T @ jac
    if not math.isfinite(float(a.sum())):
        return None
    return a.tolist(), (jac.T @ r).tolist()


def _last_step(evaluate: Evaluation, x: list[float], last: tuple[Any, ...], jac: Array, newton: list[float],
               lo: list[float], hi: list[float], nfev: int) -> NLSOutcome:
    """Converged at ``x``; take the final Gauss–Newton step if it keeps the sum of squares down."""
    final = [min(max(xi + si, low), high) for xi, si, low, high in zip(x, newton, lo, hi, strict=True)]
    if final != x:
        out = evaluate(final)
        nfev += 1
        if out is not None and out[1] <= last[1]:
            return _converged(final, out, jac, 1, nfev)
    return _converged(x, last, jac, 1 if any(g != 0.0 for g in newton) else 4, nfev)


def _solve_damped(a: list[list[float]], g: list[float], damping: float, scale: list[float]) -> list[float] | None:
    """Solve (A + damping·diag(scale))·s = g by Cholesky; None if that matrix is not positive definite."""
    k = len(g)
    low: list[list[float]] = []
    for i in range(k):
        row, li = a[i], [0.0] * k
        for j in range(i):
            lj, total = low[j], row[j]
            for m in range(j):
                total -= li[m] * lj[m]
            li[j] = total / lj[j]
        total = row[i] + damping * scale[i]
        for m in range(i):
            total -= li[m] * li[m]
        if not total > 0.0:
            return None
        li[i] = math.sqrt(total)
        low.append(li)
    y = [0.0] * k
    for i in range(k):
        total, li = g[i], low[i]
        for m in range(i):
            total -= li[m] * y[m]
        y[i] = total / li[i]
    for i in reversed(range(k)):
        total = y[i]
        for m in range(i + 1, k):
            total -= low[m][i] * y[m]
        y[i] = total / low[i][i]
    return y


def _dot(u: Sequence[float], v: Sequence[float]) -> float:
    return sum(map(mul, u, v))


def _quadratic(a: list[list[float]], s: list[float]) -> float:
    return sum(si * sum(map(mul, row, s)) for si, row in zip(s, a, strict=True))


def _converged(x: list[float], at_x: tuple[Any, ...], jac: Array, status: int, nfev: int) -> NLSOutcome:
    """``at_x`` is the evaluation at x: (residuals, sse, Jacobian function, predicted states)."""
    return NLSOutcome(x=np.array(x), residuals=at_x[0], sse=at_x[1], status=status, solver="exact-lm", nfev=nfev,
                      finite=True, jac=jac, predicted=at_x[3])


def _stopped(x: list[float], nfev: int, status: int) -> NLSOutcome:
    return NLSOutcome(x=np.array(x), residuals=np.array([]), sse=math.inf, status=status, solver="exact-lm", nfev=nfev,
                      finite=False)
