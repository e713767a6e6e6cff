"""The engine against certified values from the NIST Statistical Reference Datasets (StRD).

Source of every number checked here: NIST StRD certified values, copied into
tests/reference/nist_strd.json (datasets NoInt1, NoInt2, Rat42, Misra1a).

Digits are counted as NIST does, by the log relative error LRE = −log10(|got − certified| / |certified|):
"at least d significant digits" means LRE ≥ d.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.stats import regression_through_origin

REFERENCE_DIR = Path(__file__).resolve().parents[1] / "reference"
REFERENCE = json.loads((REFERENCE_DIR / "nist_strd.json").read_text(encoding="utf-8"))
NIST = REFERENCE["datasets"]


def lre(got: float, certified: float) -> float:
    """NIST's log relative error: the number of significant digits that agree."""
    if got == certified:
        return math.inf
    return -math.log10(abs(got - certified) / abs(certified))


def assert_digits(got: float | None, certified: float, digits: float, what: str) -> None:
    assert got is not None, f"{what}: no value"
    assert lre(got, certified) >= digits, (
        f"{what}: got {got!r}, certified {certified!r} (LRE {lre(got, certified):.2f} < {digits})")


# --------------------------------------------------------------------------------------------
# Regression through the origin: NIST StRD NoInt1 and NoInt2 (certified B1, SD(B1), residual SD,
# uncentered R²).


@pytest.mark.parametrize("name", ["NoInt1", "NoInt2"])
def test_regression_through_origin_matches_nist(name: str) -> None:
    ds = NIST[name]
    reg = regression_through_origin(np.array(ds["x"], float), np.array(ds["y"], float))
    assert reg.dof == ds["dof"]
    assert_digits(float(reg.coef[0]), ds["certified"]["B1"], 9, f"{name} B1")
    assert_digits(float(reg.se[0]), ds["certified_sd"]["B1"], 9, f"{name} SD(B1)")
    assert_digits(reg.residual_sd, ds["residual_sd"], 9, f"{name} residual SD")
    assert_digits(reg.r2_uncentered, ds["r_squared_uncentered"], 9, f"{name} uncentered R²")


def _pairs_series(x: list[float], y: list[float]) -> Series:
    """A series whose consecutive grid pairs are (x_i, x_i + y_i), separated by one-step gaps.

    The geometric form's increments fit regresses Δp = p_{n+1} − p_n on p_n through the origin, so
    on these pairs it is exactly the NoInt regression y = B1·x with B1 = r. The gap (one missing grid
    point between pairs) keeps the pairs independent: (x_i + y_i, x_{i+1}) are two steps apart.
    """
    t, p = [], []
    for i, (xi, yi) in enumerate(zip(x, y, strict=True)):
        t += [3.0 * i, 3.0 * i + 1.0]
        p += [xi, xi + yi]
    return Series(np.array(t), np.array(p))


@pytest.mark.parametrize("name", ["NoInt1", "NoInt2"])
def test_geometric_increments_fit_matches_nist(name: str) -> None:
    ds = NIST[name]
    series = _pairs_series(ds["x"], ds["y"])
    step = series.step()
    assert step.regular and step.h == 1.0
    result = fit(series, "geometric", method="increments")
    assert result.status == "converged", result.message
    assert result.metrics is not None
    assert result.metrics.n == len(ds["x"])
    r = result.parameter("r")
    assert_digits(r.value, ds["certified"]["B1"], 9, f"{name} B1 via geometric increments")
    assert_digits(r.se, ds["certified_sd"]["B1"], 9, f"{name} SD(B1) via geometric increments")
    assert_digits(result.metrics.residual_sd, ds["residual_sd"], 9, f"{name} residual SD via increments")
    assert_digits(result.metrics.r2_uncentered, ds["r_squared_uncentered"], 9, f"{name} uncentered R² via increments")


# --------------------------------------------------------------------------------------------
# Rat42: y = b1 / (1 + exp(b2 − b3·x)) is the logistic curve K / (1 + (K/p0 − 1)·e^(−r·t)) with
# t = x (time_origin=0: p0 is the state at t = 0, not at the first observation), K = b1, r = b3
# and K/p0 − 1 = e^(b2), i.e. p0 = b1 / (1 + e^(b2)). K and r are b1 and b3
# themselves, so their standard errors are NIST's SD(b1) and SD(b3) unchanged by the p0 change of variable.


def _rat42_start(b: list[float]) -> dict[str, float]:
    return {"K": b[0], "r": b[2], "p0": b[0] / (1.0 + math.exp(b[1]))}


