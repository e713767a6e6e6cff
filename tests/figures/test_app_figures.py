"""Figure builders: pure functions of plain data, valid plotly figures, honest axes and reference lines."""

from __future__ import annotations

import json

import numpy as np
import plotly.graph_objects as go
import pytest

from growthcore.app.callbacks.explore import candidate_to_store, change_to_store, labels_of
from growthcore.data import Series
from growthcore.explore import Candidate, candidate_fit, change_table
from growthcore.figures.common import message_figure
from growthcore.figures.explore import candidate_figure, change_figure
from growthcore.figures.plain import fit_to_store
from growthcore.figures.residuals import observed_predicted_figure, residual_fitted_figure, residual_time_figure
from growthcore.figures.trajectory import capacity_from_relayout, trajectory_figure
from growthcore.fit.forms import fit_forms


@pytest.fixture(scope="module")
def series() -> Series:
    rng = np.random.default_rng(11)
    p, out = 1.0, []
    for _ in range(30):
        out.append(p)
        p += 0.35 * p * (1 - p / 20.0)
    obs = np.array(out) * np.exp(rng.normal(0, 0.03, 30))
    return Series(np.arange(30) * 6.0, obs, name="invented", time_unit="h", value_unit="cells/mL",
                  value_column="Density (cells/mL)").exclude(4, "excluded by the user")


@pytest.fixture(scope="module")
def data(series: Series) -> dict:
    return {"key": "k1", "t": series.t.tolist(), "p": series.p.tolist(), "rows": list(range(2, 32)),
            "time_unit": "h", "value_unit": "cells/mL", "quantity": "Density", "value_column": "Density (cells/mL)"}


@pytest.fixture(scope="module")
def fits(series: Series) -> list[dict]:
    results = fit_forms(series, ["logistic", "gompertz", "logistic-curve"], method="both", capacity=20.0)
    return [fit_to_store(f, series) for f in results]


def validate(fig: dict) -> go.Figure:
    json.dumps(fig)  # the store and the browser need plain JSON
    return go.Figure(fig)  # plotly's validators reject any unknown property


def test_change_figure_labels_quantity_and_units(series: Series, data: dict) -> None:
    fig = change_figure(change_to_store(change_table(series)), labels_of(data))
    validate(fig)
    assert fig["layout"]["xaxis"]["title"]["text"] == "Density at the start of the step [cells/mL]"
    assert fig["layout"]["yaxis"]["title"]["text"] == "Change per unit time Δp/Δt [cells/mL per h]"
    points = fig["data"][0]
    assert points["meta"] == "points"
    # the excluded point 4 ends two pairs, drawn open and grey
    open_pairs = [cd[0] for cd, sym in zip(points["customdata"], points["marker"]["symbol"], strict=True)
                  if sym == "circle-open"]
    assert open_pairs == [3, 4]
    by_time = change_figure(change_to_store(change_table(series)), labels_of(data), against="time")
    assert by_time["layout"]["xaxis"]["title"]["text"].startswith("Time at the start of the step [h]")


def test_candidate_figure_has_line_through_origin(series: Series, data: dict) -> None:
    c = candidate_to_store(candidate_fit(series, Candidate("p·(1 − p/K)", "logistic"), 20.0))
    fig = candidate_figure([c], labels_of(data, h=6.0))
    validate(fig)
    line = fig["data"][1]
    assert line["x"][0] == 0.0 and line["y"][0] == 0.0
    assert "uncentered R²" in line["name"]
    assert fig["layout"]["yaxis"]["title"]["text"] == "Δp per step of 6 h [cells/mL]"


def test_candidate_figure_without_candidates_says_why(data: dict) -> None:
    fig = candidate_figure([{"label": "g", "status": "failed", "message": "set a positive K", "g": []}],
                           labels_of(data))
    validate(fig)
    assert "set a positive K" in fig["layout"]["meta"]["message"]


