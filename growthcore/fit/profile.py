"""Profile interval for the carrying capacity K: refit with K fixed on a grid around the optimum,
then find where the profile crosses its cut by root-finding between the bracketing grid values.

Notes
-----
Two cuts on the profile SSE(K) are given (Bates & Watts, *Nonlinear Regression Analysis*, 1988, §6.1):

- F-calibrated (the interval reported as the profile interval):
  SSE(K) ≤ SSE_min·(1 + F(0.95; 1, n − q)/(n − q)), exact for linear models with Gaussian errors;
- chi-square likelihood ratio: n·ln(SSE(K)/SSE_min) ≤ χ²(0.95; 1), the large-sample cut,
  i.e. SSE(K) ≤ SSE_min·exp(χ²(0.95; 1)/n).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy import optimize, special

from growthcore.budget import BudgetExceeded, check_budget
from growthcore.fit.result import CapacityProfile, FitResult

Array = np.ndarray
#: A refit with K held: its sum of squares and every constant's value, or None where it failed.
Refit = tuple[float, dict[str, float]] | None
#: Relative precision of an interval end in K.
ROOT_RTOL = 1e-8


def profile_threshold(sse_min: float, n: int, q: int) -> float:
    """SSE_min·(1 + F(0.95; 1, n − q)/(n − q)): the F-calibrated cut for one constant."""
    dof = n - q
    if dof <= 0:
        return math.nan
    f95 = float(special.fdtri(1, dof, 0.95))
    return sse_min * (1.0 + f95 / dof)


def likelihood_ratio_threshold(sse_min: float, n: int) -> float:
    """SSE_min·exp(χ²(0.95; 1)/n): the chi-square likelihood-ratio cut for one constant."""
    if n <= 0:
        return math.nan
    chi95 = float(special.chdtri(1, 0.05))
    return sse_min * math.exp(chi95 / n)


def capacity_profile(result: FitResult, refit_with_k: Callable[[float, dict[str, float]], Refit],
                     *, points: int = 25,
                     refit_grid: Callable[[Array, dict[str, float]], list[Refit]] | None = None,
                     ) -> CapacityProfile | None:
    """Scan K over a log grid from K̂/4 to 4·K̂ (each refit warm-started from its neighbour), then
    locate both cuts' crossings between the bracketing grid values with Brent's method.

    ``refit_with_k(K, start)`` gives the optimum's sum of squares and values only: the profile needs
    no standard errors, so its refits skip them. ``refit_grid(Ks, start)``, where given, refits a
    branch of the grid at once from the optimum's values; a K it leaves as None is refitted alone
    from its neighbour, as without it."""
    if not result.success or result.metrics is None or "K" not in result.values or result.parameter("K").fixed:
        return None
    k_hat = result.values["K"]
    if not (math.isfinite(k_hat) and k_hat > 0):
        return None
    m = result.metrics
    threshold = profile_threshold(m.sse, m.n, m.n_params)
    threshold_lr = likelihood_ratio_threshold(m.sse, m.n)
    top_cut = max(threshold, threshold_lr) if math.isfinite(threshold_lr) else threshold
    upper = np.geomspace(k_hat, 4.0 * k_hat, points // 2 + 1)
    lower = np.geomspace(k_hat, k_hat / 4.0, points // 2 + 1)[1:]
    sse_by_k: dict[float, float] = {k_hat: m.sse}
    start_by_k: dict[float, dict[str, float]] = {k_hat: {n: v for n, v in result.values.items() if n != "K"}}
    for branch in (upper[1:], lower):
        start = start_by_k[k_hat]
        at_once = refit_grid(branch, start) if refit_grid is not None else [None] * branch.size
        for k, ready in zip(branch, at_once, strict=True):
            check_budget()
            refit = ready if ready is not None else refit_with_k(float(k), start)
            if refit is not None:
                sse_by_k[float(k)] = refit[0]
                start = {n: v for n, v in refit[1].items() if n != "K"}
                start_by_k[float(k)] = start
            else:
                sse_by_k[float(k)] = math.nan
                break  # the form cannot follow the data with K pushed this far
            if sse_by_k[float(k)] > 4 * top_cut:
                break
    ks = np.array(sorted(sse_by_k))
    sse = np.array([sse_by_k[k] for k in ks])

    def profile_at(k: float, near: float) -> float:
        refit = refit_with_k(k, start_by_k.get(near, start_by_k[k_hat]))
        return refit[0] if refit is not None else math.nan

    def ends(cut: float) -> tuple[float | None, float | None]:
        return (_crossing(ks, sse, cut, k_hat, -1, profile_at), _crossing(ks, sse, cut, k_hat, +1, profile_at))

    lo, hi = ends(threshold)
    interval_lr = ends(threshold_lr) if math.isfinite(threshold_lr) else (None, None)
    message = ""
    if lo is None or hi is None:
        message = "the profile does not rise above the cut on " + (
            "both sides" if lo is None and hi is None else ("the low side" if lo is None else "the high side")
        ) + " within K̂/4..4K̂: K is poorly determined there"
    return CapacityProfile(ks, sse, threshold, (lo, hi), message, threshold_lr=threshold_lr,
                           interval_lr=interval_lr)


def _crossing(ks: Array, sse: Array, threshold: float, k_hat: float, side: int,
              profile_at: Callable[[float, float], float]) -> float | None:
    """Where the profile first rises through ``threshold`` going away from K̂: the grid brackets the
    crossing, Brent's method on ln K finds it (the refits are warm-started from the inner grid value)."""
    order = np.argsort(ks if side > 0 else -ks)
    ks, sse = ks[order], sse[order]
    mask = (ks >= k_hat) if side > 0 else (ks <= k_hat)
    ks, sse = ks[mask], sse[mask]

    known: dict[float, float] = {}

    def gap(log_k: float, start: float) -> float:
        check_budget()
        value = known[log_k] if log_k in known else profile_at(math.exp(log_k), start) - threshold
        return value if math.isfinite(value) else math.inf

    for j in range(1, ks.size):
        if not math.isfinite(sse[j]):
            return None
        if sse[j] >= threshold > sse[j - 1]:
            inner, outer = float(ks[j - 1]), float(ks[j])
            a, b = sorted((math.log(inner), math.log(outer)))
            # Brent's method starts at the bracket's ends, whose profile the grid has already
            known.update({math.log(inner): float(sse[j - 1]) - threshold, math.log(outer): float(sse[j]) - threshold})
            try:
                root = optimize.brentq(gap, a, b, args=(inner,), xtol=ROOT_RTOL, rtol=ROOT_RTOL, maxiter=100)
            except BudgetExceeded:
                raise
            except (ValueError, RuntimeError):
                w = (threshold - sse[j - 1]) / (sse[j] - sse[j - 1])  # the refits misbehave: fall back
                return float(math.exp(math.log(inner) + w * (math.log(outer) - math.log(inner))))
            return float(math.exp(root))
    return None