RAT42_STARTS = {
    "nist-start-1": _rat42_start(NIST["Rat42"]["start_1"]),
    "nist-start-2": _rat42_start(NIST["Rat42"]["start_2"]),
    "automatic": None,
}


@pytest.mark.parametrize("start_name", list(RAT42_STARTS))
def test_rat42_logistic_curve_matches_nist(start_name: str) -> None:
    ds = NIST["Rat42"]
    series = Series(np.array(ds["x"], float), np.array(ds["y"], float))
    result = fit(series, "logistic-curve", method="trajectory", start=RAT42_STARTS[start_name],
                 time_origin=0.0, profile=False)
    assert result.status == "converged", result.message
    cert, sd = ds["certified"], ds["certified_sd"]
    k, r, p0 = result.parameter("K"), result.parameter("r"), result.parameter("p0")
    assert_digits(k.value, cert["b1"], 6, "Rat42 K = b1")
    assert_digits(r.value, cert["b3"], 6, "Rat42 r = b3")
    assert_digits(k.se, sd["b1"], 3, "Rat42 SE(K) = SD(b1)")
    assert_digits(r.se, sd["b3"], 3, "Rat42 SE(r) = SD(b3)")
    assert result.metrics is not None
    assert_digits(result.metrics.sse, ds["residual_sum_of_squares"], 6, "Rat42 SSE")
    assert_digits(result.metrics.residual_sd, ds["residual_sd"], 6, "Rat42 residual SD")
    # p0 is the image of the certified (b1, b2) under p0 = b1 / (1 + e^b2).
    assert_digits(p0.value, cert["b1"] / (1.0 + math.exp(cert["b2"])), 6, "Rat42 p0 = b1/(1+e^b2)")


# --------------------------------------------------------------------------------------------
# Misra1a: y = b1·(1 − exp(−b2·x)) is the monomolecular curve K − (K − p0)·e^(−r·t) with p0 = 0,
# K = b1, r = b2.

MISRA_STARTS = {
    "nist-start-1": {"K": NIST["Misra1a"]["start_1"][0], "r": NIST["Misra1a"]["start_1"][1]},
    "nist-start-2": {"K": NIST["Misra1a"]["start_2"][0], "r": NIST["Misra1a"]["start_2"][1]},
    "automatic": None,
}


@pytest.mark.parametrize("start_name", list(MISRA_STARTS))
def test_misra1a_monomolecular_curve_matches_nist(start_name: str) -> None:
    ds = NIST["Misra1a"]
    series = Series(np.array(ds["x"], float), np.array(ds["y"], float))
    result = fit(series, "monomolecular-curve", method="trajectory", fixed={"p0": 0.0},
                 start=MISRA_STARTS[start_name], time_origin=0.0, profile=False)
    assert result.status == "converged", result.message
    cert, sd = ds["certified"], ds["certified_sd"]
    assert result.parameter("p0").fixed and result.parameter("p0").value == 0.0
    assert result.metrics is not None and result.metrics.n_params == 2
    assert_digits(result.parameter("K").value, cert["b1"], 6, "Misra1a K = b1")
    assert_digits(result.parameter("r").value, cert["b2"], 6, "Misra1a r = b2")
    assert_digits(result.parameter("K").se, sd["b1"], 3, "Misra1a SE(K) = SD(b1)")
    assert_digits(result.parameter("r").se, sd["b2"], 3, "Misra1a SE(r) = SD(b2)")
    assert_digits(result.metrics.sse, ds["residual_sum_of_squares"], 6, "Misra1a SSE")


def test_rat42_with_profile_keeps_certified_optimum() -> None:
    """The capacity profile is a by-product: it must not move the estimate, and its minimum is at K̂.

    Source: NIST StRD Rat42 certified b1 and SSE.
    """
    ds = NIST["Rat42"]
    series = Series(np.array(ds["x"], float), np.array(ds["y"], float))
    result = fit(series, "logistic-curve", method="trajectory", time_origin=0.0)
    assert result.status == "converged", result.message
    assert_digits(result.parameter("K").value, ds["certified"]["b1"], 6, "Rat42 K with profiling")
    prof = result.profile
    assert prof is not None
    finite = np.isfinite(prof.sse)
    assert np.nanmin(prof.sse) >= ds["residual_sum_of_squares"] * (1 - 1e-9)
    lo, hi = prof.interval
    assert lo is not None and hi is not None and lo < ds["certified"]["b1"] < hi
    assert finite.sum() >= 5
