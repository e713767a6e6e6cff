"""The table, group means and F test shown after a run over every series (pure functions, no browser).

References: group means, SDs and t intervals against numpy and scipy.stats.t.interval; the F test
view against the engine's growthcore.batch.group_difference_test on the same series; the CSV read
back with pandas. The data are invented: two tanks per feed, fed and lean, with different rates.
"""

from __future__ import annotations

import base64
import csv
import io
import os
from typing import Any

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from growthcore.app.callbacks import batch_tables as B
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.series.read import read_all_series, series_from_plain
from growthcore.app.callbacks.series.run import merged_fits, run_tick, start_run
from growthcore.batch import group_difference_test
from growthcore.figures.plain import fit_label, fit_label_parts

SETTINGS = {"models": ["logistic"], "terms": [], "method": "trajectory", "error": "additive", "k_mode": "held"}


def _source(path: str) -> dict[str, Any]:
    with open(path, "rb") as fh:
        raw = fh.read()
    return {"filename": os.path.basename(path), "b64": base64.b64encode(raw).decode("ascii"), "max_bytes": 10_000_000}


def _apply(patch: Any) -> dict[str, Any]:
    """The chunk a Patch adds (the renderer applies the same operation to the store)."""
    (op,) = patch.to_plotly_json()["operations"]
    return {op["location"][1]: op["params"]["value"]}


def _tanks(tmp_path: Any) -> tuple[dict[str, Any], dict[str, Any]]:
    """Six invented tanks, three per feed; the fed tanks grow faster (r 0.9 against 0.5)."""
    rng = np.random.default_rng(11)
    t = np.arange(25)
    lines = ["Day,Tank,Count"]
    for tank, r in [("F1", 0.9), ("F2", 0.85), ("F3", 0.95), ("L1", 0.5), ("L2", 0.55), ("L3", 0.45)]:
        p = 200 / (1 + (200 / 4 - 1) * np.exp(-r * t)) * np.exp(rng.normal(0, 0.02, t.size))
        lines += [f"{d},{tank},{v:.3f}" for d, v in zip(t, p, strict=True)]
    path = tmp_path / "invented_tanks.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    source = _source(str(path))
    batch = read_all_series(source, import_source(source), None)
    groups = {"key": batch["key"], "groups": {n: ("fed" if n.startswith("F") else "lean") for n in batch["names"]}}
    return batch, groups


def _merged(batch: dict[str, Any]) -> tuple[list[str], dict[str, Any]]:
    job, fits, progress, *_ = start_run(SETTINGS, batch, None, now=0.0)
    for n in range(1, int(job["chunks"]) + 1):
        patch, progress, _ = run_tick(n, job, batch, None, progress, None, now=float(n))
        fits["chunks"].update(_apply(patch))
    return merged_fits(fits, job, batch)


def test_table_has_one_row_per_series_and_form_with_every_constant(tmp_path: Any) -> None:
    batch, groups = _tanks(tmp_path)
    labels, merged = _merged(batch)
    text = B.table_csv(batch, labels, merged, groups["groups"])
    table = pd.read_csv(io.StringIO(text))
    assert list(table["series"]) == batch["names"] and set(table["group"]) == {"fed", "lean"}
    assert {"r", "K", "p0", "r_se", "aicc"} <= set(table.columns) and (table["status"] == "converged").all()
    assert table.loc[table["series"] == "F1", "r"].item() == pytest.approx(merged[labels[0]]["F1"]["values"]["r"])
    assert list(csv.reader(io.StringIO(text)))[0][:5] == list(B.LEAD)


def test_group_means_and_intervals_match_numpy_and_scipy(tmp_path: Any) -> None:
    batch, groups = _tanks(tmp_path)
    labels, merged = _merged(batch)
    rows = B.summary_rows(labels[0], merged, groups["groups"], batch["names"])
    fed_r = next(r for r in rows if r["constant"] == "r" and r["group"] == "fed")
    values = np.array([merged[labels[0]][n]["values"]["r"] for n in ("F1", "F2", "F3")])
    assert fed_r["n"] == 3 and fed_r["failed"] == 0
    assert fed_r["mean"] == pytest.approx(values.mean()) and fed_r["sd"] == pytest.approx(values.std(ddof=1))
    low, high = stats.t.interval(0.95, 2, loc=values.mean(), scale=stats.sem(values))
    assert fed_r["ci"] == pytest.approx((low, high))
    assert {r["constant"] for r in rows} == {"r", "K"} and len(rows) == 4
    view = str(B.summary_view(labels[0], merged, groups["groups"], batch["names"]))
    assert "Group means of logistic (trajectory)" in view and "fed" in view
    assert "Make replicate groups" in str(B.summary_view(labels[0], merged, {}, batch["names"]))


def test_f_test_view_reports_the_engine_test(tmp_path: Any) -> None:
    batch, groups = _tanks(tmp_path)
    labels, merged = _merged(batch)
    assert B.testable(labels[0]) == ["r", "K"] and B.testable("logistic-curve (trajectory)") == ["K", "r"]
    view = str(B.ftest_view(batch, groups["groups"], labels[0], "r", merged))
    series = [series_from_plain(d) for d in batch["series"]]
    engine = group_difference_test(series, [groups["groups"][s.name] for s in series], "logistic", "r")
    assert engine.status == "done" and engine.p_value < 0.05
    assert f"F({engine.df_reduced - engine.df_full}, {engine.df_full}) = {engine.f:.4g}" in view
    assert "the groups differ at the 5% level" in view
    assert f"fed: r = {engine.full.value('r', 'fed'):.4g}" in view
    one_group = {n: "all" for n in batch["names"]}
    assert "at least two groups" in str(B.ftest_view(batch, one_group, labels[0], "r", merged))


def test_labels_name_the_form_and_error_model() -> None:
    for model, method, error in (("theta-logistic", "trajectory", "log"), ("ricker+c", "increments", "additive"),
                                 ("logistic-curve", "trajectory", "additive")):
        assert fit_label_parts(fit_label({"model": model, "method": method, "error": error})) == (model, error)
    assert B.constants_of(None) == [] and B.constants_of("no-such-form (increments)") == []


def test_f_test_reply_for_many_series_points_to_the_command_line(monkeypatch: pytest.MonkeyPatch) -> None:
    """The layout of the reply only (the engine's test is stubbed; its numbers are checked above)."""
    from types import SimpleNamespace

    full = SimpleNamespace(value=lambda constant, group: 1.0)
    monkeypatch.setattr(B, "group_difference_test", lambda *a, **k: SimpleNamespace(
        status="done", full=full, groups=("a", "b"), p_value=0.2, df_reduced=10, df_full=8, f=1.0,
        sse_full=1.0, sse_reduced=1.1, message=""))
    monkeypatch.setattr(B, "series_from_plain", lambda d: d)
    names = [f"s{i}" for i in range(B.LARGE_TEST + 4)]
    batch = {"names": names, "series": [{"name": n} for n in names]}
    groups = {n: "ab"[i % 2] for i, n in enumerate(names)}
    merged = {"logistic (trajectory)": {n: {"status": "converged"} for n in names}}
    many = str(B.ftest_view(batch, groups, "logistic (trajectory)", "r", merged))
    assert "no evidence that the groups differ" in many and "--test r" in many
    few = str(B.ftest_view({"names": names[:10], "series": batch["series"][:10]}, groups, "logistic (trajectory)",
                           "r", merged))
    assert "--test r" not in few