def test_trajectory_figure_draws_each_fit_as_what_it_fits_and_a_k_handle(data: dict, series: Series,
                                                                         fits: list[dict]) -> None:
    fig = trajectory_figure(data, list(series.used), fits, 20.0, labels_of(data))
    validate(fig)
    # the line is a trace, which takes no clicks (points on it stay clickable); only the handle in the
    # margin is a shape, and the only one, so dragging never starts on the plot
    line = next(t for t in fig["data"] if t.get("meta") == "capacity")
    assert line["y"] == [20.0, 20.0] and line["hoverinfo"] == "skip"
    assert line["x"][0] == min(data["t"]) and line["x"][1] >= max(data["t"])
    (handle,) = fig["layout"]["shapes"]
    assert handle["editable"] and handle["yanchor"] == 20.0 and handle["xref"] == "paper"
    assert handle["xsizemode"] == "pixel" and handle["xanchor"] == 1 and handle["x0"] > 0
    names = [t["name"] for t in fig["data"]]
    assert "logistic (increments), one step ahead" in names and "logistic-curve (trajectory)" in names
    assert "observed" in names
    inc = next(f for f in fits if f["method"] == "increments" and f["status"] == "converged")
    ahead = next(t for t in fig["data"] if t["name"] == f"{inc['label']}, one step ahead")
    assert ahead["mode"] == "markers" and ahead["x"] == inc["t"] and ahead["y"] == inc["predicted"]
    assert not any("iterated" in t["name"] for t in fig["data"])
    first = trajectory_figure(data, list(series.used), fits, 20.0, labels_of(data), path_from="first")
    path = next(t for t in first["data"] if t["name"] == f"{inc['label']}, iterated map")
    assert "iterated from the first observation" in path["hovertemplate"]
    assert path["x"] == inc["path"]["t"] and path["y"] == inc["path"]["p"]
    last = trajectory_figure(data, list(series.used), fits, 20.0, labels_of(data), path_from="last")
    path = next(t for t in last["data"] if t["name"] == f"{inc['label']}, iterated map")
    assert "iterated from the last observation" in path["hovertemplate"]
    # it starts at the last observation the fit used, where a forecast starts too
    assert path["x"][0] == inc["t"][-1] and path["y"][0] == inc["observed"][-1]
    obs = next(t for t in fig["data"] if t["name"] == "observed")
    assert obs["marker"]["symbol"][4] == "circle-open" and obs["marker"]["symbol"][3] == "circle"
    assert obs["customdata"][4] == [4, 6]


def test_capacity_from_relayout_reads_the_dragged_handle() -> None:
    assert capacity_from_relayout({"shapes[0].yanchor": 12.5, "shapes[1].xanchor": 1.1}) == 12.5
    assert capacity_from_relayout({"shapes": [{"yanchor": 7.0}]}) == 7.0
    assert capacity_from_relayout({"shapes[1].y0": 12.5}) is None
    assert capacity_from_relayout({"xaxis.range[0]": 1}) is None
    assert capacity_from_relayout(None) is None


def test_residual_figures_have_zero_lines(data: dict, fits: list[dict]) -> None:
    for build in (residual_time_figure, residual_fitted_figure):
        fig = build(fits, labels_of(data))
        validate(fig)
        zero = fig["layout"]["shapes"][0]
        assert zero["y0"] == zero["y1"] == 0
        assert len([t for t in fig["data"] if t.get("meta") == "points"]) == len(fits)
    fig = residual_time_figure(fits, labels_of(data))
    assert fig["layout"]["yaxis"]["title"]["text"] == "Residual p − p̂ [cells/mL]"


def test_observed_predicted_has_the_one_to_one_line(data: dict, fits: list[dict]) -> None:
    fig = observed_predicted_figure(fits, labels_of(data))
    validate(fig)
    line = fig["layout"]["shapes"][0]
    assert line["x0"] == line["y0"] and line["x1"] == line["y1"]
    values = [v for f in fits for v in (*f["observed"], *f["predicted"])]
    assert line["x0"] == min(values) and line["x1"] == max(values)


def test_panels_without_fits_say_so(data: dict) -> None:
    failed = [{"status": "failed", "label": "x", "model": "x", "method": "increments", "error": "additive"}]
    for build in (residual_time_figure, residual_fitted_figure, observed_predicted_figure):
        fig = build(failed, labels_of(data))
        validate(fig)
        assert "No converged fit" in fig["layout"]["meta"]["message"]
    validate(message_figure("nothing"))


def test_one_colour_per_form_and_a_dash_per_method(fits: list[dict]) -> None:
    from growthcore.figures.common import fit_styles

    styles = fit_styles(fits)
    by_model: dict[str, set[str]] = {}
    for f, st in zip(fits, styles, strict=True):
        by_model.setdefault(f["model"], set()).add(st["colour"])
    assert all(len(c) == 1 for c in by_model.values())
    assert len({next(iter(c)) for c in by_model.values()}) == len(by_model)
    dashes = {(f["method"], st["dash"]) for f, st in zip(fits, styles, strict=True)}
    assert dashes == {("increments", "dot"), ("trajectory", "solid")}


def test_preview_ids_are_safe_in_css_selectors() -> None:
    # plotly.js puts a trace's uid into CSS selectors: a label with spaces, parentheses or × must not break it
    import re

    from growthcore.figures.common import preview_uid

    for label in ("logistic (increments)", "ricker+c (trajectory, log)", "g = p·(1 − p/K)", "1988 × F"):
        assert re.fullmatch(r"[a-z][a-z-]*-[0-9a-f]+", preview_uid("one-step", label))
    assert preview_uid("one-step", "a") != preview_uid("one-step", "b")
