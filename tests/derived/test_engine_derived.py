"""Derived quantities against closed forms.

Sources (standard calculus on the model equations, written out beside each test):
- logistic curve p(t) = K / (1 + (K/p0 − 1)·e^(−r·t)): inflection at p = K/2 reached at
  t = ln(K/p0 − 1)/r, maximum rate r·K/4; the lag time (tangent at the inflection meets the
  starting level p0) is t_i − (K/2 − p0)/(r·K/4) — the lag definition common in growth-curve practice;
- Gompertz curve K·exp(ln(p0/K)·e^(−r·t)): inflection at p = K/e, maximum rate r·K/e, reached at
  t = ln(ln(K/p0))/r;
- discrete logistic Δp = r·p·(1 − p/K): equilibria 0 and K with map multipliers f'(0) = 1 + r and
  f'(K) = 1 − r (stable when |1 − r| < 1); the largest change r·K/4 at p = K/2;
- exponential curve p0·e^(r·t): doubling time ln 2 / r.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.derived import time_to_reach
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models import get_form

REL = 1e-6


def _curve_fit(model: str, k: float, r: float, p0: float, t_end: float = 30.0):
    t = np.linspace(0.0, t_end, 31)
    values = get_form(model).value(t, {"K": k, "r": r, "p0": p0})
    result = fit(Series(t, values), model, time_origin=0.0, profile=False)
    assert result.status == "converged", result.message
    return result


@pytest.mark.parametrize(("k", "r", "p0"), [(100.0, 0.7, 2.0), (3.5e4, 0.25, 120.0), (1.0, 1.9, 0.01)])
def test_logistic_curve_inflection_max_rate_and_lag(k: float, r: float, p0: float) -> None:
    result = _curve_fit("logistic-curve", k, r, p0, t_end=4.0 * math.log(k / p0) / r)
    kh, rh, p0h = (result.values[n] for n in ("K", "r", "p0"))
    assert (kh, rh, p0h) == pytest.approx((k, r, p0), rel=1e-7)
    d = result.derived
    t_i = math.log(kh / p0h - 1.0) / rh
    mu = rh * kh / 4.0
    assert d["inflection_state"] == pytest.approx(kh / 2.0, rel=REL)
    assert d["max_rate"] == pytest.approx(mu, rel=REL)
    assert d["inflection_time"] == pytest.approx(t_i, rel=REL)
    assert d["lag_time"] == pytest.approx(t_i - (kh / 2.0 - p0h) / mu, rel=REL, abs=1e-9 * t_i)
    # Early doubling time from the specific rate at p0: r·(1 − p0/K).
    assert d["doubling_time"] == pytest.approx(math.log(2.0) / (rh * (1.0 - p0h / kh)), rel=1e-9)


def test_logistic_curve_time_to_reach_a_level() -> None:
    """Inverting the closed form: p(t) = L at t = ln((K/p0 − 1)/(K/L − 1))/r."""
    k, r, p0 = 100.0, 0.7, 2.0
    result = _curve_fit("logistic-curve", k, r, p0)
    for level in (10.0, 50.0, 90.0):
        expected = math.log((k / p0 - 1.0) / (k / level - 1.0)) / r
        assert time_to_reach(result, level) == pytest.approx(expected, rel=REL)
    assert math.isnan(time_to_reach(result, 150.0))  # above K: never reached


def test_gompertz_curve_inflection_at_k_over_e() -> None:
    k, r, p0 = 100.0, 0.4, 2.0
    result = _curve_fit("gompertz-curve", k, r, p0)
    d = result.derived
    assert d["inflection_state"] == pytest.approx(k / math.e, rel=REL)
    assert d["max_rate"] == pytest.approx(r * k / math.e, rel=REL)
    assert d["inflection_time"] == pytest.approx(math.log(math.log(k / p0)) / r, rel=REL)


@pytest.mark.parametrize("r", [0.1, 0.55, 1.2])
def test_exponential_curve_doubling_time(r: float) -> None:
    t = np.linspace(0.0, 10.0, 15)
    result = fit(Series(t, 3.0 * np.exp(r * t)), "exponential-curve", time_origin=0.0, profile=False)
    assert result.derived["doubling_time"] == pytest.approx(math.log(2.0) / r, rel=1e-9)
    assert result.derived["specific_rate_at_start"] == pytest.approx(r, rel=1e-9)


@pytest.mark.parametrize(("r", "stable_at_k"), [(0.5, True), (1.8, True), (2.3, False)])
def test_discrete_logistic_equilibria_and_multipliers(r: float, stable_at_k: bool) -> None:
    k = 80.0
    steps = 30 if r < 2 else 12
    path = iterate(get_form("logistic"), 2.0, {"r": r, "K": k}, steps)
    result = fit(Series(np.arange(steps + 1.0), path), "logistic", method="increments", profile=False)
    assert result.status == "converged", result.message
    assert result.values["r"] == pytest.approx(r, rel=1e-9)
    eq = result.derived["equilibria"]
    values = [e["value"] for e in eq]
    assert values[0] == 0.0 and values[1] == pytest.approx(k, rel=1e-9) and len(values) == 2
    assert eq[0]["multiplier"] == pytest.approx(1.0 + r, rel=1e-9) and eq[0]["stable"] is False
    assert eq[1]["multiplier"] == pytest.approx(1.0 - r, rel=1e-9)
    assert eq[1]["stable"] is stable_at_k
    assert result.derived["k"] == pytest.approx(r / k, rel=1e-9)
    d = result.derived
    assert d["inflection_state"] == pytest.approx(k / 2.0, rel=REL)
    assert d["max_rate"] == pytest.approx(r * k / 4.0, rel=REL)  # h = 1


def test_difference_growth_factor_and_doubling_time() -> None:
    """Geometric growth Δp = r·p: factor 1 + r per step, doubling time h·ln 2 / ln(1 + r)."""
    h, r = 0.5, 0.3
    t = h * np.arange(12)
    series = Series(t, iterate(get_form("geometric"), 4.0, {"r": r}, 11))
    d = fit(series, "geometric", method="increments").derived
    assert d["growth_factor_per_step"] == pytest.approx(1.0 + r, rel=1e-12)
    assert d["doubling_time"] == pytest.approx(h * math.log(2.0) / math.log1p(r), rel=1e-12)


@pytest.mark.parametrize(("model", "p0", "steps", "params", "multiplier"), [
    # Beverton–Holt: fixed point K with f'(K) = 1/λ (derivative of λp/(1 + (λ − 1)p/K) at K).
    pytest.param("beverton-holt", 5.0, 25, {"lambda": 1.8, "K": 500.0}, 1.0 / 1.8, id="beverton-holt"),
    # Ricker p·exp(r(1 − p/K)): f'(K) = 1 − r (May 1974), stable for 0 < r < 2.
    pytest.param("ricker", 3.0, 30, {"r": 1.5, "K": 60.0}, 1.0 - 1.5, id="ricker"),
])
def test_positive_equilibrium_and_multiplier(model: str, p0: float, steps: int, params: dict[str, float],
                                             multiplier: float) -> None:
    """The fixed point K of a path iterated exactly from the map, its multiplier f'(K), and |f'(K)| < 1."""
    path = iterate(get_form(model), p0, params, steps)
    result = fit(Series(np.arange(steps + 1.0), path), model, method="increments", profile=False)
    eq = [e for e in result.derived["equilibria"] if e["value"] > 0]
    assert eq[0]["value"] == pytest.approx(params["K"], rel=1e-8)
    assert eq[0]["multiplier"] == pytest.approx(multiplier, rel=1e-7)
    assert eq[0]["stable"] is True
