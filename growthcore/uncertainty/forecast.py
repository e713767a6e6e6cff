"""Forecasts N steps or a time span past the last observation, with a prediction band.

Notes
-----
The band is the (1 − level)/2 and (1 + level)/2 percentiles of simulated future observations.
Each simulation takes one set of constants (a bootstrap refit, or else a draw from the normal
approximation N(θ̂, Σ) with Σ built from the standard errors and the correlation matrix) and adds
one resampled modified residual on the fitted scale, so the band holds parameter uncertainty and
residual noise. Trajectory fits continue the fitted path and add the residual as observation error.
Increments fits start from the last observed state and add a residual at every step (the
residuals of that method are one-step changes), so their noise accumulates along the path.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.budget import check_budget
from growthcore.data import Series
from growthcore.derived import _first_crossing
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.result import FitResult
from growthcore.fit.simulate import iterate
from growthcore.limits import DEFAULT as LIMITS
from growthcore.models.base import CurveForm, DifferenceForm
from growthcore.numbers import finite_or_none, nan_list
from growthcore.uncertainty.bootstrap import DEFAULT_SEED, BootstrapResult
from growthcore.uncertainty.caution import FORECAST_CAUTION
from growthcore.uncertainty.refit import modified_residuals, refit_problem

Array = np.ndarray
CURVE_POINTS = 50
#: How far an unbounded point forecast is followed to find where it passes the bound.
MAX_STEPS = 10_000
#: A simulated state this many times the largest observation counts as an overflow of the path.
OVERFLOW = 1e6


@dataclass(frozen=True)
class Forecast:
    """Point forecast ``p`` at times ``t`` with the band ``lo``..``hi``; ``warnings`` are for the user."""

    model: str
    method: str
    t: Array
    p: Array
    lo: Array
    hi: Array
    level: float
    source: str
    draws: int
    warnings: tuple[str, ...]
    bound: float | None = None
    bound_crossing: Mapping[str, float | None] | None = None
    caution: str = FORECAST_CAUTION

    def points(self) -> list[dict[str, float | None]]:
        """[{"t", "p", "lo", "hi"}] for the record and the CSV table."""
        return [{"t": float(t), "p": finite_or_none(p), "lo": finite_or_none(lo), "hi": finite_or_none(hi)}
                for t, p, lo, hi in zip(self.t, self.p, self.lo, self.hi, strict=True)]

    def to_dict(self) -> dict[str, Any]:
        return {"points": self.points(), "level": self.level, "source": self.source, "draws": self.draws,
                "warnings": list(self.warnings), "bound": self.bound,
                "bound_crossing": dict(self.bound_crossing) if self.bound_crossing else None,
                "caution": self.caution}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any], *, model: str, method: str) -> Forecast:
        """The forecast a :meth:`to_dict` wrote for the fit of ``model`` by ``method`` (a number written
        as None is NaN again)."""
        points = d["points"]
        crossing = d.get("bound_crossing")
        return cls(model, method, np.array([float(q["t"]) for q in points]),
                   np.array(nan_list(q["p"] for q in points)), np.array(nan_list(q["lo"] for q in points)),
                   np.array(nan_list(q["hi"] for q in points)), float(d["level"]), str(d["source"]),
                   int(d["draws"]), tuple(str(w) for w in d["warnings"]), d.get("bound"),
                   None if crossing is None else dict(crossing), str(d.get("caution", FORECAST_CAUTION)))


def _check_steps(n: int, span: float | None, limit: int) -> None:
    if n > limit:
        what = f"a span of {span:g} is {n:,} steps" if span is not None else f"{n:,} steps"
        raise GrowthcoreInputError(f"a forecast of {what}, over the limit of {limit:,} steps: refused")


def future_times(result: FitResult, *, steps: int | None, span: float | None,
                 max_steps: int = LIMITS.max_forecast_steps) -> Array:
    """Grid steps past the last observation (difference forms), or evenly spaced times (curves); more
    than ``max_steps`` steps are refused."""
    if (steps is None) == (span is None):
        raise GrowthcoreInputError("give either `steps` or `span` for a forecast, not both and not neither")
    if steps is not None and steps < 1:
        raise GrowthcoreInputError(f"`steps` must be at least 1; got {steps}")
    if span is not None and not (math.isfinite(span) and span > 0):
        raise GrowthcoreInputError(f"`span` must be a positive time; got {span}")
    t_last = float(result.t[-1])
    if result.form is not None and result.form.kind == "difference":
        assert result.grid is not None
        h = result.grid.h
        n = steps if steps is not None else int(min(math.floor(span / h + 1e-9), 2**62))  # type: ignore[operator]
        if n < 1:
            raise GrowthcoreInputError(f"a span of {span:g} is shorter than one step h = {h:g}")
        _check_steps(n, span, max_steps)
        return t_last + h * np.arange(1, n + 1)
    if steps is not None:
        _check_steps(steps, None, max_steps)
        dt = float(np.ptp(result.t)) / max(result.t.size - 1, 1) or 1.0
        return t_last + dt * np.arange(1, steps + 1)
    assert span is not None  # exactly one of steps and span was given
    return t_last + np.linspace(span / CURVE_POINTS, span, CURVE_POINTS)


def _parameter_draws(result: FitResult, names: tuple[str, ...], lower: Array, upper: Array,
                     boot: BootstrapResult | None, draws: int,
                     rng: np.random.Generator) -> tuple[Array, str, list[str]]:
    notes: list[str] = []
    if boot is not None and boot.ok.sum() >= 20 and boot.names == names:
        return boot.samples[boot.ok].T, f"{int(boot.ok.sum())} bootstrap refits", notes
    est = np.array([result.values[n] for n in names], dtype=float)
    se = [result.parameter(n).se for n in names]
    if result.correlation is None or any(s is None for s in se) or not names:
        notes.append("no standard errors: the band holds residual noise only, not the uncertainty of the constants")
        return np.repeat(est[:, None], draws, axis=1), "residual noise only", notes
    sd = np.array(se, dtype=float)
    cov = result.correlation * np.outer(sd, sd)
    with np.errstate(all="ignore"):
        x = rng.multivariate_normal(est, cov, size=draws, method="eigh").T
    x = np.clip(x, lower[:, None], upper[:, None])
    return x, "normal approximation of the constants (no bootstrap)", notes


def forecast(
    result: FitResult,
    *,
    steps: int | None = None,
    span: float | None = None,
    boot: BootstrapResult | None = None,
    series: Series | None = None,
    level: float = 0.95,
    bound: float | None = None,
    seed: int = DEFAULT_SEED,
    draws: int = 2000,
    max_steps: int = LIMITS.max_forecast_steps,
) -> Forecast:
    """Forecast ``steps`` grid steps (or a time ``span``) past the last observation.

    Parameters
    ----------
    boot : bootstrap refits of this fit; without them the constants are drawn from their normal
        approximation (``draws`` of them).
    series : the data (needed for increments fits only, to rebuild their residual pool).
    bound : a plausibility bound on the state; the result says when the forecast passes it.
    max_steps : the most steps a forecast may take (a span is counted in steps of the fit's grid).
    """
    if not result.success or result.form is None:
        raise GrowthcoreInputError(f"the {result.model} fit did not converge: nothing to forecast")
    if not 0.0 < level < 1.0:
        raise GrowthcoreInputError(f"`level` must lie between 0 and 1; got {level}")
    t_future = future_times(result, steps=steps, span=span, max_steps=max_steps)
    problem = refit_problem(result, series if result.method == "increments" else None) \
        if result.method != "increments" or series is not None else None
    names = tuple(p.name for p in result.parameters if not p.fixed)
    rng = np.random.default_rng([int(seed), 7919])
    from growthcore.uncertainty.refit import _spec

    lower = np.array([_spec(result, n).lower for n in names])
    upper = np.array([_spec(result, n).upper for n in names])
    x, source, notes = _parameter_draws(result, names, lower, upper, boot, draws, rng)
    b = x.shape[1]
    values: dict[str, Any] = dict(result.values)
    values.update({n: x[i] for i, n in enumerate(names)})
    residuals = problem.residuals if problem is not None else np.asarray(result.residuals, dtype=float)
    pool = modified_residuals(residuals[np.isfinite(residuals)], len(names))
    noise = pool[rng.integers(0, pool.size, (t_future.size, b))] if pool.size else np.zeros((t_future.size, b))
    observed = result.observed[np.isfinite(result.observed)]
    nonnegative = bool(observed.size) and bool(np.all(observed >= 0))
    point, sims = _simulate(result, t_future, values, noise, floor=0.0 if nonnegative else None)
    tail = 50.0 * (1.0 - level)
    headline: list[str] = []
    with np.errstate(all="ignore"):
        # a simulated path that overflows is not a draw of the future: past that point the band ends
        huge = np.abs(sims) > OVERFLOW * max(float(np.max(np.abs(observed))) if observed.size else 1.0, 1e-300)
        finite = np.isfinite(sims) & ~huge
        lo = np.full(t_future.size, math.nan)
        hi = np.full(t_future.size, math.nan)
        share = finite.mean(axis=1)
        end = int(np.flatnonzero(share < 0.95)[0]) if np.any(share < 0.95) else t_future.size
        point_bad = ~np.isfinite(point) | (np.abs(point) > OVERFLOW * max(float(np.max(np.abs(observed))), 1e-300)
                                           if observed.size else ~np.isfinite(point))
        if np.any(point_bad):
            j = int(np.flatnonzero(point_bad)[0])
            end = min(end, j)
            headline.append(
                f"the point forecast overflows from t = {t_future[j]:g}: the forecast and its band end there")
            point = np.where(np.arange(point.size) >= j, math.nan, point)
        for j in range(end):
            check_budget()
            row = sims[j][finite[j]]
            if row.size >= 20:
                lo[j], hi[j] = np.percentile(row, [tail, 100.0 - tail])
    if end < t_future.size and not headline:
        headline.append(f"from t = {t_future[end]:g} more than 5% of simulated paths overflow or fail: "
                        "the band ends there")
    warnings = [*headline, *notes]
    if nonnegative:
        warnings.append("the state cannot be negative: simulated values are truncated at 0, so the band's lower "
                        "edge never goes below 0")
    warnings += _range_warnings(result, t_future, point, lo, hi)
    crossing, more = _bound(result, t_future, point, lo, hi, bound)
    warnings += more
    return Forecast(result.model, result.method, t_future, point, lo, hi, level, source, b,
                    tuple(warnings), bound, crossing)


def _simulate(result: FitResult, t_future: Array, values: Mapping[str, Any], noise: Array,
              *, floor: float | None = None) -> tuple[Array, Array]:
    """(point forecast, simulated observations (n_future, b)); ``floor`` truncates simulated states
    from below (0 for a quantity that cannot be negative)."""
    form = result.form
    estimate = result.values
    log = result.error == "log"
    with np.errstate(all="ignore"):
        if result.method == "increments":
            assert isinstance(form, DifferenceForm)
            p_last = float(result.observed[-1])
            point = iterate(form, p_last, estimate, t_future.size)[1:]
            p = np.full(noise.shape[1], p_last)
            sims = np.empty_like(noise)
            for j in range(t_future.size):
                check_budget()
                p = form.next_state(p, values) + noise[j]
                if floor is not None:
                    p = np.maximum(p, floor)  # a population that reaches 0 stays there
                sims[j] = p
            return point, sims
        if isinstance(form, DifferenceForm):
            assert result.grid is not None
            offsets = np.rint((t_future - result.grid.t0) / result.grid.h).astype(int)
            point = iterate(form, result.start_level, estimate, int(offsets[-1]))[offsets]
            paths = iterate(form, values["p0"], values, int(offsets[-1]))[offsets]
        else:
            assert form is not None
            point = np.asarray(form.value(t_future - result.time_origin, estimate), dtype=float)
            lifted = {n: (v if np.ndim(v) == 0 else np.asarray(v)[None, :]) for n, v in values.items()}
            paths = np.broadcast_to(form.value((t_future - result.time_origin)[:, None], lifted), noise.shape)
        sims = paths * np.exp(noise) if log else paths + noise
        if floor is not None:
            sims = np.maximum(sims, floor)
    return point, sims


def _range_warnings(result: FitResult, t: Array, point: Array, lo: Array, hi: Array) -> list[str]:
    observed = result.observed[np.isfinite(result.observed)]
    if not observed.size:
        return []
    top, bottom = float(observed.max()), float(observed.min())
    out = [f"every forecast time lies past the last observation (t = {float(result.t[-1]):g}): "
           "the forecast is an extrapolation of the fitted law"]
    with np.errstate(invalid="ignore"):
        above = np.flatnonzero(point > top)
        below = np.flatnonzero(point < bottom)
    if above.size:
        out.append(f"from t = {t[above[0]]:g} the point forecast rises above the largest observation ({top:g}): "
                   "the data say nothing about the law there")
    if below.size:
        out.append(f"from t = {t[below[0]]:g} the point forecast falls below the smallest observation ({bottom:g})")
    return out


def _bound(result: FitResult, t: Array, point: Array, lo: Array, hi: Array,
           bound: float | None) -> tuple[dict[str, float | None] | None, list[str]]:
    from growthcore.dynamics.analysis import analyse

    dyn = analyse(result)
    unbounded = dyn is not None and dyn.long_run.kind == "unbounded"
    if bound is None:
        if unbounded:
            return None, ["the fitted form grows without bound: set a plausibility bound on the state to see "
                          "when the forecast passes it"]
        return None, []
    at_point = _first_crossing(t, point, bound)
    if not math.isfinite(at_point):
        at_point = _far_crossing(result, t, bound)
    earliest = _first_crossing(t, np.where(np.isfinite(hi), hi, np.inf), bound)
    latest = _first_crossing(t, lo, bound)
    crossing = {"t": finite_or_none(at_point), "earliest": finite_or_none(earliest), "latest": finite_or_none(latest)}
    notes = []
    if math.isfinite(at_point):
        band = ""
        if math.isfinite(earliest):
            band = f" (the band passes it from t = {earliest:g}" + (
                f" to t = {latest:g})" if math.isfinite(latest) else "; its lower edge stays below within the horizon)")
        notes.append(f"the point forecast passes the plausibility bound {bound:g} at t = {at_point:g}{band}")
    elif math.isfinite(earliest):
        notes.append(f"the upper edge of the band passes the plausibility bound {bound:g} at t = {earliest:g}")
    else:
        notes.append(f"the forecast stays below the plausibility bound {bound:g}" +
                     (" within the horizon" if unbounded else ""))
    return crossing, notes


def _far_crossing(result: FitResult, t: Array, bound: float) -> float:
    """Where the point forecast passes ``bound`` beyond the horizon (NaN if not within MAX_STEPS steps)."""
    form = result.form
    t_end = float(t[-1])
    with np.errstate(all="ignore"):
        if result.method == "increments" and isinstance(form, DifferenceForm) and result.grid is not None:
            path = iterate(form, float(result.observed[-1]), result.values, MAX_STEPS)
            grid = float(result.t[-1]) + result.grid.h * np.arange(MAX_STEPS + 1)
            return _first_crossing(grid, path, bound)
        if isinstance(form, DifferenceForm) and result.grid is not None:
            path = iterate(form, result.start_level, result.values, MAX_STEPS)
            grid = result.grid.t0 + result.grid.h * np.arange(MAX_STEPS + 1)
            return _first_crossing(grid, path, bound)
        assert isinstance(form, CurveForm)
        span = max(t_end - float(result.t[0]), 1e-9)
        grid = np.linspace(t_end, t_end + 100.0 * span, 20001)
        path = np.asarray(form.value(grid - result.time_origin, result.values), dtype=float)
        return _first_crossing(grid, path, bound)
