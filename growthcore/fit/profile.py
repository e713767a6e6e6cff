"""Profile interval for the carrying capacity K: refit with K fixed on a grid around the optimum."""

from __future__ import annotations

import math
from typing import Callable

import numpy as np
from scipy import special

from growthcore.fit.result import CapacityProfile, FitResult

Array = np.ndarray


def profile_threshold(sse_min: float, n: int, q: int) -> float:
    """SSE_min·(1 + F(0.95; 1, n − q)/(n − q)): the likelihood-ratio cut for one constant."""
    dof = n - q
    if dof <= 0:
        return math.nan
    f95 = float(special.fdtri(1, dof, 0.95))
    return sse_min * (1.0 + f95 / dof)


def capacity_profile(result: FitResult, refit_with_k: Callable[[float, dict[str, float]], FitResult],
                     *, points: int = 41) -> CapacityProfile | None:
    """Scan K over a log grid from K̂/4 to 4·K̂, warm-starting each refit from its neighbour."""
    if not result.success or result.metrics is None or "K" not in result.values or result.parameter("K").fixed:
        return None
    k_hat = result.values["K"]
    if not (math.isfinite(k_hat) and k_hat > 0):
        return None
    m = result.metrics
    threshold = profile_threshold(m.sse, m.n, m.n_params)
    upper = np.geomspace(k_hat, 4.0 * k_hat, points // 2 + 1)
    lower = np.geomspace(k_hat, k_hat / 4.0, points // 2 + 1)[1:]
    sse_by_k: dict[float, float] = {k_hat: m.sse}
    for branch in (upper[1:], lower):
        start = {n: v for n, v in result.values.items() if n != "K"}
        for k in branch:
            refit = refit_with_k(float(k), start)
            if refit.success and refit.metrics is not None:
                sse_by_k[float(k)] = refit.metrics.sse
                start = {n: v for n, v in refit.values.items() if n != "K"}
            else:
                sse_by_k[float(k)] = math.nan
                break  # the form cannot follow the data with K pushed this far
            if sse_by_k[float(k)] > 4 * threshold:
                break
    ks = np.array(sorted(sse_by_k))
    sse = np.array([sse_by_k[k] for k in ks])
    lo = _crossing(ks, sse, threshold, k_hat, side=-1)
    hi = _crossing(ks, sse, threshold, k_hat, side=+1)
    message = ""
    if lo is None or hi is None:
        message = "the profile does not rise above the cut on " + (
            "both sides" if lo is None and hi is None else ("the low side" if lo is None else "the high side")
        ) + " within K̂/4..4K̂: K is poorly determined there"
    return CapacityProfile(ks, sse, threshold, (lo, hi), message)


def _crossing(ks: Array, sse: Array, threshold: float, k_hat: float, *, side: int) -> float | None:
    """Where the profile first rises through the threshold going away from K̂ (log-linear interpolation)."""
    order = np.argsort(ks if side > 0 else -ks)
    ks, sse = ks[order], sse[order]
    mask = (ks >= k_hat) if side > 0 else (ks <= k_hat)
    ks, sse = ks[mask], sse[mask]
    for j in range(1, ks.size):
        if not math.isfinite(sse[j]):
            return None
        if sse[j] >= threshold > sse[j - 1]:
            w = (threshold - sse[j - 1]) / (sse[j] - sse[j - 1])
            return float(math.exp(math.log(ks[j - 1]) + w * (math.log(ks[j]) - math.log(ks[j - 1]))))
    return None
