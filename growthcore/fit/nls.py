"""Nonlinear least squares with a Jacobian from one vectorised call of the residual function.

The residual function takes a (k, m) array of m parameter columns and returns (n, m) residuals, so
finite differences for all k parameters cost one model evaluation instead of k.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

import numpy as np
from scipy.optimize import leastsq

from growthcore.budget import BudgetExceeded, check_budget

Array = np.ndarray
VectorResiduals = Callable[[Array], Array]

#: Stand-in for a non-finite residual, scaled to the data, so the optimiser backs away from overflow.
PENALTY_FACTOR = 1e6


#: Which solver ran: the exact-Jacobian Levenberg–Marquardt of :mod:`growthcore.fit.lm`, or MINPACK.
Solver = Literal["exact-lm", "minpack"]

#: What a solver's status means, in our words: the one table of stop messages (as
#: scipy.optimize.least_squares keeps its termination messages). 1 to 8 are MINPACK's codes (the
#: ``ier`` of leastsq), which the exact-Jacobian solver uses too; 0 and below are stops before any
#: optimum.
STATUS_MESSAGES: dict[int, str] = {
    -3: "the Jacobian is not finite",
    -2: "the Jacobian is not finite at the start",
    -1: "the starting point gives a non-finite path",
    0: "optimiser stopped",
    1: "converged: the sum of squares stopped falling",
    2: "converged: the constants stopped changing",
    3: "converged: the sum of squares and the constants stopped changing",
    4: "converged: the residuals are orthogonal to every direction the constants can move",
    5: "stopped at the evaluation limit before converging",
    6: "stopped: the sum of squares cannot fall further at this tolerance",
    7: "stopped: the constants cannot improve further at this tolerance",
    8: "stopped: the residuals are orthogonal to the Jacobian to machine precision",
}
#: The statuses that count as convergence.
CONVERGED = frozenset({1, 2, 3, 4})


def status_message(status: int, detail: str = "") -> str:
    """The message of ``status``, with ``detail`` (such as the error that stopped the solver) after it."""
    text = STATUS_MESSAGES.get(status, STATUS_MESSAGES[0])
    return f"{text}: {detail}" if detail else text


@dataclass(frozen=True, kw_only=True)
class NLSOutcome:
    """Where a solver stopped, why (``status``, see :data:`STATUS_MESSAGES`) and at what cost."""

    x: Array
    residuals: Array
    sse: float
    status: int
    solver: Solver
    nfev: int
    finite: bool
    detail: str = ""  # what the status message alone does not say (the error that stopped the solver)
    jac: Array | None = None  # d predictions (on the error scale) / dx at x, when the solver had it exactly
    predicted: Array | None = None  # the predicted states at x, when the solver had them

    @property
    def success(self) -> bool:
        return self.status in CONVERGED and self.finite

    @property
    def message(self) -> str:
        return status_message(self.status, self.detail)


def _steps(x: Array, rel: float) -> Array:
    return rel * np.maximum(np.abs(x), 1e-3)


def jacobian(fn: VectorResiduals, x: Array) -> Array:
    """d residuals / d x by central differences in one call of ``fn`` (for standard errors)."""
    k = x.size
    h = _steps(x, np.finfo(float).eps ** (1.0 / 3.0))
    cols = np.concatenate([x[:, None] + np.diag(h), x[:, None] - np.diag(h)], axis=1)
    r = fn(cols)
    return (r[:, :k] - r[:, k:]) / (2.0 * h)


class Unbounded:
    """Coordinates u in which the bounds vanish: x = lo + e^u, hi − e^u, or a logistic squash."""

    def __init__(self, lower: Array, upper: Array) -> None:
        self.lower = np.asarray(lower, dtype=float)
        self.upper = np.asarray(upper, dtype=float)
        lo_f, hi_f = np.isfinite(self.lower), np.isfinite(self.upper)
        self.both = lo_f & hi_f
        self.low = lo_f & ~hi_f
        self.high = hi_f & ~lo_f
        self.trivial = not np.any(lo_f | hi_f)
        self._plan = [(int(b) + 2 * int(lo) + 4 * int(hi), float(a), float(c)) for b, lo, hi, a, c in
                      zip(self.both, self.low, self.high, self.lower, self.upper, strict=True)]

    def _column_to_x(self, u: Array) -> Array:
        """One parameter column in plain floats: the solver's residual calls are single columns."""
        out = []
        for (kind, lo, hi), ui in zip(self._plan, u[:, 0].tolist(), strict=True):
            if kind == 1:
                out.append(lo + (hi - lo) / (1.0 + math.exp(-ui)) if ui > -700 else lo)
            elif kind == 2:
                out.append(lo + math.exp(min(ui, 700.0)))
            elif kind == 4:
                out.append(hi - math.exp(min(ui, 700.0)))
            else:
                out.append(ui)
        return np.array(out)[:, None]

    def to_u(self, x: Array) -> Array:
        u = np.array(x, dtype=float)
        lo, hi, tiny = self.lower, self.upper, 1e-300
        with np.errstate(all="ignore"):
            u[self.both] = np.log(np.maximum(x[self.both] - lo[self.both], tiny)) - np.log(
                np.maximum(hi[self.both] - x[self.both], tiny))
            u[self.low] = np.log(np.maximum(x[self.low] - lo[self.low], tiny))
            u[self.high] = np.log(np.maximum(hi[self.high] - x[self.high], tiny))
        return u

    def to_x(self, u: Array) -> Array:
        """``u`` of shape (k,) or (k, m) back to the original coordinates."""
        if self.trivial:
            return u
        if u.ndim == 2 and u.shape[1] <= 8:
            return np.hstack([self._column_to_x(u[:, j:j + 1]) for j in range(u.shape[1])])
        x = np.array(u, dtype=float)
        lo, hi = self.lower, self.upper
        if u.ndim > 1:
            lo, hi = lo[:, None], hi[:, None]
        with np.errstate(all="ignore"):
            if np.any(self.both):
                b = self.both
                x[b] = lo[b] + (hi[b] - lo[b]) / (1.0 + np.exp(-u[b]))
            if np.any(self.low):
                x[self.low] = lo[self.low] + np.exp(u[self.low])
            if np.any(self.high):
                x[self.high] = hi[self.high] - np.exp(u[self.high])
        return x


