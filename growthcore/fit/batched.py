"""Many small least-squares problems solved together by a vectorised Levenberg–Marquardt method.

Bootstrap resamples and whole plates share one model, so each iteration evaluates the model for
every problem (and every finite-difference shift) in one numpy call instead of a Python loop.

Notes
-----
For problem j with residuals r_j(x) (observed − predicted on the fitted scale) and Jacobian J_j,
the step solves (J_jᵀJ_j + λ_j·diag(J_jᵀJ_j)) δ = −J_jᵀ r_j; it is taken (and λ_j divided by 3)
when the SSE falls, otherwise λ_j grows fourfold. Steps are projected onto the bounds.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from growthcore.budget import check_budget

Array = np.ndarray
#: residuals(x, idx): x has shape (k, a, c) for the a problems listed in idx and c evaluations each;
#: returns (n, a, c). Points a problem lacks must give residual 0.
BatchResiduals = Callable[[Array, Array], Array]


@dataclass(frozen=True)
class BatchedOutcome:
    x: Array  # (k, m)
    sse: Array  # (m,)
    converged: Array  # (m,) bool
    iterations: Array  # (m,) int
    jac: Array  # (m, n, k) at the solution
    residuals: Array  # (n, m)


def _safe(r: Array, penalty: float) -> Array:
    return np.clip(np.nan_to_num(r, nan=penalty, posinf=penalty, neginf=-penalty), -penalty, penalty)


def _jacobian(fn: BatchResiduals, x: Array, idx: Array, penalty: float) -> tuple[Array, Array]:
    """Residuals (n, a) and forward-difference Jacobian (a, n, k) from one call."""
    k, a = x.shape
    h = math.sqrt(np.finfo(float).eps) * np.maximum(np.abs(x), 1e-3)  # (k, a)
    cols = np.repeat(x[:, :, None], k + 1, axis=2)
    for i in range(k):
        cols[i, :, i + 1] += h[i]
    with np.errstate(all="ignore"):
        r = _safe(fn(cols, idx), penalty)  # (n, a, k+1)
    base = r[:, :, 0]
    jac = (r[:, :, 1:] - base[:, :, None]) / h.T[None, :, :]  # (n, a, k)
    return base, np.transpose(jac, (1, 0, 2))


def solve_batched(
    fn: BatchResiduals,
    x0: Array,
    lower: Array,
    upper: Array,
    *,
    scale: float = 1.0,
    max_iter: int = 200,
    ftol: float = 1e-10,
    xtol: float = 1e-10,
) -> BatchedOutcome:
    """Minimise every problem's SSE from its own start ``x0[:, j]`` within the bounds."""
    x = np.array(x0, dtype=float)
    k, m = x.shape
    lo = np.broadcast_to(np.asarray(lower, dtype=float).reshape(k, -1), (k, m))
    hi = np.broadcast_to(np.asarray(upper, dtype=float).reshape(k, -1), (k, m))
    penalty = 1e6 * max(scale, 1e-300)
    x = np.clip(x, lo, hi)
    all_idx = np.arange(m)
    r, jac = _jacobian(fn, x, all_idx, penalty)
    sse = np.einsum("na,na->a", r, r)
    lam = np.full(m, 1e-3)
    active = np.ones(m, dtype=bool)
    converged = np.zeros(m, dtype=bool)
    iterations = np.zeros(m, dtype=int)
    residuals = r.copy()
    jac_all = jac.copy()
    eye = np.eye(k)
    for _ in range(max_iter):
        check_budget()
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        j = jac_all[idx]
        ra = residuals[:, idx]
        a_mat = np.einsum("ank,anl->akl", j, j)
        g = np.einsum("ank,na->ak", j, ra)
        diag = np.einsum("akk->ak", a_mat)
        floor = 1e-12 * (diag.max(axis=1, keepdims=True) + 1e-300)
        damped = a_mat + (lam[idx][:, None] * np.maximum(diag, floor))[:, :, None] * eye
        try:
            step = -np.linalg.solve(damped, g[:, :, None])[:, :, 0]
        except np.linalg.LinAlgError:
            step = -np.stack([np.linalg.lstsq(d, gg, rcond=None)[0] for d, gg in zip(damped, g, strict=True)])
        x_try = np.clip(x[:, idx] + step.T, lo[:, idx], hi[:, idx])
        r_try, jac_try = _jacobian(fn, x_try, idx, penalty)
        sse_try = np.einsum("na,na->a", r_try, r_try)
        better = sse_try < sse[idx]
        iterations[idx] += 1
        take = idx[better]
        moved = np.abs(x_try[:, better] - x[:, take])
        small_step = np.all(moved <= xtol * (np.abs(x[:, take]) + xtol), axis=0)
        small_gain = (sse[take] - sse_try[better]) <= ftol * np.maximum(sse[take], 1e-300)
        x[:, take] = x_try[:, better]
        sse[take] = sse_try[better]
        residuals[:, take] = r_try[:, better]
        jac_all[take] = jac_try[better]
        lam[take] = np.maximum(lam[take] / 3.0, 1e-12)
        done = take[small_step | small_gain]
        reject = idx[~better]
        lam[reject] *= 4.0
        # A rejected step whose predicted gain is already negligible means the minimum is reached;
        # waiting for λ to blow up would only burn iterations.
        predicted_gain = -(np.einsum("ak,ak->a", g, step) + 0.5 * np.einsum("ak,akl,al->a", step, a_mat, step))
        negligible = predicted_gain[~better] <= ftol * np.maximum(sse[reject], 1e-300)
        stuck = reject[(lam[reject] > 1e12) | negligible]
        converged[done] = True
        converged[stuck] = True  # no step lowers the SSE: a (local) minimum within the bounds
        active[done] = False
        active[stuck] = False
    finite = np.all(np.abs(residuals) < penalty, axis=0)
    return BatchedOutcome(x, sse, converged & finite, iterations, jac_all, residuals)
