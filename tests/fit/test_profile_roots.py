"""Profile interval ends of K found by root-finding on the cut, under both named cuts.

Reference: for the increments logistic fit, SSE(K) at fixed K is the residual sum of squares of the
regression through the origin of Δp on p(1 − p/K), which statsmodels OLS (no constant) computes; scipy's
brentq then finds where that profile crosses each cut. The cuts are those of Bates & Watts (1988), §6.1
(F-calibrated) and the chi-square likelihood ratio; quantiles from scipy.stats.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize, stats

from growthcore.fit import fit
from tests.open_data import uspop

sm = pytest.importorskip("statsmodels.api")


def _sse_at(k: float, p: np.ndarray) -> float:
    x, dp = p[:-1], np.diff(p)
    return float(sm.OLS(dp, x * (1.0 - x / k)).fit().ssr)  # statsmodels: OLS without a constant


def test_uspop_increments_profile_ends_match_root_finding_on_statsmodels_sse() -> None:
    s = uspop()  # carData::USPop, census every 10 years: one grid step
    result = fit(s, "logistic", method="increments")
    prof = result.profile
    assert prof is not None
    n, q = result.metrics.n, result.metrics.n_params
    sse_min = _sse_at(result.values["K"], s.p)
    assert result.metrics.sse == pytest.approx(sse_min, rel=1e-9)
    f_cut = sse_min * (1.0 + stats.f.ppf(0.95, 1, n - q) / (n - q))
    lr_cut = sse_min * math.exp(stats.chi2.ppf(0.95, 1) / n)
    assert prof.threshold == pytest.approx(f_cut, rel=1e-10)
    assert prof.threshold_lr == pytest.approx(lr_cut, rel=1e-10)
    k_hat = result.values["K"]

    def above_cut(k: float, cut: float) -> float:
        return _sse_at(k, s.p) - cut

    for cut, ends in ((f_cut, prof.interval), (lr_cut, prof.interval_lr)):
        lo = optimize.brentq(above_cut, k_hat / 4, k_hat, args=(cut,), xtol=1e-10)
        hi = optimize.brentq(above_cut, k_hat, 4 * k_hat, args=(cut,), xtol=1e-10)
        # grid interpolation on 41 points was off by 1.6 in K at the low end (386.39 against 384.77)
        assert ends[0] == pytest.approx(lo, rel=1e-6)
        assert ends[1] == pytest.approx(hi, rel=1e-6)
    assert prof.to_dict()["cut"] == "F-calibrated"
    assert prof.interval_lr[0] > prof.interval[0]  # the LR cut is the lower one at n = 22


def test_trajectory_profile_end_is_a_root_of_the_profile() -> None:
    s = uspop()
    result = fit(s, "logistic-curve", method="trajectory")
    prof = result.profile
    assert prof is not None and prof.interval[0] is not None and prof.interval[1] is not None
    for end in prof.interval:
        again = fit(s, "logistic-curve", method="trajectory", capacity=end, profile=False)
        # at an end the profile SSE equals the cut (to the solver's precision)
        assert again.metrics.sse == pytest.approx(prof.threshold, rel=1e-6)


@pytest.mark.parametrize("model", ["ricker", "beverton-holt", "gompertz"])
def test_increments_profile_ends_are_roots_of_the_profile(model: str) -> None:
    """The profile's refits keep only each optimum's SSE; a whole fit with K held at either end of
    either interval has the SSE of that cut (Bates & Watts 1988, §6.1, the profile's definition)."""
    s = uspop()
    prof = fit(s, model, method="increments").profile
    assert prof is not None
    found = 0
    for cut, ends in ((prof.threshold, prof.interval), (prof.threshold_lr, prof.interval_lr)):
        for end in (e for e in ends if e is not None):  # an end beyond 4·K̂ is reported open
            found += 1
            again = fit(s, model, method="increments", capacity=end, profile=False)
            assert again.metrics.sse == pytest.approx(cut, rel=1e-6), (model, end)
    assert found >= 2


def test_the_screen_names_both_cuts() -> None:
    from growthcore.app.callbacks.fits import compute_fits
    from growthcore.app.components.comparison import parameter_lines

    s = uspop()
    data = {"key": "k", "t": list(s.t), "p": list(s.p), "name": s.name}
    settings = {"models": ["logistic"], "method": "increments", "error": "additive", "k_mode": "fitted", "terms": []}
    store = compute_fits(data, None, settings, None)
    fit_store = store["fits"][0]
    lines = [str(d.children) for d in parameter_lines(fit_store["parameters"], fit_store["profile_interval"])]
    text = " ".join(lines)
    assert "F-calibrated" in text and "likelihood-ratio" in text
    engine = fit(s, "logistic", method="increments").profile
    assert fit_store["profile_interval"] == pytest.approx([*engine.interval, *engine.interval_lr], rel=1e-12)
