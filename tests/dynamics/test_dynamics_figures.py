"""Dynamics of fitted results and their figures: analysis sentences, cobweb, sweep and forecast band."""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go
import pytest

from growthcore.data import Series
from growthcore.dynamics import analyse, cobweb, sweep
from growthcore.figures.common import unpacked
from growthcore.figures.dynamics import (
    SWEEP_ROWS,
    cobweb_figure,
    forecast_band_traces,
    sweep_figure,
    with_forecast_band,
)
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models.catalogue import get_form
from growthcore.uncertainty import bootstrap, forecast

LOGISTIC = get_form("logistic")
LABELS = {"quantity": "Count", "value_unit": "birds", "time_unit": "yr"}


def fitted(r: float, sd: float = 2.0, seed: int = 1):
    rng = np.random.default_rng(seed)
    y = iterate(LOGISTIC, 5.0, {"r": r, "K": 100.0}, 39) + rng.normal(0, sd, 40)
    s = Series(np.arange(40.0), y)
    return s, fit(s, "logistic")


def test_sentences_name_the_regime() -> None:
    _, res = fitted(2.2)
    dyn = analyse(res)
    assert dyn.long_run.kind == "cycle" and dyn.long_run.period == 2
    assert "2-cycle" in dyn.sentences[0] and "rather than a steady level" in dyn.sentences[0]
    _, res = fitted(1.96, sd=8.0)
    boot = bootstrap(res, resamples=300)
    dyn = analyse(res, samples=boot.good())
    assert dyn.regimes is not None and dyn.regimes.source == "bootstrap"
    assert abs(sum(dyn.regimes.shares.values()) - 1.0) < 1e-12
    if len(dyn.regimes.shares) > 1:
        assert "could also" in dyn.sentences[1]


def test_curve_long_run_is_monotone() -> None:
    s, _ = fitted(0.5)
    dyn = analyse(fit(s, "logistic-curve"))
    assert dyn.long_run.kind == "monotone" and dyn.long_run.lyapunov is None


def test_cobweb_figure() -> None:
    _, res = fitted(1.5)
    web = cobweb(LOGISTIC, res.values, res.start_level, upper=150.0, equilibria=tuple(res.derived["equilibria"]))
    # the staircase alternates vertical (to the map) and horizontal (to the diagonal) moves
    assert web.stairs_y[1] == pytest.approx(float(LOGISTIC.next_state(np.array(web.orbit[0]), res.values)))
    fig = cobweb_figure(web.to_dict(), LABELS)
    go.Figure(fig)  # plotly accepts it
    names = [t["name"] for t in fig["data"]]
    assert "fitted map f(p)" in names and "stable equilibrium" in names and "unstable equilibrium" in names
    assert "birds" in fig["layout"]["xaxis"]["title"]["text"]
    assert "step n + 1" in fig["layout"]["yaxis"]["title"]["text"]
    # the equilibrium p* = 0 lies on both axes, at the corner of the plot: its marker is drawn whole
    assert fig["layout"]["xaxis"]["range"][0] == 0.0
    assert all(t["cliponaxis"] is False for t in fig["data"] if "equilibrium" in t["name"])
    # plotly.js draws an open symbol's ring in the marker's colour: on the paper's colour it would not show
    unstable = next(t for t in fig["data"] if t["name"] == "unstable equilibrium")
    assert unstable["marker"]["symbol"] == "circle-open" and unstable["marker"]["color"] not in ("#ffffff", "white")
    assert cobweb_figure(None, LABELS)["layout"]["annotations"]


def test_sweep_marks_the_fitted_rate_and_interval() -> None:
    _, res = fitted(1.8)
    sw = sweep(res, points=200)
    assert sw is not None and sw.parameter == "r"
    # regimes along r match the logistic map's thresholds (May 1976): fixed point below 2, 2-cycle above
    kinds = dict(zip(np.round(sw.grid, 3), sw.kinds, strict=True))
    below = [k for r, k in kinds.items() if 0.1 < r < 1.9]
    assert set(below) <= {"monotone", "damped-oscillation"}
    assert all(p == 2 for r, p in zip(sw.grid, sw.periods, strict=True) if 2.05 < r < 2.4)
    fig = sweep_figure(sw.to_dict(), {**LABELS, "rate_unit": "per yr"})
    go.Figure(fig)
    cells = fig["data"][0]
    assert cells["type"] == "heatmap"
    x, y, z = (np.array(unpacked(cells[k])) for k in ("x", "y", "z"))
    drawn = ~np.isnan(z)
    # the grid: every rate value a column, rows evenly spaced from the lowest state to the highest
    rows = np.unique(y)
    assert np.unique(x) == pytest.approx(np.unique(sw.grid), rel=1e-6)  # past r = 3 the states run off: empty
    assert np.unique(x[drawn]) == pytest.approx(np.unique(sw.rate), rel=1e-6)
    assert rows.size == SWEEP_ROWS and np.diff(rows) == pytest.approx(np.full(rows.size - 1, np.diff(rows).mean()),
                                                                          rel=1e-3)
    assert rows[0] == pytest.approx(sw.states.min(), rel=1e-6) and rows[-1] == pytest.approx(sw.states.max(), rel=1e-6)
    # every long-run state lies in a drawn cell of its column (within half a row), and every drawn cell holds one
    half = np.diff(rows).mean() / 2 * 1.001
    same_column = np.isclose(sw.rate[:, None], x[drawn][None, :], rtol=1e-6, atol=0)
    in_row = np.abs(sw.states[:, None] - y[drawn][None, :]) <= half
    assert (same_column & in_row).any(axis=1).all()  # no state left out
    assert (same_column & in_row).any(axis=0).all()  # no cell without a state
    # the fixed point below r = 2 is one cell a column; the cost of drawing does not grow with the states
    assert all(np.count_nonzero(drawn & np.isclose(x, r, rtol=1e-6)) == 1 for r in sw.grid if 0.5 < r < 1.9)
    assert np.count_nonzero(drawn) <= sw.rate.size
    shapes = fig["layout"]["shapes"]
    assert shapes[0]["type"] == "rect" and shapes[0]["x0"] == pytest.approx(sw.interval[0])
    assert shapes[1]["x0"] == pytest.approx(res.values["r"])
    assert "per yr" in fig["layout"]["xaxis"]["title"]["text"]
    curve_fit = fit(Series(np.arange(40.0), iterate(LOGISTIC, 5.0, {"r": 0.5, "K": 100.0}, 39)), "logistic-curve")
    assert sweep(curve_fit) is None


def test_forecast_band_on_a_trajectory_figure() -> None:
    _, res = fitted(0.5)
    fc = forecast(res, steps=5)
    traces = forecast_band_traces(fc.points(), name="logistic forecast")
    assert traces[1]["fill"] == "tonexty" and traces[0]["y"] == [pt["lo"] for pt in fc.points()]
    base = {"data": [{"type": "scatter", "x": [0, 1], "y": [1, 2]}], "layout": {"shapes": [{"type": "line"}]}}
    out = with_forecast_band(base, fc.points(), last_observed=39.0)
    go.Figure(out)
    assert len(base["data"]) == 1 and len(out["data"]) == 4  # the input is not changed
    assert out["layout"]["shapes"][0] == {"type": "line"}  # existing shapes keep their positions
