"""Likelihood-ratio tests between nested mixed-effects fits of the same data."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from scipy.stats import chi2

from growthcore.mixed.result import PopulationFit
from growthcore.numbers import finite_or_none, nan_if_none


@dataclass(frozen=True)
class LikelihoodRatioTest:
    """2·(ℓ_full − ℓ_reduced) against χ² with the difference in parameter counts as degrees of freedom.

    ``status`` is ``done`` or ``failed`` (fits that are not nested or not comparable), with a message.
    """

    status: str
    message: str
    statistic: float = math.nan
    df: int = 0
    p_value: float = math.nan
    reduced: str = ""
    full: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"status": self.status, "message": self.message, "statistic": finite_or_none(self.statistic),
                "df": self.df,
                "p_value": finite_or_none(self.p_value), "reduced": self.reduced, "full": self.full}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> LikelihoodRatioTest:
        return cls(str(d["status"]), str(d["message"]), nan_if_none(d["statistic"]), int(d["df"]),
                   nan_if_none(d["p_value"]), str(d["reduced"]), str(d["full"]))


def describe(fit: PopulationFit) -> str:
    """A short label of a fit's structure: random constants, covariance, shifts, held constants."""
    parts = [f"random {','.join(fit.random)}" + (" (full)" if fit.covariance == "full" and len(fit.random) > 1 else "")]
    if fit.shifted:
        parts.append(f"shifted {','.join(fit.shifted)}")
    if fit.held:
        parts.append("held " + ",".join(f"{k}={v:g}" for k, v in fit.held.items()))
    return "; ".join(parts)


def likelihood_ratio_test(reduced: PopulationFit, full: PopulationFit) -> LikelihoodRatioTest:
    """Test ``reduced`` against the larger model ``full`` (both of the same series, form and error).

    Notes
    -----
    When the reduced model sets a variance to zero the null value lies on the boundary and the χ²
    p-value is conservative (about twice the exact one for a single variance; Pinheiro & Bates 2000,
    §2.4.1; Self & Liang 1987, JASA 82:605).
    """
    names = (describe(reduced), describe(full))
    if not (reduced.success and full.success):
        return LikelihoodRatioTest("failed", "both fits must have converged", reduced=names[0], full=names[1])
    same = (reduced.model == full.model and reduced.error == full.error and reduced.estimation == full.estimation
            and reduced.n_obs == full.n_obs and [s.name for s in reduced.series] == [s.name for s in full.series])
    if not same:
        return LikelihoodRatioTest("failed", "the fits differ in data, form, error model or estimation: "
                                   "a likelihood-ratio test needs the same data and the same kind of fit",
                                   reduced=names[0], full=names[1])
    nested = (set(reduced.random) <= set(full.random) and set(reduced.shifted) <= set(full.shifted)
              and set(full.held) <= set(reduced.held)
              and not (reduced.covariance == "full" and full.covariance == "diagonal" and len(reduced.random) > 1))
    df = full.n_params - reduced.n_params
    if not nested or df <= 0:
        return LikelihoodRatioTest("failed", f"{names[0]!r} is not nested in {names[1]!r}", reduced=names[0],
                                   full=names[1])
    if reduced.estimation == "REML" and set(reduced.fixed) != set(full.fixed):
        return LikelihoodRatioTest("failed", "REML likelihoods of models with different fixed effects are not "
                                   "comparable: fit both by ML", reduced=names[0], full=names[1])
    statistic = max(2.0 * (full.loglik - reduced.loglik), 0.0)
    p = float(chi2.sf(statistic, df))
    boundary = set(reduced.random) < set(full.random)
    note = " (a variance tested at zero: the χ² p-value is conservative)" if boundary else ""
    return LikelihoodRatioTest("done", f"LR = {statistic:.4g} on {df} df, p = {p:.3g}{note}", statistic, df, p,
                               names[0], names[1])
