"""Typed results: from_dict beside to_dict, which solver ran, the solver's status table, finite-or-None.

Data are invented (a logistic map with multiplicative noise); the round trips are identities of the
code itself, the scipy.optimize.least_squares convention of one table of status messages is common
practice.
"""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest

from growthcore.batch.pooled import joint_fit
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.fit.lm import solve_exact
from growthcore.fit.nls import CONVERGED, STATUS_MESSAGES, NLSOutcome, solve, status_message
from growthcore.fit.result import (
    CapacityProfile,
    FitResult,
    FitSettings,
    Grid,
    JointLayout,
    ParameterEstimate,
    as_method,
    as_solver,
)
from growthcore.fit.simulate import iterate
from growthcore.models.catalogue import get_form
from growthcore.numbers import finite_list, finite_or_none
from growthcore.reopen import check_record, recompute
from growthcore.stats import Diagnostics, LackOfFit, Metrics
from tests.record_cases import FIXTURES, census_record


def _series() -> Series:
    t = np.arange(30.0)
    p = iterate(get_form("logistic"), 5.0, {"r": 0.6, "K": 100.0}, 29)
    return Series(t, p * np.exp(np.random.default_rng(3).normal(0.0, 0.02, t.size)))


CASES = [("logistic", "trajectory", {}), ("logistic", "increments", {}), ("logistic-curve", "trajectory", {}),
         ("logistic", "increments", {"capacity": 100.0}), ("gompertz-curve", "trajectory", {})]


@pytest.mark.parametrize(("model", "method", "options"), CASES)
def test_fit_result_round_trips_through_its_dict(model: str, method: str, options: dict[str, float]) -> None:
    result = fit(_series(), model, method=method, **options)
    d = json.loads(json.dumps(result.to_dict(), allow_nan=False))
    again = FitResult.from_dict(d)
    assert again.to_dict() == d
    assert again.solver == result.solver and again.nfev == result.nfev
    np.testing.assert_array_equal(again.predicted, result.predicted)


def test_the_solver_that_ran_is_recorded() -> None:
    s = _series()
    exact = fit(s, "logistic", method="trajectory")
    assert exact.solver == "exact-lm" and exact.nfev is not None and exact.nfev > 0
    linear = fit(s, "logistic", method="increments", capacity=100.0)
    assert linear.solver == "linear" and linear.nfev is None  # a closed-form regression counts no evaluations
    concentrated = fit(s, "logistic", method="increments")
    assert concentrated.solver == "minpack" and concentrated.nfev is not None and concentrated.nfev > 0
    too_few = fit(Series([0.0, 1.0], [1.0, 2.0]), "logistic")
    assert too_few.status == "failed" and too_few.solver is None and too_few.to_dict()["solver"] is None


def test_fit_settings_keep_every_key_in_its_order() -> None:
    """Each fit writes its settings keys in one order; read back, they write the same JSON text."""
    s = _series()
    late = Series(s.t + 5.0, s.p)
    written = [fit(s, "logistic", method="increments").settings.to_dict(),
               fit(s, "logistic", method="trajectory", fixed={"K": 100.0}).settings.to_dict(),
               fit(s, "logistic-curve", method="trajectory").settings.to_dict(),
               joint_fit([s, late], "logistic-curve").result.settings.to_dict(),
               fit(Series([0.0, 1.0], [1.0, 2.0]), "logistic").settings.to_dict()]
    assert [list(d) for d in written] == [["fixed", "pairs", "t_first", "p_first"], ["fixed", "t_first"],
                                          ["fixed", "t_first", "time_origin"], ["fixed", "joint"], []]
    assert written[1]["fixed"] == {"K": 100.0} and list(written[3]["joint"]) == ["series", "points", "scopes"]
    for d in written:
        assert json.dumps(FitSettings.from_dict(_json(d)).to_dict()) == json.dumps(d)
    everything = FitSettings(fixed={"K": 100.0}, pairs=29, t_first=1994.0, p_first=14.0, time_origin=1990.0,
                             start={"r": 0.5}, joint=JointLayout(("a", "b"), (10, 12), {"r": "all", "K": "series"}))
    every_key = everything.to_dict()
    assert set(every_key) == {f.name for f in dataclasses.fields(FitSettings)}  # a field to_dict drops fails here
    assert FitSettings.from_dict(_json(every_key)) == everything
    fixture = json.loads((FIXTURES / "fit-record-v1.json").read_text(encoding="utf-8"))
    for entry in fixture["fits"]:
        assert json.dumps(FitResult.from_dict(entry).to_dict()["settings"]) == json.dumps(entry["settings"])
    assert FitSettings.from_dict({"fixed": {}, "from_elsewhere": 1}).to_dict() == {"fixed": {}}  # still reads


