"""The `growthcore models` and `growthcore fit` commands, and the engine's independence from the UI."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from growthcore.cli import main
from growthcore.models import MODEL_IDS

RECORD_FIT_KEYS = {"model", "method", "error", "status", "message", "parameters", "metrics", "derived"}
PARAMETER_KEYS = {"value", "se", "ci95", "fixed"}
METRIC_KEYS = {"n", "n_params", "sse", "rmse", "r2", "r2_adjusted", "aic", "aicc", "bic"}


def _write_csv(path: Path, t, p, header=("hours", "density")) -> Path:
    """Invented culture-density data (for tests only), written as a plain CSV."""
    lines = [",".join(header)] + [f"{a:g},{b:.6g}" for a, b in zip(t, p, strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def logistic_csv(tmp_path: Path) -> Path:
    rng = np.random.default_rng(3)
    t = np.arange(0.0, 24.0, 1.0)
    p = 80.0 / (1.0 + 39.0 * np.exp(-0.45 * t)) * np.exp(rng.normal(0, 0.02, t.size))
    return _write_csv(tmp_path / "culture.csv", t, p)


def test_models_lists_every_id(capsys) -> None:
    assert main(["models"]) == 0
    out = capsys.readouterr().out
    for model_id in MODEL_IDS:
        assert model_id in out, model_id
    assert "+c" in out


def test_models_json_lists_every_built_in_id(capsys) -> None:
    assert main(["models", "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)
    ids = {row["id"] for row in rows}
    assert ids == set(MODEL_IDS) - {"custom"}
    for row in rows:
        assert row["equation"] and row["parameters"]


@pytest.mark.parametrize("method", ["increments", "trajectory", "both"])
def test_fit_writes_a_record_with_the_named_keys(logistic_csv: Path, tmp_path: Path, method: str, capsys) -> None:
    out = tmp_path / "record.json"
    code = main(["fit", str(logistic_csv), "--time", "hours", "--value", "density",
                 "--model", "logistic,logistic-curve", "--method", method, "--out", str(out)])
    assert code == 0, capsys.readouterr().err
    record = json.loads(out.read_text(encoding="utf-8"))
    assert record["format"] == "growthcore.fit-record" and record["format_version"] == 2
    assert {"name", "version"} <= set(record["software"])
    assert record["created"]
    data = record["data"]
    assert {"source", "sha256", "time", "value", "points"} <= set(data)
    assert data["time"]["column"] == "hours" and data["value"]["column"] == "density"
    assert len(data["points"]) == 24
    assert set(data["points"][0]) >= {"t", "p", "used", "reason"}
    assert len(data["sha256"]) == 64
    expected = {"increments": [("logistic", "increments"), ("logistic-curve", "increments")],
                "trajectory": [("logistic", "trajectory"), ("logistic-curve", "trajectory")],
                "both": [("logistic", "increments"), ("logistic", "trajectory"),
                         ("logistic-curve", "trajectory")]}[method]
    assert [(f["model"], f["method"]) for f in record["fits"]] == expected
    for f in record["fits"]:
        assert RECORD_FIT_KEYS <= set(f)
        if f["model"] == "logistic-curve" and f["method"] == "increments":
            assert f["status"] == "failed" and "trajectory" in f["message"]
            continue
        assert f["status"] == "converged", f["message"]
        assert set(f["metrics"]) >= METRIC_KEYS
        for name, par in f["parameters"].items():
            assert PARAMETER_KEYS <= set(par), name
        assert math.isclose(f["parameters"]["K"]["value"], 80.0, rel_tol=0.1)  # invented data have K = 80


def test_fit_to_stdout_with_capacity_and_log_error(logistic_csv: Path, capsys) -> None:
    code = main(["fit", str(logistic_csv), "--time", "hours", "--value", "density", "--model", "logistic",
                 "--method", "trajectory", "--capacity", "82", "--error", "log", "--out", "-"])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    record = json.loads(captured.out)
    (f,) = record["fits"]
    assert f["error"] == "log"
    assert f["parameters"]["K"] == {**f["parameters"]["K"], "value": 82.0, "fixed": True, "se": None}
    assert record["settings"]["capacity"] == 82.0


def test_fit_increments_with_capacity_reports_uncentered_r2(logistic_csv: Path, capsys) -> None:
    assert main(["fit", str(logistic_csv), "--time", "hours", "--value", "density", "--model", "logistic",
                 "--method", "increments", "--capacity", "80", "--out", "-"]) == 0
    (f,) = json.loads(capsys.readouterr().out)["fits"]
    assert f["metrics"]["r2_uncentered"] is not None
    assert f["derived"]["k"] == pytest.approx(f["parameters"]["r"]["value"] / 80.0, rel=1e-12)


def _one_line_error(capsys) -> str:
    err = capsys.readouterr().err.strip()
    assert err and "\n" not in err, err
    assert "Traceback" not in err
    return err


def test_missing_file_is_a_one_line_error(tmp_path: Path, capsys) -> None:
    missing = tmp_path / "nowhere.csv"
    assert main(["fit", str(missing), "--out", "-"]) != 0
    assert "nowhere.csv" in _one_line_error(capsys)


def test_unreadable_file_is_a_one_line_error(tmp_path: Path, capsys) -> None:
    bad = tmp_path / "garbage.csv"
    bad.write_text("just some words\nand nothing numeric\n", encoding="utf-8")
    assert main(["fit", str(bad), "--out", "-"]) != 0
    assert "garbage.csv" in _one_line_error(capsys)


def test_bad_model_id_is_a_one_line_error(logistic_csv: Path, capsys) -> None:
    assert main(["fit", str(logistic_csv), "--time", "hours", "--value", "density",
                 "--model", "logistic,logistik", "--out", "-"]) != 0
    err = _one_line_error(capsys)
    assert "logistik" in err and "unknown model" in err


def test_bad_column_is_a_one_line_error(logistic_csv: Path, capsys) -> None:
    assert main(["fit", str(logistic_csv), "--time", "minutes", "--value", "density", "--out", "-"]) != 0
    assert "minutes" in _one_line_error(capsys)


def test_all_fits_failing_exits_non_zero(tmp_path: Path, capsys) -> None:
    csv = _write_csv(tmp_path / "flat.csv", [0, 1, 2, 3, 4, 5], [0, 0, 0, 0, 0, 0])
    assert main(["fit", str(csv), "--time", "hours", "--value", "density", "--model", "gompertz",
                 "--method", "increments", "--out", "-"]) != 0
    record = json.loads(capsys.readouterr().out)
    assert record["fits"][0]["status"] == "failed"


def test_engine_never_imports_dash_or_plotly() -> None:
    """Import every module under growthcore/ in a fresh interpreter and look at sys.modules.

    The ``__main__`` modules are left out: importing them runs the command line.
    """
    code = (
        "import importlib, pkgutil, sys, growthcore\n"
        "names = [m.name for m in pkgutil.walk_packages(growthcore.__path__, 'growthcore.')\n"
        "         if not m.name.endswith('__main__')]\n"
        "for name in names:\n"
        "    importlib.import_module(name)\n"
        "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('dash', 'plotly'))\n"
        "print(len(names))\n"
        "print(','.join(bad))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120,
                          cwd=Path(__file__).resolve().parents[2])
    assert done.returncode == 0, done.stderr
    count, bad = done.stdout.splitlines()[:2] if done.stdout.count("\n") >= 2 else (done.stdout.strip(), "")
    assert int(count) > 20
    assert bad == "", f"the engine imported {bad}"
