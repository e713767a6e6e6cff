"""Percentile intervals for what the fitted constants imply: doubling time, lag time, inflection,
maximum rate, and the time to reach a level or a fraction of K.

Each converged bootstrap refit is put back into the result and passed through the same functions
that give the point values (growthcore.derived), so estimate and interval cannot disagree in method.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

import numpy as np

from growthcore.budget import check_budget
from growthcore.derived import derived_quantities, time_to_reach
from growthcore.fit.result import FitResult
from growthcore.numbers import finite_or_none
from growthcore.stats import t_quantile
from growthcore.uncertainty.bootstrap import BootstrapResult

Array = np.ndarray
#: Refits used for derived quantities: each costs a few milliseconds, so a large bootstrap is thinned.
DEFAULT_DRAWS = 200
#: How far past the first time to look for a level, in spans of the data (derived.time_to_reach looks 100).
HORIZON_SPANS = 20.0
SCALARS: tuple[str, ...] = ("k", "growth_factor_per_step", "doubling_time", "specific_rate_at_start",
                            "inflection_state", "inflection_time", "max_rate", "lag_time")


def with_values(result: FitResult, values: Mapping[str, float]) -> FitResult:
    """A copy of ``result`` with some constants replaced (for re-deriving quantities)."""
    params = tuple(replace(p, value=float(values[p.name])) if p.name in values else p for p in result.parameters)
    return replace(result, parameters=params)


def _targets(result: FitResult, levels: Sequence[float], fractions: Sequence[float]) -> list[tuple[str, Any]]:
    out: list[tuple[str, Any]] = [(f"time_to_level_{lvl:g}", ("level", float(lvl))) for lvl in levels]
    if "K" in result.values:
        out += [(f"time_to_{100 * f:g}pct_K", ("fraction", float(f))) for f in fractions]
    return out


def _quantities(fit: FitResult, targets: list[tuple[str, Any]], horizon: float | None) -> dict[str, float]:
    d = derived_quantities(fit)
    out = {name: float(d[name]) for name in SCALARS if isinstance(d.get(name), (int, float))}
    for name, (kind, x) in targets:
        level = x if kind == "level" else x * fit.values["K"]
        out[name] = time_to_reach(fit, level, horizon=horizon)
    return out


def derived_intervals(
    result: FitResult,
    boot: BootstrapResult | None = None,
    *,
    levels: Sequence[float] = (),
    fractions: Sequence[float] = (0.5, 0.9),
    max_draws: int = DEFAULT_DRAWS,
    horizon: float | None = None,
    level: float = 0.95,
) -> dict[str, dict[str, Any]]:
    """name → {"value", "ci95" ([lo, hi] or None), "method", "defined" (refits where it exists), "draws"
    (refits used), "refits" (bootstrap refits in all)}.

    ``levels`` are states to reach; ``fractions`` are fractions of K to reach (forms with K only),
    looked for up to ``horizon`` (default: 20 spans of the data past the first time).
    Without ``boot`` the interval is the delta method's (value ± t·SE from the fit's covariance); with it,
    the bootstrap percentile interval, which needs at least 20 refits where the quantity exists; where
    only some refits give it, ``defined`` says how many.
    """
    if not result.success:
        return {}
    targets = _targets(result, levels, fractions)
    if horizon is None and result.t.size > 1:
        t_first = result.first_time(float(result.t[0]))
        horizon = t_first + HORIZON_SPANS * float(np.ptp(result.t))
    point = _quantities(result, targets, horizon)
    rows: list[dict[str, float]] = []
    if boot is not None and boot.done:
        good = boot.good()
        count = len(next(iter(good.values()), []))
        pick = np.unique(np.linspace(0, count - 1, min(count, max_draws)).astype(int)) if count else np.zeros(0, int)
        for j in pick:
            check_budget()
            rows.append(_quantities(with_values(result, {n: float(v[j]) for n, v in good.items()}), targets, horizon))
    tail = 50.0 * (1.0 - level)
    delta = {} if rows else delta_method_intervals(result, targets, horizon, point, level=level)
    total = int(boot.done) if boot is not None and boot.done else 0
    out: dict[str, dict[str, Any]] = {}
    how: str | None
    for name in dict.fromkeys([*point, *(k for r in rows for k in r)]):
        value = point.get(name, math.nan)
        draws = np.array([r.get(name, math.nan) for r in rows], dtype=float)
        finite = draws[np.isfinite(draws)]
        if rows:
            ci = [float(v) for v in np.percentile(finite, [tail, 100.0 - tail])] if finite.size >= 20 else None
            how = "bootstrap percentile"
        else:
            ci = delta.get(name)
            how = "delta method (t quantile; normal approximation of the constants)" if ci else None
        out[name] = {"value": finite_or_none(value), "ci95": ci,
                     "defined": int(finite.size), "draws": int(draws.size), "refits": total, "method": how}
    return out


def delta_method_intervals(result: FitResult, targets: list[tuple[str, Any]], horizon: float | None,
                           point: Mapping[str, float], *, level: float = 0.95) -> dict[str, list[float]]:
    """value ± t·SE with SE² = gᵀΣg, g the gradient of each quantity in the free constants (central
    differences) and Σ their covariance from the fit; only quantities with a finite gradient."""
    free = [p for p in result.parameters if not p.fixed and p.se is not None]
    if not free or result.correlation is None or result.metrics is None or len(free) != result.correlation.shape[0]:
        return {}
    sd = np.array([p.se for p in free], dtype=float)
    cov = result.correlation * np.outer(sd, sd)
    if not np.all(np.isfinite(cov)):
        return {}
    names = [n for n, v in point.items() if math.isfinite(v)]
    grad = np.full((len(names), len(free)), math.nan)
    for j, p in enumerate(free):
        assert p.se is not None
        h = 1e-5 * max(abs(p.value), p.se)
        up = _quantities(with_values(result, {p.name: p.value + h}), targets, horizon)
        down = _quantities(with_values(result, {p.name: p.value - h}), targets, horizon)
        for i, n in enumerate(names):
            grad[i, j] = (up.get(n, math.nan) - down.get(n, math.nan)) / (2.0 * h)
    dof = result.metrics.n - result.metrics.n_params
    if dof <= 0:
        return {}
    tq = t_quantile(0.5 + level / 2.0, dof)
    out: dict[str, list[float]] = {}
    for i, n in enumerate(names):
        g = grad[i]
        if np.all(np.isfinite(g)):
            se = math.sqrt(max(float(g @ cov @ g), 0.0))
            out[n] = [point[n] - tq * se, point[n] + tq * se]
    return out
