"""Curves of a fitted population: the population curve with its band, and each series' conditional curve."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
from scipy.stats import norm

from growthcore.errors import GrowthcoreInputError
from growthcore.mixed.result import PopulationFit
from growthcore.models.base import CurveForm
from growthcore.models.catalogue import get_form
from growthcore.numbers import finite_list, finite_or_none

Array = np.ndarray


def _form(fit: PopulationFit) -> CurveForm:
    form = get_form(fit.model)
    if not isinstance(form, CurveForm):
        raise GrowthcoreInputError(f"population curves are drawn for the curve forms; {fit.model} is a difference form")
    return form


def _value(form: CurveForm, t: Array, values: Mapping[str, float]) -> Array:
    with np.errstate(all="ignore"):
        return np.asarray(form.value(t, values), dtype=float)


def population_band(fit: PopulationFit, t: Array, group: str | None = None, *, level: float = 0.95
                    ) -> tuple[Array, Array, Array]:
    """(curve, lower, upper) of the population curve of ``group`` at times ``t``.

    The band is the delta-method interval from the covariance of the fixed effects (the curve of a
    typical series, not the spread between series).
    """
    if not fit.success:
        raise GrowthcoreInputError("the population fit did not converge: no curve to draw")
    form = _form(fit)
    t = np.asarray(t, dtype=float)
    elapsed = t - fit.time_origin
    values = fit.population_constants(group)
    mid = _value(form, elapsed, values)
    names = list(fit.fixed)
    if not fit.fixed_cov:
        return mid, np.full_like(mid, math.nan), np.full_like(mid, math.nan)
    g = group if group is not None else fit.conditions[0]
    grad = np.zeros((t.size, len(names)))
    for j, name in enumerate(names):
        const, _, cond = name.partition(":")
        if cond and cond != g:
            continue
        step = 1e-6 * max(abs(values[const]), 1e-8)
        up = _value(form, elapsed, {**values, const: values[const] + step})
        down = _value(form, elapsed, {**values, const: values[const] - step})
        grad[:, j] = (up - down) / (2 * step)
    cov = np.asarray(fit.fixed_cov, dtype=float)
    se = np.sqrt(np.maximum(np.einsum("nk,kl,nl->n", grad, cov, grad), 0.0))
    z = float(norm.ppf(0.5 + level / 2))
    if fit.error == "log":  # the interval is symmetric on the log scale
        return mid, mid * np.exp(-z * se / mid), mid * np.exp(z * se / mid)
    return mid, mid - z * se, mid + z * se


def series_curve(fit: PopulationFit, name: str, t: Array) -> Array:
    """The conditional curve of series ``name`` (its population constants plus its deviations)."""
    form = _form(fit)
    for s in fit.series:
        if s.name == name:
            return _value(form, np.asarray(t, dtype=float) - fit.time_origin, s.constants)
    raise GrowthcoreInputError(f"no series {name!r} in this population fit")


def population_view(fit: PopulationFit, observed: Mapping[str, tuple[Array, Array]], *, points: int = 160
                    ) -> dict[str, object]:
    """Plain data for a picture of the fit: each condition's population curve and band on one time
    grid, and each series' observations with its conditional curve.

    ``observed`` maps series names to their (times, values) as shown (all points, used or not).
    """
    if not fit.success:
        raise GrowthcoreInputError("the population fit did not converge: no curves to draw")
    lows = [float(np.min(t)) for t, _ in observed.values() if len(t)]
    highs = [float(np.max(t)) for t, _ in observed.values() if len(t)]
    lo, hi = (min(lows), max(highs)) if lows else (0.0, 1.0)
    grid = np.linspace(lo, hi if hi > lo else lo + 1.0, points)
    groups = []
    for g in fit.conditions or ("all",):
        mid, low, high = population_band(fit, grid, g if fit.conditions else None)
        groups.append({"group": g, "mid": _plain(mid), "lo": _plain(low), "hi": _plain(high)})
    series = []
    for s in fit.series:
        t, p = observed.get(s.name, (np.array(s.t), np.full(len(s.t), math.nan)))
        series.append({"name": s.name, "group": s.group, "t": _plain(np.asarray(t, dtype=float)),
                       "p": _plain(np.asarray(p, dtype=float)), "curve_p": _plain(series_curve(fit, s.name, grid))})
    return {"t": _plain(grid), "groups": groups, "series": series}


def forest_rows(fit: PopulationFit, constant: str) -> dict[str, object]:
    """Each series' separate-fit and conditional (shrunken) value of ``constant``, and the population's."""
    if not fit.success:
        raise GrowthcoreInputError("the population fit did not converge: nothing to compare")
    if fit.series and constant not in fit.series[0].constants:
        raise GrowthcoreInputError(f"{fit.model} has no constant {constant!r}")
    rows = [{"name": s.name, "group": s.group,
             "separate": None if s.separate is None else finite_or_none(s.separate.get(constant)),
             "conditional": finite_or_none(s.constants[constant])} for s in fit.series]
    populations = []
    for g in fit.conditions or ("all",):
        values = fit.population_constants(g if fit.conditions else None)
        populations.append({"group": g, "value": finite_or_none(values[constant])})
    est = fit.fixed.get(constant)
    ci = list(est.ci95) if est is not None and est.ci95 is not None else None
    return {"constant": constant, "rows": rows, "population": populations,
            "ci95": ci, "random": constant in fit.random}


def _plain(a: Array) -> list[float | None]:
    return finite_list(np.asarray(a, dtype=float).tolist())
