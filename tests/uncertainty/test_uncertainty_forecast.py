"""Forecast bands: coverage of future observations simulated from known constants, widening with the
horizon, warnings, the plausibility bound, and the fit command's record.

Coverage: a 95% prediction band should hold about 95% of new observations (definition of a
prediction interval). 60 seeded repetitions × 8 future points = 480 checks, binomial SE ≈ 1%; we
accept 0.90..0.99. With 20 points instead of 40 we measured 0.89: the residual pool is then too
small for its 2.5% and 97.5% points (a known small-sample effect of resampling).
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models.catalogue import get_form
from growthcore.uncertainty import FORECAST_CAUTION, bootstrap, forecast

LOGISTIC = get_form("logistic")


def path_with_noise(seed: int, n: int, *, r: float = 0.35, sd: float = 3.0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return iterate(LOGISTIC, 5.0, {"r": r, "K": 100.0}, n - 1) + rng.normal(0.0, sd, n)


def test_band_covers_future_observations() -> None:
    inside, total = 0, 0
    for rep in range(60):
        y = path_with_noise(500 + rep, 48)
        s = Series(np.arange(40.0), y[:40])
        res = fit(s, "logistic", profile=False)
        boot = bootstrap(res, resamples=200, seed=rep)
        fc = forecast(res, steps=8, boot=boot, seed=rep)
        np.testing.assert_allclose(fc.t, np.arange(40.0, 48.0))
        inside += int(np.sum((fc.lo <= y[40:]) & (y[40:] <= fc.hi)))
        total += 8
    assert 0.90 <= inside / total <= 0.99, inside / total


def test_band_widens_with_horizon() -> None:
    rng = np.random.default_rng(3)
    t = np.arange(15.0)
    s = Series(t, 10.0 * 1.15 ** t * np.exp(rng.normal(0, 0.05, t.size)))
    for model, method in (("geometric", "trajectory"), ("geometric", "increments"),
                          ("exponential-curve", "trajectory")):
        res = fit(s, model, method=method, error="log" if method == "trajectory" else "additive")
        fc = forecast(res, steps=12, boot=bootstrap(res, series=s, resamples=300), series=s)
        width = fc.hi - fc.lo
        assert width[-1] > 1.5 * width[0], (model, method, width)
        assert np.all(fc.lo <= fc.p) and np.all(fc.p <= fc.hi)


def test_without_bootstrap_the_normal_approximation_is_used() -> None:
    s = Series(np.arange(20.0), path_with_noise(1, 20))
    res = fit(s, "logistic")
    fc = forecast(res, span=5.0)
    assert fc.source.startswith("normal approximation") and fc.t.size == 5
    assert np.all(fc.hi > fc.lo)


def test_unbounded_form_warns_and_reports_bound_crossing() -> None:
    t = np.arange(12.0)
    s = Series(t, 10.0 * 1.2 ** t)
    res = fit(s, "geometric")
    plain = forecast(res, steps=5)
    assert any("plausibility bound" in w for w in plain.warnings)
    assert any("above the largest observation" in w for w in plain.warnings)
    fc = forecast(res, steps=20, bound=500.0)
    # 10·1.2^t = 500 at t = ln 50 / ln 1.2 ≈ 21.46 (algebra); the point path is linear between steps
    assert fc.bound_crossing is not None
    assert fc.bound_crossing["t"] == pytest.approx(np.log(50) / np.log(1.2), abs=0.5)
    far = forecast(res, steps=3, bound=1e6)  # beyond the horizon: found by following the point path
    assert far.bound_crossing["t"] == pytest.approx(np.log(1e5) / np.log(1.2), abs=0.5)


def test_bad_requests_are_input_errors() -> None:
    s = Series(np.arange(20.0), path_with_noise(2, 20))
    res = fit(s, "logistic")
    for kw in ({}, {"steps": 3, "span": 2.0}, {"steps": 0}, {"span": -1.0}):
        with pytest.raises(GrowthcoreInputError):
            forecast(res, **kw)


def test_caution_text_names_the_safety_uses() -> None:
    for word in ("food", "pathogen", "harvest", "public health", "regulations", "professionals"):
        assert word in FORECAST_CAUTION


def test_fit_command_writes_dynamics_bootstrap_and_forecast(tmp_path) -> None:
    y = path_with_noise(9, 30, r=1.6)
    csv = tmp_path / "counts.csv"
    csv.write_text("day,count\n" + "\n".join(f"{i},{v:.4f}" for i, v in enumerate(y)) + "\n", encoding="utf-8")
    out = tmp_path / "rec.json"
    cmd = [sys.executable, "-m", "growthcore", "fit", str(csv), "--model", "logistic,ricker,logistic-curve",
           "--method", "both", "--bootstrap", "300", "--seed", "4", "--forecast", "6", "--out", str(out)]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=240)
    assert done.returncode == 0, done.stderr
    record = json.loads(out.read_text(encoding="utf-8"))
    assert record["caution"] == FORECAST_CAUTION
    assert len(record["fits"]) == 5
    for f in record["fits"]:
        assert f["status"] == "converged"
        dyn = f["dynamics"]
        kinds = ("monotone", "damped-oscillation", "cycle", "chaos", "unbounded", "extinction")
        assert dyn["long_run"]["kind"] in kinds
        assert {"period", "lyapunov"} <= set(dyn["long_run"])
        for e in dyn["equilibria"]:
            assert {"value", "multiplier", "stable"} <= set(e)
        assert len(f["forecast"]) == 6 and {"t", "p", "lo", "hi"} == set(f["forecast"][0])
        for p in f["parameters"].values():
            if not p["fixed"]:
                lo, hi = p["ci95_bootstrap"]
                assert lo <= hi
        assert f["bootstrap"]["requested"] == 300 and f["bootstrap"]["seed"] == 4
    logistic = next(f for f in record["fits"] if f["model"] == "logistic" and f["method"] == "trajectory")
    assert logistic["dynamics"]["long_run"]["kind"] == "damped-oscillation"  # r = 1.6: f'(K) = −0.6
    rows = record["comparison"]["rows"]
    assert all("ci95_bootstrap" in p for row in rows for p in row["parameters"].values() if not p["fixed"])