def solve(
    fn: VectorResiduals,
    x0: Array,
    lower: Array,
    upper: Array,
    *,
    scale: float,
    max_nfev: int | None = None,
    tol: float = 1e-12,
) -> NLSOutcome:
    """Minimise ||fn(x)||² within bounds; never raises for numerical trouble (only when the time budget runs out).

    The bounds are removed by a change of coordinates (log for one-sided bounds, a logistic squash
    for two-sided ones) so that MINPACK's Levenberg–Marquardt (``leastsq``) can be used: its
    per-iteration cost is a fraction of a bounded trust-region method's. Standard errors are
    computed afterwards in the original coordinates. ``max_nfev`` defaults to 200·(k + 1).
    """
    penalty = PENALTY_FACTOR * max(scale, 1e-300)
    coords = Unbounded(lower, upper)
    last: dict[str, Array] = {}

    def safe(cols_u: Array) -> Array:
        check_budget()
        with np.errstate(all="ignore"):
            r = fn(coords.to_x(cols_u))
            if not np.all(np.isfinite(r)) or np.any(np.abs(r) > penalty):
                r = np.clip(np.nan_to_num(r, nan=penalty, posinf=penalty, neginf=-penalty), -penalty, penalty)
        return r

    def fun(u: Array) -> Array:
        r = safe(u[:, None])[:, 0]
        last["u"], last["r"] = u.copy(), r
        return r

    def jac(u: Array) -> Array:
        # MINPACK asks for the Jacobian right after the residuals at the same point: reuse them.
        h = _steps(u, math.sqrt(np.finfo(float).eps))
        shifted = safe(u[:, None] + np.diag(h))
        base = last["r"] if "u" in last and np.array_equal(last["u"], u) else safe(u[:, None])[:, 0]
        return (shifted - base[:, None]) / h

    x0 = np.asarray(x0, dtype=float)
    u0 = coords.to_u(x0)
    try:
        with np.errstate(all="ignore"):
            u, _, info, message, ier = leastsq(fun, u0, Dfun=jac, full_output=True, ftol=tol, xtol=tol,
                                               gtol=0.0, maxfev=max_nfev or 200 * (x0.size + 1))
    except BudgetExceeded:
        raise  # out of time stops the request; it is not a failure of this fit
    except (ValueError, TypeError, np.linalg.LinAlgError, FloatingPointError) as exc:
        return NLSOutcome(x=x0, residuals=np.array([]), sse=math.inf, status=0, solver="minpack", nfev=0,
                          finite=False, detail=str(exc))
    x = coords.to_x(np.asarray(u, dtype=float))
    with np.errstate(all="ignore"):
        raw = fn(x[:, None])[:, 0]
    finite = bool(np.all(np.isfinite(raw))) and bool(np.all(np.isfinite(x)))
    with np.errstate(over="ignore"):
        sse = float(raw @ raw) if finite else math.inf
    finite = finite and math.isfinite(sse)  # finite residuals can still overflow when squared
    status = int(ier)
    detail = "" if status in STATUS_MESSAGES else " ".join(str(message).split())
    return NLSOutcome(x=x, residuals=raw, sse=sse, status=status, solver="minpack", nfev=int(info.get("nfev", 0)),
                      finite=finite, detail=detail)
