"""Pooled fits with shared constants and the extra-sum-of-squares F test, against references.

References: a joint least-squares problem built by hand here and solved with
scipy.optimize.least_squares; the F statistic and p-value computed by hand from two SSEs with
scipy.stats.f (the extra-sum-of-squares principle for nested least-squares models); and, for a
model that is linear after the log transform, statsmodels OLS with anova_lm.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as sps
from scipy.optimize import least_squares

from growthcore.batch import group_difference_test, joint_fit, pooled_fit
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError

T = np.arange(25) * 0.5


def logistic(t: np.ndarray, k: float, r: float, p0: float) -> np.ndarray:
    return k / (1 + (k / p0 - 1) * np.exp(-r * t))


def invented_groups(seed: int = 5) -> tuple[list[Series], list[str]]:
    """Two invented conditions, three replicates each; K differs by 15 % between them."""
    rng = np.random.default_rng(seed)
    series, labels = [], []
    for g, k in (("ctrl", 1.0), ("treated", 0.85)):
        for rep in range(3):
            p0 = 0.02 * (1 + 0.2 * rep)
            p = logistic(T, k, 0.6, p0) + 0.02 * rng.standard_normal(T.size)
            series.append(Series(T, p, name=f"{g}_{rep + 1}"))
            labels.append(g)
    return series, labels


def hand_joint(series: list[Series], labels: list[str], shared_k: bool) -> least_squares:
    """Joint residuals: K per group (or shared), r per group, p0 per series."""
    groups = sorted(set(labels))
    g_of = [groups.index(g) for g in labels]
    nk = 1 if shared_k else len(groups)

    def res(x: np.ndarray) -> np.ndarray:
        ks, rs, p0s = x[:nk], x[nk:nk + len(groups)], x[nk + len(groups):]
        return np.concatenate([
            s.p - logistic(s.t, ks[0 if shared_k else g], rs[g], p0s[j])
            for j, (s, g) in enumerate(zip(series, g_of, strict=True))
        ])

    x0 = np.concatenate([np.full(nk, 1.0), np.full(len(groups), 0.5), np.full(len(series), 0.02)])
    return least_squares(res, x0, bounds=(0, np.inf), ftol=1e-14, xtol=1e-14, gtol=1e-14)


def test_pooled_fit_against_hand_built_joint_least_squares() -> None:
    series, _ = invented_groups()
    pooled = pooled_fit(series[:3], "logistic-curve")
    assert pooled.success

    def res(x: np.ndarray) -> np.ndarray:
        return np.concatenate([s.p - logistic(s.t, x[0], x[1], x[2 + j]) for j, s in enumerate(series[:3])])

    ref = least_squares(res, np.array([1.0, 0.5, 0.02, 0.02, 0.02]), bounds=(0, np.inf),
                        ftol=1e-14, xtol=1e-14, gtol=1e-14)
    sse = float(ref.fun @ ref.fun)
    assert pooled.sse == pytest.approx(sse, rel=1e-7)
    assert pooled.value("K") == pytest.approx(ref.x[0], rel=1e-5)
    assert pooled.value("r") == pytest.approx(ref.x[1], rel=1e-5)
    assert pooled.value("p0", "ctrl_2") == pytest.approx(ref.x[3], rel=1e-4)
    # standard errors: s²(JᵀJ)⁻¹ from the reference Jacobian (the usual asymptotic covariance)
    dof = ref.fun.size - ref.x.size
    cov = sse / dof * np.linalg.inv(ref.jac.T @ ref.jac)
    assert pooled.result.parameter("K").se == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-3)
    assert pooled.result.parameter("r").se == pytest.approx(np.sqrt(cov[1, 1]), rel=1e-3)
    assert pooled.dof == dof


def test_f_test_against_scipy_f_from_two_sses() -> None:
    series, labels = invented_groups()
    test = group_difference_test(series, labels, "logistic-curve", "K")
    assert test.status == "done"
    full, reduced = hand_joint(series, labels, shared_k=False), hand_joint(series, labels, shared_k=True)
    sse_f, sse_r = float(full.fun @ full.fun), float(reduced.fun @ reduced.fun)
    df_f, df_r = full.fun.size - full.x.size, reduced.fun.size - reduced.x.size
    f = ((sse_r - sse_f) / (df_r - df_f)) / (sse_f / df_f)
    assert (test.df_full, test.df_reduced) == (df_f, df_r) == (150 - 10, 150 - 9)
    assert test.sse_full == pytest.approx(sse_f, rel=1e-7)
    assert test.sse_reduced == pytest.approx(sse_r, rel=1e-7)
    assert test.f == pytest.approx(f, rel=1e-5)
    assert test.p_value == pytest.approx(sps.f.sf(f, df_r - df_f, df_f), rel=1e-4, abs=1e-300)
    assert test.p_value < 1e-6  # the invented groups differ by 15 % in K


def test_f_test_no_difference_gives_a_large_p() -> None:
    series, labels = invented_groups()
    same = [s for s, g in zip(series, labels, strict=True) if g == "ctrl"]
    test = group_difference_test(same, ["a", "a", "b"][: len(same)], "logistic-curve", "r")
    assert test.status == "done" and test.p_value > 0.01


def test_f_test_linear_case_against_statsmodels_anova() -> None:
    # exponential curve with log error: ln p = ln p0_j + r_g·t is linear, so the F test must equal
    # statsmodels' anova_lm of OLS ln p ~ C(series) + C(group):t against ln p ~ C(series) + t
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    rng = np.random.default_rng(2)
    t = np.arange(10.0)
    series, labels, frames = [], [], []
    for g, r in (("a", 0.30), ("b", 0.33), ("c", 0.29)):
        for rep in range(2):
            p = 0.1 * (1 + 0.3 * rep) * np.exp(r * t) * np.exp(0.05 * rng.standard_normal(t.size))
            name = f"{g}{rep}"
            series.append(Series(t, p, name=name))
            labels.append(g)
            frames.append(pd.DataFrame({"y": np.log(p), "t": t, "series": name, "group": g}))
    df = pd.concat(frames)
    full = smf.ols("y ~ C(series) + C(group):t - 1", df).fit()
    reduced = smf.ols("y ~ C(series) + t - 1", df).fit()
    table = anova_lm(reduced, full)
    test = group_difference_test(series, labels, "exponential-curve", "r", error="log")
    assert test.sse_full == pytest.approx(full.ssr, rel=1e-6)
    assert test.sse_reduced == pytest.approx(reduced.ssr, rel=1e-6)
    assert test.f == pytest.approx(table["F"].iloc[1], rel=1e-5)
    assert test.p_value == pytest.approx(table["Pr(>F)"].iloc[1], rel=1e-4)
    f_sm, p_sm, df_sm = full.compare_f_test(reduced)
    assert test.f == pytest.approx(f_sm, rel=1e-5) and test.df_reduced - test.df_full == df_sm


def test_joint_fit_reports_a_series_it_cannot_use() -> None:
    series, _ = invented_groups()
    short = Series(T[:3], series[0].p[:3], name="short")
    out = joint_fit([*series[:2], short], "logistic-curve")
    assert not out.success and "'short'" in out.result.message


def test_f_test_input_errors() -> None:
    series, labels = invented_groups()
    with pytest.raises(GrowthcoreInputError, match="no constant"):
        group_difference_test(series, labels, "logistic-curve", "theta")
    with pytest.raises(GrowthcoreInputError, match="per series"):
        group_difference_test(series, labels, "logistic-curve", "p0")
    with pytest.raises(GrowthcoreInputError, match="two groups"):
        group_difference_test(series, ["x"] * len(series), "logistic-curve", "K")
