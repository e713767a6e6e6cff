"""Mathematical identities between model forms, and between fitting routes to the same model.

Each test names the identity it relies on; none of the expected numbers is computed by the engine.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models import get_form

K_TRUE, R_TRUE, P0_TRUE, H = 250.0, 0.6, 3.0, 0.5


def logistic_curve(t: np.ndarray, k: float, r: float, p0: float) -> np.ndarray:
    """Closed-form solution of dp/dt = r·p·(1 − p/K) with p(0) = p0 (written here independently)."""
    return k / (1.0 + (k / p0 - 1.0) * np.exp(-r * t))


# --------------------------------------------------------------------------------------------
# Identity: the logistic ODE's solution sampled every h obeys the Beverton–Holt map with
# lambda = e^(r·h): p(t + h) = λ·p(t) / (1 + (λ − 1)·p(t)/K). (Direct algebra on the closed form.)


def test_beverton_holt_path_equals_sampled_logistic_curve() -> None:
    lam = math.exp(R_TRUE * H)
    steps = 40
    t = H * np.arange(steps + 1)
    path = iterate(get_form("beverton-holt"), P0_TRUE, {"lambda": lam, "K": K_TRUE}, steps)
    curve = get_form("logistic-curve").value(t, {"K": K_TRUE, "r": R_TRUE, "p0": P0_TRUE})
    np.testing.assert_allclose(path, logistic_curve(t, K_TRUE, R_TRUE, P0_TRUE), rtol=1e-12)
    np.testing.assert_allclose(curve, logistic_curve(t, K_TRUE, R_TRUE, P0_TRUE), rtol=1e-12)


def test_beverton_holt_fitted_to_logistic_curve_output_recovers_lambda() -> None:
    t = H * np.arange(30)
    series = Series(t, logistic_curve(t, K_TRUE, R_TRUE, P0_TRUE))
    for method in ("trajectory", "increments"):
        result = fit(series, "beverton-holt", method=method, profile=False)
        assert result.status == "converged", (method, result.message)
        assert result.values["lambda"] == pytest.approx(math.exp(R_TRUE * H), rel=1e-6), method
        assert result.values["K"] == pytest.approx(K_TRUE, rel=1e-6), method
        assert result.metrics is not None and result.metrics.sse < 1e-12 * K_TRUE**2
    traj = fit(series, "beverton-holt", method="trajectory", profile=False)
    assert traj.values["p0"] == pytest.approx(P0_TRUE, rel=1e-6)


def test_logistic_curve_fitted_to_beverton_holt_output_recovers_r() -> None:
    lam = math.exp(R_TRUE * H)
    steps = 29
    path = iterate(get_form("beverton-holt"), P0_TRUE, {"lambda": lam, "K": K_TRUE}, steps)
    t = H * np.arange(steps + 1)
    for error in ("additive", "log"):
        result = fit(Series(t, path), "logistic-curve", method="trajectory", error=error, profile=False)
        assert result.status == "converged", result.message
        assert result.values["r"] == pytest.approx(math.log(lam) / H, rel=1e-6), error
        assert result.values["K"] == pytest.approx(K_TRUE, rel=1e-6), error
        assert result.values["p0"] == pytest.approx(P0_TRUE, rel=1e-6), error


# --------------------------------------------------------------------------------------------
# Identity: p0·e^(r·t) sampled every h is the geometric map with growth r_step = e^(r·h) − 1.


def test_geometric_fitted_to_exponential_curve_output() -> None:
    r = 0.21
    t = H * np.arange(20)
    series = Series(t, 5.0 * np.exp(r * t))
    for method in ("increments", "trajectory"):
        result = fit(series, "geometric", method=method, profile=False)
        assert result.status == "converged", result.message
        assert result.values["r"] == pytest.approx(math.expm1(r * H), rel=1e-9), method
    back = fit(Series(t, iterate(get_form("geometric"), 5.0, {"r": math.expm1(r * H)}, 19)),
               "exponential-curve", profile=False)
    assert back.values["r"] == pytest.approx(r, rel=1e-8)
    assert back.values["p0"] == pytest.approx(5.0, rel=1e-8)


# --------------------------------------------------------------------------------------------
# Identity: Δp = r·p·(1 − p/K) = k·p·(K − p) with k = r/K. The custom form with the single term
# p*(K-p) and the same K is the same regression with the column scaled by K.


def _noisy_logistic(seed: int = 4) -> Series:
    """Invented data: a discrete-logistic path with 2 % multiplicative noise."""
    rng = np.random.default_rng(seed)
    path = iterate(get_form("logistic"), 2.0, {"r": 0.45, "K": 90.0}, 35)
    return Series(np.arange(36.0), path * np.exp(rng.normal(0, 0.02, path.size)))


@pytest.mark.parametrize("capacity", [80.0, 95.0])
def test_custom_term_p_times_k_minus_p_equals_logistic_increments(capacity: float) -> None:
    series = _noisy_logistic()
    custom = fit(series, "custom", terms=["p*(K-p)"], method="increments", capacity=capacity)
    logistic = fit(series, "logistic", method="increments", capacity=capacity)
    assert custom.status == logistic.status == "converged"
    b1, r = custom.parameter("b1"), logistic.parameter("r")
    assert b1.value == pytest.approx(r.value / capacity, rel=1e-12)
    assert b1.se == pytest.approx(r.se / capacity, rel=1e-10)
    assert logistic.derived["k"] == pytest.approx(b1.value, rel=1e-12)
    assert custom.metrics.sse == pytest.approx(logistic.metrics.sse, rel=1e-12)
    np.testing.assert_allclose(custom.residuals, logistic.residuals, rtol=1e-9, atol=1e-12)


def test_custom_term_with_free_capacity_equals_logistic_increments() -> None:
    series = _noisy_logistic(5)
    custom = fit(series, "custom", terms=["p*(K-p)"], method="increments", profile=False)
    logistic = fit(series, "logistic", method="increments", profile=False)
    assert custom.status == logistic.status == "converged"
    assert custom.values["K"] == pytest.approx(logistic.values["K"], rel=1e-6)
    assert custom.values["b1"] == pytest.approx(logistic.values["r"] / logistic.values["K"], rel=1e-6)
    assert custom.metrics.sse == pytest.approx(logistic.metrics.sse, rel=1e-9)


def test_logistic_increments_equals_quadratic_regression() -> None:
    """r·p·(1 − p/K) = a·p + b·p² with a = r and b = −r/K: the same two-constant linear family.

    The custom form with terms p and p^2 is a closed-form regression through the origin, so the
    logistic's concentrated search over K must land on K = −a/b.
    """
    series = _noisy_logistic(6)
    quad = fit(series, "custom", terms=["p", "p^2"], method="increments")
    logistic = fit(series, "logistic", method="increments", profile=False)
    a, b = quad.values["b1"], quad.values["b2"]
    assert b < 0 < a
    assert logistic.values["r"] == pytest.approx(a, rel=1e-6)
    assert logistic.values["K"] == pytest.approx(-a / b, rel=1e-6)
    assert logistic.metrics.sse == pytest.approx(quad.metrics.sse, rel=1e-9)


def test_increments_and_trajectory_agree_on_exact_data() -> None:
    """On noise-free data from a form both methods recover the generating constants exactly."""
    path = iterate(get_form("logistic"), 2.0, {"r": 0.45, "K": 90.0}, 30)
    series = Series(np.arange(31.0), path)
    for method in ("increments", "trajectory"):
        result = fit(series, "logistic", method=method, profile=False)
        assert result.values["r"] == pytest.approx(0.45, rel=1e-7), method
        assert result.values["K"] == pytest.approx(90.0, rel=1e-7), method
