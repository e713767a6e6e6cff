"""Sweep data (a bifurcation diagram): long-run states against the rate constant, the others held at
their estimates, with the fitted value and its interval to be marked."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.dynamics.longrun import KINDS, classify
from growthcore.dynamics.regimes import rate_parameter, state_scale
from growthcore.fit.result import FitResult
from growthcore.models.base import DifferenceForm
from growthcore.numbers import finite_list, nan_list

Array = np.ndarray


@dataclass(frozen=True)
class Sweep:
    """``rate`` × ``states`` are the points to plot (up to ``shown`` distinct late states per rate value);
    ``grid`` and ``kinds`` give the regime at each rate value."""

    parameter: str
    grid: Array
    kinds: tuple[str, ...]
    periods: tuple[int | None, ...]
    lyapunov: Array
    rate: Array
    states: Array
    estimate: float
    interval: tuple[float, float] | None

    def to_dict(self) -> dict[str, Any]:
        return {"parameter": self.parameter, "grid": finite_list(self.grid), "kinds": list(self.kinds),
                "periods": list(self.periods), "lyapunov": finite_list(self.lyapunov), "rate": finite_list(self.rate),
                "states": finite_list(self.states), "estimate": self.estimate,
                "interval": list(self.interval) if self.interval else None}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Sweep:
        """The sweep a :meth:`to_dict` wrote (a number written as None is NaN again)."""
        def arr(key: str) -> Array:
            return np.array(nan_list(d[key]), dtype=float)

        interval = d.get("interval")
        return cls(str(d["parameter"]), arr("grid"), tuple(str(k) for k in d["kinds"]),
                   tuple(None if q is None else int(q) for q in d["periods"]), arr("lyapunov"), arr("rate"),
                   arr("states"), float(d["estimate"]),
                   None if interval is None else (float(interval[0]), float(interval[1])))


def sweep_range(result: FitResult, parameter: str, interval: tuple[float, float] | None) -> tuple[float, float]:
    """From the lower bound (or 0) to well past the estimate and its interval: for r at least 0..3."""
    assert result.form is not None
    spec = result.form.spec(parameter)
    value = result.values[parameter]
    lo = max(spec.lower, 0.0) if math.isfinite(spec.lower) else min(0.0, 2.0 * value)
    top = max(2.0 * abs(value), 1.25 * interval[1] if interval else 0.0, 3.0 if parameter == "r" else 0.0)
    if parameter == "lambda":
        lo = max(lo, 1e-3)
    return lo, min(top, spec.upper) if math.isfinite(spec.upper) else top


#: Late states of one rate value closer than this (relative to the state scale) are one point on the plot:
#: a fixed point is drawn once, not ``shown`` times (far below a pixel of any axis).
DRAWN_TOL = 1e-6


def _first_of_equal(late: Array, tol: float) -> Array:
    """Mask (same shape as ``late``, states × rate values): True for the first of each run of states, per
    column, that lie within ``tol`` of one another once sorted."""
    order = np.argsort(late, axis=0, kind="stable")
    ranked = np.take_along_axis(late, order, axis=0)
    with np.errstate(invalid="ignore"):
        new = np.ones(late.shape, dtype=bool)
        new[1:] = ~(np.abs(np.diff(ranked, axis=0)) <= tol)
    mask = np.empty_like(new)
    np.put_along_axis(mask, order, new, axis=0)
    return mask


#: Late states drawn per rate value: a chaotic band reads as one at 32 (its windows of period up to 32 as
#: windows), and every state more is sent to the browser (which draws them as cells of one image).
SHOWN_STATES = 32


def sweep(result: FitResult, *, parameter: str | None = None, interval: tuple[float, float] | None = None,
          points: int = 300, shown: int = SHOWN_STATES, span: tuple[float, float] | None = None) -> Sweep | None:
    """Long-run states over ``points`` values of the rate; None for curves or forms without a rate.

    ``interval`` defaults to the t-based 95% interval of the rate; pass the bootstrap interval when there is one.
    """
    form = result.form
    name = parameter or rate_parameter(result)
    if not result.success or not isinstance(form, DifferenceForm) or name is None:
        return None
    if interval is None:
        interval = result.parameter(name).ci95
    lo, hi = span or sweep_range(result, name, interval)
    grid = np.linspace(lo, hi, points)
    values: dict[str, Any] = dict(result.values)
    values[name] = grid
    batch = classify(form, values, result.start_level, scale=state_scale(result), transient=1500, keep=max(shown, 256))
    late = batch.tail[-shown:]
    scale = state_scale(result)
    rate = np.broadcast_to(grid, late.shape).reshape(-1)
    states = late.reshape(-1)
    keep = np.isfinite(states) & (np.abs(states) < 1e6 * scale) & _first_of_equal(late, DRAWN_TOL * scale).reshape(-1)
    kinds = tuple(KINDS[int(k)] for k in batch.kind)
    periods = tuple(int(p) or None for p in batch.period)
    return Sweep(name, grid, kinds, periods, batch.lyapunov, rate[keep], states[keep],
                 float(result.values[name]), (interval[0], interval[1]) if interval else None)
