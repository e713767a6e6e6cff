"""What a fitted form implies: growth factor, doubling time, inflection, maximum rate, lag, equilibria.

Notes
-----
Difference forms: f(p) = p + Δ(p) with constants per step h. The per-step growth factor at the
starting level is f(p_s)/p_s and the early doubling time h·ln 2 / ln(f(p_s)/p_s). The inflection is
where the change per step Δ(p) is largest; the maximum rate is that change divided by h.
Curves: dp/dt = F(p); the early doubling time is ln 2 / (F(p0)/p0).
Lag time: the tangent at the inflection point, p = p_i + μ·(t − t_i), meets the starting level p_s at
t = t_i − (p_i − p_s)/μ.
Equilibria p* solve Δ(p*) = 0 (or F(p*) = 0). A fixed point of a map is stable when |f'(p*)| < 1;
an ODE equilibrium when F'(p*) < 0.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from growthcore.fit.result import FitResult
from growthcore.fit.simulate import iterate
from growthcore.models.base import CurveForm, DifferenceForm, ModelForm
from growthcore.numbers import finite_or_none

Array = np.ndarray
MAX_STEPS = 10_000
#: The stability rules, stated with every equilibrium so that no table applies the wrong one.
MAP_RULE = "map: stable when |f'(p*)| < 1"
FLOW_RULE = "growth curve (dp/dt = F(p)): stable when F'(p*) < 0"
#: Forms whose growth slows from the start: a doubling time has no meaning for them (reason given).
NO_DOUBLING = {"monomolecular-curve": "the monomolecular form approaches K with ever slower growth from the start; "
                                      "it does not double at a steady rate"}


def state_upper(values: Mapping[str, float], observed: Array) -> float:
    """An upper state wide enough to hold the data, K and any positive equilibrium near them."""
    top = float(np.nanmax(np.abs(observed))) if observed.size else 1.0
    k = values.get("K")
    if k is not None and math.isfinite(k):
        top = max(top, k)
    return 3.0 * top if top > 0 else 1.0


def _rate(form: ModelForm, p: Array, values: Mapping[str, float]) -> Array:
    with np.errstate(all="ignore"):
        return form.increment(p, values) if isinstance(form, DifferenceForm) else form.rate(p, values)


def _rate_dp(form: ModelForm, p: Array, values: Mapping[str, float]) -> Array:
    with np.errstate(all="ignore"):
        return form.increment_dp(p, values) if isinstance(form, DifferenceForm) else form.rate_dp(p, values)


def equilibria(form: ModelForm, values: Mapping[str, float], upper: float) -> list[dict[str, Any]]:
    """Non-negative equilibria up to ``upper`` with their multiplier and stability."""
    grid = np.concatenate([[0.0], np.geomspace(max(upper, 1e-12) * 1e-6, upper, 2000)])
    g = _rate(form, grid, values)
    roots: list[float] = []
    at_zero = g[0] if np.isfinite(g[0]) else g[1]
    if np.isfinite(at_zero) and abs(at_zero) <= 1e-12 * max(upper, 1.0):
        roots.append(0.0)
    a, b, ga, gb = grid[1:-1], grid[2:], g[1:-1], g[2:]
    with np.errstate(all="ignore"):
        both = np.isfinite(ga) & np.isfinite(gb)
        zero, change = both & (ga == 0.0), both & (ga != 0.0) & (ga * gb < 0)
    for i in np.flatnonzero(zero | change):
        if zero[i]:
            roots.append(float(a[i]))
        else:
            roots.append(float(brentq(lambda q: float(_rate(form, np.array([q]), values)[0]), a[i], b[i],
                                      xtol=1e-13 * b[i])))
    out = []
    for root in sorted(set(roots)):
        where = root if root > 0 or not form.needs_positive else grid[1]
        slope = float(_rate_dp(form, np.array([where]), values)[0])
        if isinstance(form, DifferenceForm):
            multiplier = 1.0 + slope
            stable = bool(math.isfinite(multiplier) and abs(multiplier) < 1.0)
            out.append({"value": root, "multiplier": finite_or_none(multiplier),
                        "stable": stable, "rule": MAP_RULE})
        else:
            # a growth curve is the solution of dp/dt = F(p): its equilibria have a rate slope, not a multiplier
            stable = bool(math.isfinite(slope) and slope < 0.0)
            out.append({"value": root, "multiplier": None, "rate_slope": finite_or_none(slope),
                        "stable": stable, "rule": FLOW_RULE})
    return out


def derived_quantities(result: FitResult) -> dict[str, Any]:
    """Plain numbers that the fitted constants imply; each is None where it does not exist."""
    if not result.success or result.form is None:
        return {}
    with np.errstate(all="ignore"):
        return _derived(result)


def _derived(result: FitResult) -> dict[str, Any]:
    form = result.form
    assert form is not None
    values = result.values
    hi = state_upper(values, result.observed)
    out: dict[str, Any] = {}
    logistic_map = form.id.startswith("logistic") and form.kind == "difference"
    if "K" in values and "r" in values and values["K"] > 0 and logistic_map:
        out["k"] = values["r"] / values["K"]
    out["equilibria"] = equilibria(form, values, hi)
    if isinstance(form, DifferenceForm):
        out.update(_difference_summary(result, form, values, hi))
    else:
        out.update(_curve_summary(result, form, values, hi))
    return out


def _difference_summary(result: FitResult, form: DifferenceForm, values: Mapping[str, float],
                        hi: float) -> dict[str, Any]:
    assert result.grid is not None
    h = result.grid.h
    p_s = result.start_level
    with np.errstate(all="ignore"):
        factor = float(form.next_state(np.array([p_s]), values)[0] / p_s) if p_s > 0 else math.nan
    doubling = h * math.log(2.0) / math.log(factor) if math.isfinite(factor) and factor > 1.0 else math.nan
    states = np.linspace(max(p_s, 0.0), hi, 4000)[1:]
    change = _rate(form, states, values)
    out: dict[str, Any] = {
        "step": h,
        "growth_factor_per_step": finite_or_none(factor),
        "doubling_time": finite_or_none(doubling),
    }
    if np.any(np.isfinite(change)) and np.nanmax(change) > 0:
        j = int(np.nanargmax(change))
        if not 0 < j < states.size - 1:
            return out  # the change keeps rising over the whole range: no inflection, no maximum rate
        p_i, top_change = _refine_peak(form, values, states, j)
        mu = top_change / h
        out["inflection_state"] = p_i
        out["max_rate"] = mu
        path = iterate(form, p_s, values, MAX_STEPS // 10)
        t_i = _first_crossing(result.grid.t0 + h * np.arange(path.size), path, p_i)
        out["inflection_time"] = finite_or_none(t_i)
        out["lag_time"] = finite_or_none(t_i - (p_i - p_s) / mu) if math.isfinite(t_i) and mu > 0 else None
    return out


def _curve_summary(result: FitResult, form: CurveForm, values: Mapping[str, float], hi: float) -> dict[str, Any]:
    if "p0" in values:
        p0 = float(values["p0"])
    else:  # a curve without p0 starts from its own value at the first time
        t_first = result.first_time(result.time_origin)
        p0 = float(form.value(np.array([t_first - result.time_origin]), values)[0])
    with np.errstate(all="ignore"):
        specific = float(form.rate(np.array([p0]), values)[0] / p0) if p0 > 0 else math.nan
    out: dict[str, Any] = {
        "specific_rate_at_start": finite_or_none(specific),
        "doubling_time": finite_or_none(math.log(2.0) / specific) if math.isfinite(specific) and specific > 0 else None,
    }
    if form.id in NO_DOUBLING:
        # growth that slows from the first moment on does not double at a steady rate
        out["doubling_time"] = None
        out["not_defined"] = {"doubling_time": NO_DOUBLING[form.id],
                              "lag_time": "the rate is largest at the start: there is no lag phase",
                              "inflection_time": "the rate is largest at the start: there is no inflection"}
    top = min(hi, values.get("K", hi)) if values.get("K") else hi
    states = np.linspace(max(p0, 0.0), top, 4000)[1:-1]
    if states.size:
        rate = _rate(form, states, values)
        if np.any(np.isfinite(rate)) and np.nanmax(rate) > 0:
            j = int(np.nanargmax(rate))
            interior = 0 < j < states.size - 1
            p_i, mu = _refine_peak(form, values, states, j) if interior else (float(states[j]), float(rate[j]))
            out["inflection_state"] = p_i if interior else None
            out["max_rate"] = mu
            t_i = time_to_reach(result, p_i) if interior else (0.0 if j == 0 else math.nan)
            out["inflection_time"] = finite_or_none(t_i)
            has_lag = math.isfinite(t_i) and mu > 0 and interior
            out["lag_time"] = finite_or_none(t_i - (p_i - p0) / mu) if has_lag else None
    if form.id in NO_DOUBLING:
        out["inflection_time"] = None
    return out


def _refine_peak(form: ModelForm, values: Mapping[str, float], states: Array, j: int) -> tuple[float, float]:
    """The maximum of the rate between the grid neighbours of ``states[j]`` (the grid alone is too coarse)."""
    def neg_rate(q: float) -> float:
        value = float(_rate(form, np.array([q]), values)[0])
        return -value if math.isfinite(value) else math.inf

    a, b = sorted((float(states[j - 1]), float(states[j + 1])))  # states fall when the path declines
    if not a < b:
        return float(states[j]), -neg_rate(float(states[j]))
    best_p, best_rate = float(states[j]), -neg_rate(float(states[j]))
    found = minimize_scalar(neg_rate, bounds=(a, b), method="bounded",
                            options={"xatol": 1e-10 * max(abs(a), abs(b), 1e-300)})
    if found.success and math.isfinite(found.fun) and -found.fun >= best_rate:
        return float(found.x), float(-found.fun)
    return best_p, best_rate


def _first_crossing(t: Array, path: Array, level: float) -> float:
    above = np.flatnonzero(np.isfinite(path) & (path >= level))
    if not above.size:
        return math.nan
    j = int(above[0])
    if j == 0:
        return float(t[0])
    a, b = path[j - 1], path[j]
    return float(t[j - 1] + (level - a) / (b - a) * (t[j] - t[j - 1])) if b != a else float(t[j])


def time_to_reach(result: FitResult, level: float, *, horizon: float | None = None) -> float:
    """First time the fitted path reaches ``level`` (NaN when it does not within the horizon)."""
    if not result.success or result.form is None:
        return math.nan
    t_first = result.first_time(0.0)
    span = float(np.ptp(result.t)) if result.t.size else 1.0
    end = horizon if horizon is not None else t_first + 100.0 * max(span, 1e-9)
    if result.form.kind == "difference":
        assert result.grid is not None
        steps = min(int((end - result.grid.t0) / result.grid.h), MAX_STEPS)
        t = result.grid.t0 + result.grid.h * np.arange(steps + 1)
        p_s = result.start_level
        return _first_crossing(t, iterate(result.form, p_s, result.values, steps), level)
    t = np.linspace(result.time_origin, end, 20001)
    path = result.predict(t)
    crossing = _first_crossing(t, path, level)
    if not math.isfinite(crossing):
        return math.nan
    j = int(np.searchsorted(t, crossing))
    lo, hi = t[max(j - 1, 0)], t[min(j + 1, t.size - 1)]
    f = lambda q: float(result.predict(np.array([q]))[0]) - level  # noqa: E731
    if f(lo) * f(hi) < 0:
        return float(brentq(f, lo, hi, xtol=1e-12 * max(hi, 1.0)))
    return crossing
