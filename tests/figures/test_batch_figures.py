"""Batch figure builders: valid plotly figures, failed fits marked, plate maps placed by well id."""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go
import pytest

from growthcore.batch import fit_batch, from_series, well_name
from growthcore.batch.views import overview_panels, plate_values
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.batch import overview_grid, plate_map


@pytest.fixture(scope="module")
def batch():
    rng = np.random.default_rng(8)
    t = np.arange(15.0)
    series = []
    for i in range(10):
        k = 1.0 + 0.05 * i
        p = k / (1 + (k / 0.03 - 1) * np.exp(-0.6 * t)) * (1 + 0.02 * rng.standard_normal(t.size))
        series.append(Series(t, p, name=well_name(i // 12, i % 12)))
    series.append(Series(t[:3], np.array([0.1, 0.2, 0.3]), name="B1"))  # too few points: fails
    return fit_batch(from_series(series), ["logistic-curve"], workers=1)


def test_overview_grid_is_valid_and_marks_failed_fits(batch) -> None:  # type: ignore[no-untyped-def]
    panels_in = overview_panels(batch, "logistic-curve")
    fig = overview_grid(panels_in, columns=4)
    go.Figure(fig)  # plotly validates every property
    assert [d["meta"] for d in fig["data"]] == ["frames", "points", "fit"]  # three traces, however many series
    panels = fig["layout"]["meta"]["panels"]
    assert [p["series"] for p in panels] == [p["series"] for p in panels_in]
    assert sum(p["fitted"] for p in panels) == 10
    failed = [a for a in fig["layout"]["annotations"] if "fit failed" in a["text"]]
    assert len(failed) == 1 and failed[0]["text"].startswith("B1") and len(fig["layout"]["shapes"]) == 1
    points = fig["data"][1]
    assert points["customdata"][0][0] == "A1" and len(points["x"]) == sum(len(p["t"]) for p in panels_in)
    # every observation lies in its own panel's box, the first and last at the box's ends in time
    for (sid, _, _), x, y in zip(points["customdata"], points["x"], points["y"], strict=True):
        x0, x1, y0, y1 = next(p["box"] for p in panels if p["series"] == sid)
        assert x0 <= x <= x1 and y0 <= y <= y1
    a1 = [x for (sid, _, _), x in zip(points["customdata"], points["x"], strict=True) if sid == "A1"]
    assert a1 == sorted(a1) and panels[0]["box"][0] < a1[0] < a1[-1] < panels[0]["box"][1]


def test_overview_grid_limits_panels(batch) -> None:  # type: ignore[no-untyped-def]
    fig = overview_grid(overview_panels(batch, "logistic-curve"), max_panels=4)
    assert len(fig["layout"]["meta"]["panels"]) == 4
    assert "first 4 of 11" in fig["layout"]["title"]["text"]


def test_plate_map_places_wells_and_marks_failures(batch) -> None:  # type: ignore[no-untyped-def]
    values = plate_values(batch, "logistic-curve", "K")
    fig = plate_map(values, quantity="K")
    go.Figure(fig)
    heat = fig["data"][0]
    assert len(heat["z"]) == 8 and len(heat["z"][0]) == 12
    assert heat["z"][0][0] == pytest.approx(batch.get("A1", "logistic-curve").result.values["K"])
    assert heat["z"][0][10] is None  # A11 holds no series
    assert heat["customdata"][1][0] == "B1" and fig["data"][1]["customdata"] == ["B1"]
    metric = plate_values(batch, "logistic-curve", "aicc")
    assert metric["A2"]["value"] == pytest.approx(batch.get("A2", "logistic-curve").result.metrics.aicc)
    with pytest.raises(GrowthcoreInputError, match="no constant or metric"):
        plate_values(batch, "logistic-curve", "nonsense")


def test_plate_map_384_and_non_wells() -> None:
    values = {"A1": {"value": 1.0, "status": "converged"}, "P24": {"value": 2.0, "status": "converged"}}
    fig = plate_map(values, quantity="r")
    assert len(fig["data"][0]["z"]) == 16 and len(fig["data"][0]["z"][0]) == 24
    with pytest.raises(ValueError, match="not plate wells"):
        plate_map({"ctrl": {"value": 1.0, "status": "converged"}}, quantity="r")


def test_overview_grid_thins_long_series_but_keeps_every_excluded_point() -> None:
    t = [float(i) for i in range(97)]
    used = [i not in (3, 50) for i in range(97)]
    panel = {"series": "A1", "t": t, "p": [1.0 + 0.01 * i for i in t], "used": used, "fit_t": t, "fit_p": t,
             "status": "converged", "message": ""}
    fig = overview_grid([panel, {**panel, "series": "A2", "t": t[:20], "p": t[:20], "used": [True] * 20}])
    drawn = [c for c in fig["data"][1]["customdata"] if c[0] == "A1"]
    times = [c[1] for c in drawn]
    assert 48 <= len(drawn) <= 50 and {0.0, 3.0, 50.0, 96.0} <= set(times)
    assert len([c for c in fig["data"][1]["customdata"] if c[0] == "A2"]) == 20
    assert "at most 48 observations drawn per panel" in fig["layout"]["title"]["text"]
