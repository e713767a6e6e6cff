"""growthcore.explore: the change per step, candidate terms and their regressions through the origin."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.errors import ExpressionError
from growthcore.explore import (
    Candidate,
    candidate_column,
    candidate_fit,
    candidates_for,
    capacity_from_fit,
    capacity_range,
    change_table,
    observation_index,
)
from growthcore.fit.forms import fit_forms


def logistic_path(r: float, k: float, p0: float, n: int) -> np.ndarray:
    """The discrete logistic p_{n+1} = p_n + r·p_n·(1 − p_n/K), iterated exactly (invented)."""
    p = [p0]
    for _ in range(n - 1):
        p.append(p[-1] + r * p[-1] * (1 - p[-1] / k))
    return np.array(p)


def noisy_series(n: int = 60, seed: int = 3) -> Series:
    rng = np.random.default_rng(seed)
    p = logistic_path(0.3, 50.0, 2.0, n) * np.exp(rng.normal(0, 0.03, n))
    return Series(np.arange(n) * 2.0, p, name="invented", time_unit="h", value_unit="mg/L")


def test_change_table_is_the_difference_of_neighbours() -> None:
    # arithmetic identity: Δp_n = p_{n+1} − p_n and Δp/Δt = Δp_n / h
    s = Series([0.0, 2.0, 4.0, 6.0], [1.0, 3.0, 4.0, 8.0])
    table = change_table(s)
    assert table.regular and table.h == 2.0
    np.testing.assert_array_equal(table.index, [0, 1, 2])
    np.testing.assert_array_equal(table.dp, [2.0, 1.0, 4.0])
    np.testing.assert_array_equal(table.rate, [1.0, 0.5, 2.0])


def test_change_table_skips_a_missing_grid_step_and_marks_exclusions() -> None:
    s = Series([0.0, 1.0, 3.0, 4.0, 5.0], [1.0, 2.0, 4.0, 5.0, 7.0]).exclude(3, "excluded by the user")
    table = change_table(s)
    # (1, 3) is two steps apart: not a pair; pairs touching the excluded point 3 are kept but unused
    np.testing.assert_array_equal(table.index, [0, 2, 3])
    np.testing.assert_array_equal(table.used, [True, False, False])


def test_change_table_on_irregular_times_says_so() -> None:
    s = Series([0.0, 1.0, 2.5, 3.1], [1.0, 2.0, 3.0, 3.5])
    table = change_table(s)
    assert not table.regular
    assert "irregular" in table.message and "neighbouring samples" in table.message
    np.testing.assert_allclose(table.rate, [1.0, 1.0 / 1.5, 0.5 / 0.6])


def test_capacity_range_recovers_k_of_an_exact_logistic() -> None:
    # identity: for the exact discrete logistic Δp/p = r − (r/K)·p, so the zero crossing of that line is K
    p = logistic_path(0.4, 80.0, 3.0, 40)
    rng = capacity_range(Series(np.arange(40.0), p))
    assert rng.estimate == pytest.approx(80.0, rel=1e-8)
    assert rng.low == 0.0 and rng.high >= 2.0 * np.max(p)


def test_candidate_fit_matches_statsmodels_regression_through_the_origin() -> None:
    # reference: statsmodels OLS without a constant, whose rsquared is the uncentered R²
    sm = pytest.importorskip("statsmodels.api")
    s = noisy_series()
    k = 47.0
    fitted = candidate_fit(s, Candidate("p·(1 − p/K)", "logistic"), k)
    assert fitted.success
    x = s.p[:-1]
    g = x * (1 - x / k)
    ols = sm.OLS(np.diff(s.p), g[:, None]).fit()
    assert fitted.slope == pytest.approx(float(ols.params[0]), rel=1e-10)
    assert fitted.slope_se == pytest.approx(float(ols.bse[0]), rel=1e-8)
    assert fitted.r2_uncentered == pytest.approx(float(ols.rsquared), rel=1e-10)
    lo, hi = ols.conf_int(0.05)[0]
    assert fitted.slope_ci95 == pytest.approx((lo, hi), rel=1e-8)
    np.testing.assert_allclose(fitted.g, g, rtol=1e-12)
    np.testing.assert_allclose(fitted.fitted, fitted.slope * g, rtol=1e-12)


def test_candidate_fit_moves_with_k() -> None:
    s = noisy_series()
    a = candidate_fit(s, Candidate("g", "logistic"), 40.0)
    b = candidate_fit(s, Candidate("g", "logistic"), 60.0)
    assert a.slope != b.slope and a.r2_uncentered != b.r2_uncentered


def test_candidate_fit_needs_a_positive_k() -> None:
    out = candidate_fit(noisy_series(), Candidate("g", "gompertz"), 0.0)
    assert out.status == "failed" and "positive" in out.message


def test_candidate_fit_of_theta_logistic_reports_theta() -> None:
    out = candidate_fit(noisy_series(), Candidate("g", "theta-logistic"), 50.0)
    assert out.success and "theta" in out.shape
    # K far below the data drives theta to its lower bound, and the result says so
    low = candidate_fit(noisy_series(), Candidate("g", "theta-logistic"), 5.0)
    assert low.success and low.shape["theta"] == pytest.approx(0.05) and low.at_bound == ("theta",)
    assert out.at_bound == ()


def test_candidate_column_is_the_term() -> None:
    p = np.array([1.0, 2.0, 5.0])
    np.testing.assert_allclose(candidate_column("logistic", p, 10.0), p * (1 - p / 10.0))
    np.testing.assert_allclose(candidate_column("gompertz", p, 10.0), p * np.log(10.0 / p))
    np.testing.assert_allclose(candidate_column("custom", p, 10.0, terms=["p*(K-p)"]), p * (10.0 - p))
    with pytest.raises(ValueError):
        candidate_column("ricker", p, 10.0)


def test_candidates_for_explains_forms_without_a_term() -> None:
    cands, notes = candidates_for(["logistic+c", "ricker", "logistic-curve", "custom", "logistic"], ["p", "p*(K-p)"])
    assert [c.model for c in cands] == ["logistic", "custom", "custom"]
    assert any("ricker" in n for n in notes) and any("closed-form curve" in n for n in notes)
    with pytest.raises(ExpressionError):
        candidates_for(["custom"], ["p*(K-"])


def test_fit_forms_holds_k_only_where_a_form_has_it() -> None:
    s = noisy_series()
    fits = fit_forms(s, ["geometric", "logistic", "logistic-curve"], method="both", capacity=50.0)
    assert [(f.model, f.method) for f in fits] == [
        ("geometric", "increments"), ("geometric", "trajectory"), ("logistic", "increments"),
        ("logistic", "trajectory"), ("logistic-curve", "trajectory")]
    logistic = fits[2]
    assert logistic.parameter("K").fixed and logistic.parameter("K").value == 50.0


def test_capacity_from_fit_recovers_k_of_an_exact_logistic() -> None:
    p = logistic_path(0.4, 80.0, 3.0, 40)
    k, note = capacity_from_fit(Series(np.arange(40.0), p), ["geometric", "logistic"])
    assert k == pytest.approx(80.0, rel=1e-5)
    assert "logistic" in note
    assert capacity_from_fit(Series(np.arange(40.0), p), ["geometric"])[0] is None


def test_observation_index_maps_residuals_to_points() -> None:
    s = noisy_series().exclude(5, "excluded by the user")
    result = fit_forms(s, ["logistic"], method="increments", capacity=50.0)[0]
    index = observation_index(s, result)
    np.testing.assert_array_equal(s.t[index], result.t)
    assert 5 not in set(index) and 6 not in set(index)  # pair (4,5) and (5,6) are gone


def test_engine_does_not_import_dash_or_plotly() -> None:
    code = "import sys, growthcore.explore; sys.exit(bool({'dash', 'plotly'} & set(sys.modules)))"
    assert subprocess.run([sys.executable, "-c", code]).returncode == 0
