"""The Series type: step detection, exclusions with reasons, and input errors that name what is wrong."""

from __future__ import annotations

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit

# --------------------------------------------------------------------------------------------
# Step detection


def test_regular_step_is_reported() -> None:
    s = Series(np.arange(10) * 0.25 + 3.0, np.ones(10))
    step = s.step()
    assert step.regular and step.h == pytest.approx(0.25)
    assert step.index.tolist() == list(range(10))
    assert "regular step h = 0.25" in step.message
    assert "gap" not in step.message


def test_regular_step_with_rounding_noise_is_still_regular() -> None:
    """Times typed with float rounding (0.1·n) are a regular grid within the tolerance."""
    t = np.array([0.1 * n for n in range(30)])
    assert Series(t, np.ones(30)).step().regular


def test_gaps_are_whole_multiples_of_the_step() -> None:
    t = np.array([0.0, 1.0, 2.0, 5.0, 6.0, 9.0])
    step = Series(t, np.ones(6)).step()
    assert step.regular and step.h == 1.0
    assert step.index.tolist() == [0, 1, 2, 5, 6, 9]
    assert "2 gap(s)" in step.message


def test_irregular_sampling_is_said_and_difference_forms_refuse_it() -> None:
    t = np.array([0.0, 1.0, 2.5, 3.1, 4.0, 6.2, 7.0])
    s = Series(t, 10.0 / (1 + 9 * np.exp(-0.8 * t)))
    step = s.step()
    assert not step.regular and step.h is None
    assert "irregular" in step.message and "curve" in step.message
    for method in ("increments", "trajectory"):
        result = fit(s, "logistic", method=method, profile=False)
        assert result.status == "failed" and "irregular" in result.message
    curve = fit(s, "logistic-curve", profile=False, time_origin=0.0)
    assert curve.status == "converged"
    assert curve.values["K"] == pytest.approx(10.0, rel=1e-6)  # noise-free logistic curve, K = 10


def test_single_point_has_no_step() -> None:
    step = Series([1.0], [2.0]).step()
    assert not step.regular and "fewer than two" in step.message


def test_gap_pairs_are_not_used_as_one_step() -> None:
    """The increments method pairs only points one grid step apart: 6 points with one gap → 4 pairs."""
    t = np.array([0.0, 1.0, 2.0, 4.0, 5.0, 6.0])
    s = Series(t, [1.0, 2.0, 4.0, 16.0, 32.0, 64.0])
    result = fit(s, "geometric", method="increments")
    assert result.metrics is not None and result.metrics.n == 4
    assert result.values["r"] == pytest.approx(1.0)  # every one-step pair doubles


# --------------------------------------------------------------------------------------------
# Exclusions


def test_exclusions_carry_reasons_and_leave_points_in_the_series() -> None:
    s = Series(np.arange(6.0), [1.0, 2.0, 4.0, np.nan, 16.0, 32.0]).exclude(1, "pipetting error noted in the log")
    assert len(s) == 6
    assert s.used.tolist() == [True, False, True, False, True, True]
    assert s.reason(1) == "pipetting error noted in the log"
    assert s.reason(3) == "value is not a finite number"
    assert s.reason(0) == ""
    points = s.to_points()
    assert points[1] == {"t": 1.0, "p": 2.0, "used": False, "reason": "pipetting error noted in the log"}
    assert points[3]["p"] is None and points[3]["used"] is False and points[3]["reason"]
    restored = s.restore(1)
    assert restored.used[1] and restored.reason(1) == ""
    assert not s.used[1]  # the original is unchanged: Series is immutable


def test_excluded_point_changes_the_fit() -> None:
    t = np.arange(8.0)
    p = 3.0 * 2.0 ** t
    p[4] = 1000.0  # an outlier
    raw = fit(Series(t, p), "exponential-curve", time_origin=0.0, profile=False)
    clean = fit(Series(t, p).exclude(4, "outlier"), "exponential-curve", time_origin=0.0, profile=False)
    assert clean.values["r"] == pytest.approx(np.log(2.0), rel=1e-8)
    assert raw.values["r"] != pytest.approx(np.log(2.0), rel=1e-3)
    assert clean.metrics.n == 7


def test_series_is_read_only() -> None:
    s = Series([0.0, 1.0], [1.0, 2.0])
    with pytest.raises(ValueError):
        s.p[0] = 5.0


