"""The ``growthcore batch`` command: CSV and JSON output, groups, malformed series, safe CSV."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest

from growthcore.cli import main
from growthcore.cli.batch_cmd import _Bar


def write_plate(path: Path) -> None:
    """An invented long-layout plate: 2 conditions x 4 wells; A1 too short, B2 has a NaN, B3 a zero."""
    rng = np.random.default_rng(4)
    t = np.arange(20) * 1.0
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["well", "condition", "time (h)", "OD"])
        for row in "AB":
            for col in range(1, 5):
                cond = "ctrl" if col <= 2 else "slow"
                k = 1.0 if cond == "ctrl" else 0.8
                p = k / (1 + (k / 0.02 - 1) * np.exp(-0.5 * t)) * (1 + 0.02 * rng.standard_normal(t.size))
                name = f"{row}{col}"
                for ti, pi in zip(t, p, strict=True):
                    if name == "A1" and ti > 1:
                        continue
                    value = "NaN" if (name == "B2" and ti == 6) else "0" if (name == "B3" and ti == 0) else f"{pi:.5f}"
                    w.writerow([name, cond, ti, value])
        w.writerow(["=HYPERLINK(1)", "ctrl", 0, 0.1])
        for ti in (1, 2, 3, 4):
            w.writerow(["=HYPERLINK(1)", "ctrl", ti, 0.1 + 0.05 * ti])


def test_csv_output_one_row_per_series_and_form(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    src = tmp_path / "plate.csv"
    write_plate(src)
    out = tmp_path / "results.csv"
    code = main(["batch", str(src), "--model", "logistic-curve,gompertz-curve", "--workers", "1", "--out", str(out)])
    assert code == 0
    table = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8"))))
    names = {r["series"] for r in table}
    # A1 has 2 points: the import leaves it out and the batch still lists it, failed
    assert len(table) == 9 * 2 and "A1" in names
    a1 = [r for r in table if r["series"] == "A1"]
    assert all(r["status"] == "failed" and "not read" in r["message"] for r in a1)
    b3 = {r["model"]: r for r in table if r["series"] == "B3"}
    assert b3["logistic-curve"]["status"] == "converged" and b3["gompertz-curve"]["status"] == "failed"
    b2 = [r for r in table if r["series"] == "B2" and r["model"] == "logistic-curve"][0]
    assert b2["points_used"] == "19" and float(b2["K_se"]) > 0
    # formula-injection safe: the hostile series id is written with a leading apostrophe
    assert "'=HYPERLINK(1)" in names
    printed = capsys.readouterr().out
    assert "B3 / gompertz-curve" in printed and "results written" in printed


def test_json_output_with_groups_summary_and_f_test(tmp_path: Path) -> None:
    src = tmp_path / "plate.csv"
    write_plate(src)
    out = tmp_path / "results.json"
    code = main(["batch", str(src), "--model", "logistic-curve", "--groups", "condition", "--test", "K",
                 "--workers", "1", "--out", str(out)])
    assert code == 0
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert doc["groups"]["members"]["slow"] == ["A3", "A4", "B3", "B4"]
    summary = {(s["group"], s["parameter"]): s for s in doc["groups"]["summary"]}
    assert summary[("slow", "K")]["n"] == 4 and summary[("slow", "K")]["mean"] == pytest.approx(0.8, rel=0.05)
    test = doc["groups"]["tests"][0]
    assert test["status"] == "done" and test["p_value"] < 1e-3 and test["df_numerator"] == 1
    assert {r["series"] for r in doc["rows"]} >= {"A1", "B4"}


def test_bad_options_are_one_line_errors(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    src = tmp_path / "plate.csv"
    write_plate(src)
    assert main(["batch", str(src), "--model", "logistic", "--out", str(tmp_path / "r.txt")]) == 1
    assert "--out must end in .csv or .json" in capsys.readouterr().err
    assert main(["batch", str(src), "--model", "nope", "--out", str(tmp_path / "r.csv")]) == 1
    assert "unknown model form" in capsys.readouterr().err
    assert main(["batch", str(src), "--model", "logistic", "--groups", "nocol", "--out", str(tmp_path / "r.csv")]) == 1
    assert "no column 'nocol'" in capsys.readouterr().err


def test_progress_bar_only_on_a_terminal() -> None:
    class Tty(io.StringIO):
        def isatty(self) -> bool:
            return True

    plain, tty = io.StringIO(), Tty()
    for stream in (plain, tty):
        bar = _Bar(stream)
        bar(1, 2)
        bar(2, 2)
    assert plain.getvalue() == ""
    assert "2/2 tasks" in tty.getvalue() and tty.getvalue().endswith("\n")
