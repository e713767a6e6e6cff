"""The increments regression against statsmodels OLS without a constant (reference library).

Source for every check: statsmodels.regression.linear_model.OLS fitted on the same design with no
constant column; for a model without a constant statsmodels reports the uncentered R².

Likelihood convention (growthcore.stats docstring): Gaussian errors with σ² estimated by SSE/n,
which is the same log-likelihood statsmodels reports as ``llf``. statsmodels counts only the
regression coefficients in AIC and BIC (k = df_model + k_constant); growthcore counts the error
variance as well (q = k + 1). So AIC_ours = AIC_statsmodels + 2 and BIC_ours = BIC_statsmodels + ln n.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm  # a test dependency: a missing reference library fails, it does not skip
from statsmodels.sandbox.stats.runs import Runs
from statsmodels.stats.stattools import durbin_watson

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.increments import consecutive_pairs
from growthcore.stats import fit_metrics, regression_through_origin, residual_diagnostics

RTOL = 1e-10


def _invented_series(seed: int, n: int = 40, k: float = 120.0, r: float = 0.35) -> Series:
    """Invented data: a noisy discrete-logistic path (for tests only)."""
    rng = np.random.default_rng(seed)
    p = [4.0]
    for _ in range(n - 1):
        p.append(p[-1] + r * p[-1] * (1 - p[-1] / k))
    values = np.array(p) * np.exp(rng.normal(0.0, 0.03, n))
    return Series(np.arange(n) * 0.5, values)


def _design(series: Series, columns):
    pairs = consecutive_pairs(series)
    assert not isinstance(pairs, str)
    _, x, y_next = pairs
    return np.column_stack([c(x) for c in columns]), y_next - x


CASES = {
    # model id, fixed constants, design columns as functions of p (the form's rate terms)
    "geometric": ("geometric", {}, [lambda p: p]),
    "logistic, K fixed": ("logistic", {"K": 110.0}, [lambda p: p * (1 - p / 110.0)]),
    "logistic+c, K fixed": ("logistic+c", {"K": 110.0}, [lambda p: p * (1 - p / 110.0), lambda p: np.ones_like(p)]),
    "gompertz, K fixed": ("gompertz", {"K": 130.0}, [lambda p: p * np.log(130.0 / p)]),
    "geometric+c": ("geometric+c", {}, [lambda p: p, lambda p: np.ones_like(p)]),
    "theta-logistic, K and theta fixed": ("theta-logistic", {"K": 115.0, "theta": 1.7},
                                           [lambda p: p * (1 - (p / 115.0) ** 1.7)]),
}


@pytest.mark.parametrize("case", list(CASES))
@pytest.mark.parametrize("seed", [1, 2])
def test_increments_fit_equals_statsmodels_ols(case: str, seed: int) -> None:
    model, fixed, columns = CASES[case]
    series = _invented_series(seed)
    design, dy = _design(series, columns)
    ref = sm.OLS(dy, design).fit()
    # With a column of ones (the +c forms) statsmodels detects a constant and reports the centered
    # R²; the uncentered one is then 1 − ssr/uncentered_tss from the same results object.
    uncentered = ref.rsquared if ref.k_constant == 0 else 1.0 - ref.ssr / ref.uncentered_tss
    assert ref.k_constant == (1 if model.endswith("+c") else 0)

    result = fit(series, model, method="increments", fixed=fixed, profile=False)
    assert result.status == "converged", result.message
    free = [p for p in result.parameters if not p.fixed]
    assert len(free) == design.shape[1]
    np.testing.assert_allclose([p.value for p in free], ref.params, rtol=RTOL)
    np.testing.assert_allclose([p.se for p in free], ref.bse, rtol=1e-8)
    ci = np.array([p.ci95 for p in free])
    np.testing.assert_allclose(ci, ref.conf_int(alpha=0.05), rtol=1e-8)
    m = result.metrics
    assert m is not None
    assert m.n == dy.size and m.n_params == design.shape[1]
    assert m.sse == pytest.approx(ref.ssr, rel=RTOL)
    assert m.r2_uncentered == pytest.approx(uncentered, rel=RTOL)
    assert m.log_likelihood == pytest.approx(ref.llf, rel=RTOL)
    assert ref.df_model + ref.k_constant == design.shape[1]  # statsmodels' parameter count in AIC
    assert m.aic == pytest.approx(ref.aic + 2.0, rel=RTOL)
    assert m.bic == pytest.approx(ref.bic + math.log(dy.size), rel=RTOL)
    # AICc from its definition (Hurvich & Tsai 1989) on statsmodels' AIC with q = k + 1.
    q = design.shape[1] + 1
    assert m.aicc == pytest.approx(ref.aic + 2.0 + 2.0 * q * (q + 1) / (dy.size - q - 1), rel=RTOL)


def test_regression_through_origin_equals_statsmodels_two_columns() -> None:
    """Two columns, no constant: coefficients, SEs, covariance, SSE, uncentered R² (statsmodels OLS)."""
    rng = np.random.default_rng(7)
    x = np.column_stack([rng.uniform(1, 9, 30), rng.uniform(-2, 5, 30)])
    y = x @ np.array([1.7, -0.4]) + rng.normal(0, 0.3, 30)
    reg = regression_through_origin(x, y)
    ref = sm.OLS(y, x).fit()
    np.testing.assert_allclose(reg.coef, ref.params, rtol=1e-12)
    np.testing.assert_allclose(reg.se, ref.bse, rtol=1e-10)
    np.testing.assert_allclose(reg.covariance, ref.cov_params(), rtol=1e-10)
    assert reg.sse == pytest.approx(ref.ssr, rel=1e-12)
    assert reg.r2_uncentered == pytest.approx(ref.rsquared, rel=1e-12)
    assert reg.residual_sd == pytest.approx(math.sqrt(ref.scale), rel=1e-12)
    assert reg.dof == ref.df_resid


def test_centered_metrics_equal_statsmodels_with_constant() -> None:
    """R², adjusted R² and the log-likelihood of fit_metrics match statsmodels OLS with a constant.

    For a straight line with intercept the residuals of the states are the regression residuals, so
    statsmodels' centered R² and adjusted R² apply directly (n_params = 2).
    """
    rng = np.random.default_rng(11)
    t = np.linspace(0, 10, 25)
    y = 3.0 + 0.8 * t + rng.normal(0, 0.5, t.size)
    ref = sm.OLS(y, sm.add_constant(t)).fit()
    m = fit_metrics(ref.resid, y, ref.fittedvalues, 2)
    assert m.r2 == pytest.approx(ref.rsquared, rel=1e-12)
    assert m.r2_adjusted == pytest.approx(ref.rsquared_adj, rel=1e-12)
    assert m.log_likelihood == pytest.approx(ref.llf, rel=1e-12)
    assert m.aic == pytest.approx(ref.aic + 2.0, rel=1e-12)
    assert m.bic == pytest.approx(ref.bic + math.log(t.size), rel=1e-12)


def test_durbin_watson_equals_statsmodels() -> None:
    """Durbin–Watson statistic: statsmodels.stats.stattools.durbin_watson."""
    e = np.random.default_rng(5).normal(size=40).cumsum() * 0.1
    assert residual_diagnostics(e).durbin_watson == pytest.approx(durbin_watson(e), rel=1e-12)


def test_runs_test_equals_statsmodels() -> None:
    """Wald–Wolfowitz runs test on residual signs: statsmodels.sandbox.stats.runs.Runs (normal approximation)."""
    e = np.random.default_rng(9).normal(size=37)
    d = residual_diagnostics(e)
    z, p = Runs((e > 0).astype(int)).runs_test(correction=False)
    assert d.runs_z == pytest.approx(z, rel=1e-10)
    assert d.runs_p == pytest.approx(p, rel=1e-10)


def test_concentrated_capacity_is_the_sse_minimum() -> None:
    """With K free, the increments fit is the OLS fit (statsmodels) at K̂, and K̂ minimises that SSE.

    Sources: statsmodels OLS at fixed K; the definition of least squares (no K nearby does better).
    """
    series = _invented_series(3)
    result = fit(series, "logistic", method="increments", profile=False)
    assert result.status == "converged", result.message
    k_hat = result.values["K"]

    def ols_at(k: float):
        design, dy = _design(series, [lambda p: p * (1 - p / k)])
        return sm.OLS(dy, design).fit()

    at_hat = ols_at(k_hat)
    assert result.values["r"] == pytest.approx(float(at_hat.params[0]), rel=1e-9)
    assert result.metrics is not None and result.metrics.sse == pytest.approx(at_hat.ssr, rel=1e-9)
    for factor in (0.99, 0.999, 1.001, 1.01):
        assert ols_at(k_hat * factor).ssr >= at_hat.ssr * (1 - 1e-12)