# --------------------------------------------------------------------------------------------
# Error messages name the argument and the value


@pytest.mark.parametrize(
    ("t", "p", "fragments"),
    [
        ([0.0, 2.0, 1.0], [1, 2, 3], ["`t` must be non-decreasing", "t[2]=1", "t[1]=2"]),
        ([0.0, np.nan, 2.0], [1, 2, 3], ["`t` must be finite", "t[1]=nan"]),
        ([0.0, 1.0], [1, 2, 3], ["same length", "2 times", "3 values"]),
    ],
)
def test_bad_series_messages(t, p, fragments) -> None:
    with pytest.raises(GrowthcoreInputError) as info:
        Series(np.array(t, float), np.array(p, float))
    for fragment in fragments:
        assert fragment in str(info.value)


def test_exclusion_outside_the_series_is_named() -> None:
    with pytest.raises(GrowthcoreInputError, match=r"exclusion index 7 is outside 0\.\.2"):
        Series([0.0, 1.0, 2.0], [1.0, 2.0, 3.0], excluded={7: "typo"})


def test_rows_must_match_points() -> None:
    with pytest.raises(GrowthcoreInputError, match="`rows`"):
        Series([0.0, 1.0], [1.0, 2.0], rows=(2,))


SERIES = Series(np.arange(8.0), 2.0 * 1.5 ** np.arange(8.0))


@pytest.mark.parametrize(
    ("kwargs", "fragments"),
    [
        ({"model": "logistic", "method": "sideways"}, ["`method`", "'sideways'", "increments", "trajectory"]),
        ({"model": "logistic", "error": "poisson"}, ["`error`", "'poisson'", "additive", "log"]),
        ({"model": "logistik"}, ["unknown model form", "'logistik'", "logistic-curve"]),
        ({"model": "logistic-curve+c"}, ["constant term", "difference forms", "logistic-curve"]),
        ({"model": "geometric", "capacity": 10.0}, ["geometric", "no carrying capacity K"]),
        ({"model": "logistic", "fixed": {"theta": 2.0}}, ["no constant theta", "K", "r"]),
        ({"model": "custom", "terms": ["p*(K-"]}, ["character"]),
        ({"model": "custom", "terms": []}, ["at least one rate term"]),
    ],
)
def test_fit_argument_errors_name_argument_and_value(kwargs, fragments) -> None:
    model = kwargs.pop("model")
    with pytest.raises(GrowthcoreInputError) as info:
        fit(SERIES, model, **kwargs)
    for fragment in fragments:
        assert fragment in str(info.value), (fragment, str(info.value))


def test_ln_forms_name_the_row_with_a_non_positive_value() -> None:
    s = Series(np.arange(6.0), [1.0, 2.0, 0.0, 5.0, 7.0, 8.0], rows=(11, 12, 13, 14, 15, 16))
    for method in ("increments", "trajectory"):
        result = fit(s, "gompertz", method=method, profile=False)
        assert result.status == "failed"
        assert "row 13" in result.message and "p = 0" in result.message
    log_error = fit(s, "logistic", error="log", profile=False)
    assert log_error.status == "failed" and "row 13" in log_error.message


def test_too_few_points_is_a_status() -> None:
    result = fit(Series([0.0, 1.0], [1.0, 2.0]), "logistic")
    assert result.status == "failed" and "2 usable points" in result.message
    three = fit(Series([0.0, 1.0, 2.0], [1.0, 2.0, 3.0]), "theta-logistic", method="trajectory")
    assert three.status == "failed" and "need more points than constants" in three.message


def test_forms_and_fits_cross_to_worker_processes_by_their_id() -> None:
    """A fit (with its form) pickles, as heavy jobs hand results back from worker processes."""
    import pickle

    from growthcore.fit import fit
    from growthcore.models.catalogue import get_form

    for model_id, terms in (("logistic", ()), ("ricker+c", ()), ("logistic-curve", ()), ("custom", ("p*(K-p)", "p"))):
        form = get_form(model_id, terms=terms)
        back = pickle.loads(pickle.dumps(form))
        assert (back.id, back.equation) == (form.id, form.equation)
    series = Series(np.arange(12.0), 50 / (1 + 49 * np.exp(-0.6 * np.arange(12.0))))
    result = fit(series, "logistic", method="trajectory")
    again = pickle.loads(pickle.dumps(result))
    assert again.values == result.values and again.form is not None and again.predict(series.t).size == 12
