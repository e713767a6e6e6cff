"""Curves of a fitted population: the population curve with its band, and each series' conditional curve."""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np
from scipy.stats import norm

from growthcore.errors import GrowthcoreInputError
from growthcore.mixed.result import PopulationFit
from growthcore.models.base import CurveForm
from growthcore.models.catalogue import get_form

Array = np.ndarray


def _form(fit: PopulationFit) -> CurveForm:
    form = get_form(fit.model)
    if not isinstance(form, CurveForm):
        raise GrowthcoreInputError(f"{fit.model} is not a curve form")
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
