"""Nonlinear least squares with a Jacobian from one vectorised call of the residual function.

The residual function takes a (k, m) array of m parameter columns and returns (n, m) residuals, so
finite differences for all k parameters cost one model evaluation instead of k.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.optimize import least_squares

Array = np.ndarray
VectorResiduals = Callable[[Array], Array]

#: Stand-in for a non-finite residual, scaled to the data, so the optimiser backs away from overflow.
PENALTY_FACTOR = 1e6


@dataclass(frozen=True)
class NLSOutcome:
    x: Array
    residuals: Array
    jac: Array
    sse: float
    success: bool
    message: str
    nfev: int
    finite: bool


def _steps(x: Array, rel: float) -> Array:
    return rel * np.maximum(np.abs(x), 1e-3)


def jacobian(fn: VectorResiduals, x: Array, *, central: bool = False) -> Array:
    """d residuals / d x by finite differences in one call of ``fn``."""
    k = x.size
    eps = np.finfo(float).eps
    if central:
        h = _steps(x, eps ** (1.0 / 3.0))
        cols = np.concatenate([x[:, None] + np.diag(h), x[:, None] - np.diag(h)], axis=1)
        r = fn(cols)
        return (r[:, :k] - r[:, k:]) / (2.0 * h)
    h = _steps(x, math.sqrt(eps))
    cols = np.concatenate([x[:, None], x[:, None] + np.diag(h)], axis=1)
    r = fn(cols)
    return (r[:, 1:] - r[:, :1]) / h


def solve(
    fn: VectorResiduals,
    x0: Array,
    lower: Array,
    upper: Array,
    *,
    scale: float,
    max_nfev: int = 2000,
    tol: float = 1e-12,
) -> NLSOutcome:
    """Minimise ||fn(x)||² within bounds; never raises for numerical trouble."""
    penalty = PENALTY_FACTOR * max(scale, 1e-300)

    def safe(cols: Array) -> Array:
        with np.errstate(all="ignore"):
            r = fn(cols)
        return np.clip(np.nan_to_num(r, nan=penalty, posinf=penalty, neginf=-penalty), -penalty, penalty)

    def fun(x: Array) -> Array:
        return safe(x[:, None])[:, 0]

    def jac(x: Array) -> Array:
        return jacobian(safe, x)

    x0 = np.asarray(x0, dtype=float)
    try:
        with np.errstate(all="ignore"):
            res = least_squares(
                fun, x0, jac=jac, bounds=(lower, upper), method="trf", x_scale="jac",
                ftol=tol, xtol=tol, gtol=tol, max_nfev=max_nfev,
            )
    except (ValueError, np.linalg.LinAlgError, FloatingPointError) as exc:
        empty = np.zeros((0, x0.size))
        return NLSOutcome(x0, np.array([]), empty, math.inf, False, f"optimiser stopped: {exc}", 0, False)
    with np.errstate(all="ignore"):
        raw = fn(res.x[:, None])[:, 0]
    finite = bool(np.all(np.isfinite(raw)))
    with np.errstate(over="ignore"):
        sse = float(raw @ raw) if finite else math.inf
    finite = finite and math.isfinite(sse)  # finite residuals can still overflow when squared
    return NLSOutcome(res.x, raw, res.jac, sse, bool(res.success) and finite, str(res.message), int(res.nfev), finite)