def test_parts_round_trip() -> None:
    est = ParameterEstimate("K", 101.5, 2.5, (96.0, 107.0), False, True, "carrying capacity", "state")
    assert ParameterEstimate.from_dict("K", est.to_dict()) == est
    missing = ParameterEstimate("r", math.nan, None, None, True)
    assert ParameterEstimate.from_dict("r", missing.to_dict()).to_dict() == missing.to_dict()
    prof = CapacityProfile(np.array([90.0, 100.0, 110.0]), np.array([4.0, 1.0, math.inf]), 2.0, (95.0, None),
                           "the profile stops at the top of the grid", 2.2, (94.0, None))
    assert CapacityProfile.from_dict(prof.to_dict()).to_dict() == prof.to_dict()
    assert Grid.from_dict(Grid(1990.0, 10.0).to_dict()) == Grid(1990.0, 10.0)
    metrics = Metrics(20, 3, 1.5, 0.27, 0.3, 0.98, 0.97, -2.0, 10.0, 11.5, 13.0, r2_uncentered=0.99)
    assert Metrics.from_dict(metrics.to_dict()) == metrics
    lof = LackOfFit(0.5, 10, 0.25, 5, 1.0, 0.46, "no lack of fit")
    diag = Diagnostics(1.9, 11, 11.5, -0.2, 0.84, False, "no systematic misfit", lof)
    assert Diagnostics.from_dict(diag.to_dict()) == diag
    assert LackOfFit.from_dict(lof.to_dict()) == lof


def test_literal_fields_are_checked_when_read() -> None:
    d = fit(_series(), "logistic").to_dict()
    with pytest.raises(GrowthcoreInputError, match="`method` must be one of increments, trajectory; got 'path'"):
        FitResult.from_dict({**d, "method": "path"})
    with pytest.raises(GrowthcoreInputError, match="`solver` must be one of"):
        FitResult.from_dict({**d, "solver": "newton"})
    assert as_method("increments") == "increments" and as_solver("minpack") == "minpack"


def test_record_fixture_and_new_records_read_with_the_solver_fields() -> None:
    old = json.loads((FIXTURES / "fit-record-v1.json").read_text(encoding="utf-8"))
    check_record(old)  # written before the fields existed
    assert all("solver" not in f for f in old["fits"])
    assert all(FitResult.from_dict(f).solver is None for f in old["fits"])
    record = census_record()
    check_record(record)  # the shipped schema (version 2) describes solver and nfev
    assert {f["solver"] for f in record["fits"] if f["status"] == "converged"} <= {"exact-lm", "minpack", "linear"}
    stripped = json.loads(json.dumps(record))
    for f in stripped["fits"]:
        f.pop("solver"), f.pop("nfev")
    assert recompute(stripped).reproduced  # how the optimum was reached is not compared


def test_solver_outcome_is_built_by_keyword_and_its_message_comes_from_the_table() -> None:
    with pytest.raises(TypeError):
        NLSOutcome(np.zeros(1), np.zeros(1), 0.0, 1, "minpack", 3, True)  # type: ignore[misc]
    outcome = NLSOutcome(x=np.zeros(1), residuals=np.zeros(1), sse=0.0, status=5, solver="minpack", nfev=3,
                         finite=True)
    assert not outcome.success and outcome.message == STATUS_MESSAGES[5]
    assert status_message(0, "singular matrix") == "optimiser stopped: singular matrix"
    assert all(STATUS_MESSAGES[s].startswith("converged") for s in CONVERGED)

    def bad_start(x: object) -> None:
        return None

    stopped = solve_exact(bad_start, np.array([1.0]), np.array([0.0]), np.array([2.0]), max_nfev=10)
    assert stopped.status == -1 and stopped.message == "the starting point gives a non-finite path"
    assert stopped.solver == "exact-lm" and not stopped.success
    line = solve(lambda cols: np.array([[1.0], [2.0], [3.0]]) - cols[0] * np.array([[1.0], [1.0], [1.0]]),
                 np.array([0.0]), np.array([-10.0]), np.array([10.0]), scale=1.0)
    assert line.success and line.solver == "minpack" and line.message == STATUS_MESSAGES[line.status]
    assert line.x[0] == pytest.approx(2.0, rel=1e-6)  # the mean minimises the sum of squares


def test_finite_or_none() -> None:
    assert finite_or_none(None) is None
    assert finite_or_none(math.nan) is None and finite_or_none(-math.inf) is None
    assert finite_or_none(np.float64(2.5)) == 2.5 and type(finite_or_none(np.float64(2.5))) is float
    assert finite_or_none(3) == 3.0
    assert finite_list(np.array([1.0, math.nan, math.inf])) == [1.0, None, None]


# ---------------------------------------------------------------------------------------------
# from_dict beside every to_dict: the dict read back writes the same dict (an identity of the code)


def _json(d: dict) -> dict:
    return json.loads(json.dumps(d, allow_nan=False))


def _again(obj, **context) -> tuple[dict, object]:
    """``obj``'s dict through JSON, read back with its own class's from_dict."""
    d = _json(obj.to_dict())
    back = type(obj).from_dict(d, **context)
    assert back.to_dict() == d
    return d, back


def _plates() -> list[Series]:
    """Invented replicate series of two groups (logistic curves with multiplicative noise)."""
    rng = np.random.default_rng(5)
    t = np.arange(0.0, 24.0, 2.0)
    out = []
    for g, k in (("a", 80.0), ("b", 120.0)):
        for rep in range(3):
            p = k / (1 + (k / 4.0 - 1) * np.exp(-0.5 * t))
            out.append(Series(t, p * np.exp(rng.normal(0.0, 0.02, t.size)), name=f"{g}_{rep + 1}"))
    return out


def test_batch_results_round_trip() -> None:
    from growthcore.batch import group_difference_test, joint_fit
    from growthcore.batch.summary import summarise_groups

    series = _plates()
    labels = ["a", "a", "a", "b", "b", "b"]
    test = group_difference_test(series, labels, "logistic-curve", "K")
    _d, back = _again(test)
    assert test.status == "done" and back.full is None and back.p_value == test.p_value
    joint = joint_fit(series, "logistic-curve", scopes={"K": "group"}, groups=labels)
    _d, back = _again(joint)
    assert back.success and back.sse == pytest.approx(joint.sse, rel=1e-15)
    assert back.value("K", "a") == joint.value("K", "a")
    failed_test = group_difference_test(series[:3] + series[3:4], ["a", "a", "a", "b"], "logistic-curve", "K")
    _again(failed_test)  # whatever its status, NaN figures come back as NaN
    summaries = summarise_groups("logistic", ["r", "K"], {"a": ["s1", "s2"], "b": ["s3"]},
                                 {"s1": {"r": 0.5, "K": 80.0}, "s2": {"r": 0.6, "K": 82.0}, "s3": None})
    for row in summaries:
        _d, back = _again(row)
        assert back == row


def test_comparison_and_step_round_trip() -> None:
    from growthcore.compare import compare
    from growthcore.data import StepInfo
    from growthcore.workflow import Comparison, comparison_of

    s = _series()
    fits = [fit(s, "logistic", method="trajectory"), fit(s, "gompertz", method="trajectory"),
            fit(Series([0.0, 1.0], [1.0, 2.0]), "logistic")]
    for row in compare(fits):
        _again(row)
    comparison = comparison_of(fits)
    _d, back = _again(comparison)
    assert isinstance(back, Comparison) and back.notes == comparison.notes
    for series in (s, Series([0.0, 1.0, 3.5], [1.0, 2.0, 3.0])):
        step = series.step()
        _d, back = _again(step)
        assert isinstance(back, StepInfo) and (back.regular, back.h, back.message) == (step.regular, step.h,
                                                                                       step.message)
        assert back.index is None  # the grid positions are not in the dict


def test_dynamics_results_round_trip() -> None:
    from growthcore.dynamics import LongRun, analyse, cobweb, sweep
    from growthcore.uncertainty import bootstrap

    s = _series()
    result = fit(s, "logistic", method="trajectory")
    boot = bootstrap(result, series=s, resamples=40, seed=2)
    dyn = analyse(result, samples=boot.good())
    assert dyn is not None and dyn.regimes is not None
    _d, back = _again(dyn, model=result.model, method=result.method)
    assert back.long_run == dyn.long_run and back.regimes == dyn.regimes
    _d, back = _again(dyn.long_run)
    assert back == dyn.long_run
    _again(dyn.regimes)
    _again(LongRun("chaos", None, float("nan"), (1.0, 2.5), 3.0))  # no finite exponent: None, read as None
    web = cobweb(result.form, result.values, 5.0, upper=150.0, steps=20, equilibria=tuple(dyn.equilibria))
    _d, back = _again(web)
    np.testing.assert_array_equal(back.orbit, web.orbit)
    swept = sweep(result, points=40, shown=8)
    assert swept is not None
    _d, back = _again(swept)
    np.testing.assert_array_equal(back.grid, swept.grid)
    assert back.periods == swept.periods and back.kinds == swept.kinds


def test_forecast_round_trips() -> None:
    from growthcore.uncertainty import Forecast, forecast

    s = _series()
    result = fit(s, "logistic", method="trajectory")
    fc = forecast(result, steps=5, series=s, bound=90.0, draws=200)
    _d, back = _again(fc, model=result.model, method=result.method)
    assert isinstance(back, Forecast) and back.warnings == fc.warnings
    np.testing.assert_array_equal(back.t, fc.t)
    np.testing.assert_allclose(back.hi, fc.hi, rtol=0, atol=0)


def test_import_report_parts_and_mixed_test_round_trip() -> None:
    from growthcore.io.report import ColumnRole, LeftOut
    from growthcore.mixed.lrtest import LikelihoodRatioTest

    for part in (LeftOut(4, "OD", "n/a", "not a number"), LeftOut(None, "OD", "", "blank"),
                 ColumnRole("Time (h)", "time", "the first column of increasing numbers")):
        _d, back = _again(part)
        assert back == part
    done = LikelihoodRatioTest("done", "", 3.2, 1, 0.074, "random K", "random K,r (full)")
    _d, back = _again(done)
    assert back == done
    refused = LikelihoodRatioTest("failed", "both fits must have converged", reduced="a", full="b")
    _d, back = _again(refused)
    assert math.isnan(back.statistic) and back.df == 0
