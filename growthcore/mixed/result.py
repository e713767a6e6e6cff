"""The result of a mixed-effects fit, as plain values that go to JSON and back."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from growthcore.numbers import finite_or_none

Interval = tuple[float, float]


def _pair(ci: Interval | None) -> list[float | None] | None:
    return [finite_or_none(ci[0]), finite_or_none(ci[1])] if ci is not None else None


def _unpair(raw: Any) -> Interval | None:
    if raw is None:
        return None
    lo, hi = raw
    return (math.nan if lo is None else float(lo), math.nan if hi is None else float(hi))


def _float(raw: Any) -> float:
    return math.nan if raw is None else float(raw)


@dataclass(frozen=True)
class Estimate:
    """A value with its standard error and 95% interval (None where not estimable); ``df`` gives the
    degrees of freedom of the t quantile behind the interval of a fixed effect."""

    value: float
    se: float | None = None
    ci95: Interval | None = None
    df: int | None = None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"value": finite_or_none(self.value), "se": finite_or_none(self.se),
                               "ci95": _pair(self.ci95)}
        if self.df is not None:
            out["df"] = self.df
        return out

    @classmethod
    def from_dict(cls, raw: Mapping[str, Any]) -> Estimate:
        se, df = raw.get("se"), raw.get("df")
        return cls(_float(raw.get("value")), None if se is None else float(se), _unpair(raw.get("ci95")),
                   None if df is None else int(df))


@dataclass(frozen=True)
class SeriesEffects:
    """One series: its condition, conditional constants, random deviations, separate fit, residuals."""

    name: str
    group: str
    constants: Mapping[str, float]
    deviations: Mapping[str, float]
    separate: Mapping[str, float] | None
    t: tuple[float, ...]
    residual_population: tuple[float, ...]
    residual_series: tuple[float, ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name, "group": self.group,
            "constants": {k: finite_or_none(v) for k, v in self.constants.items()},
            "random_effects": {k: finite_or_none(v) for k, v in self.deviations.items()},
            "separate": None if self.separate is None else {k: finite_or_none(v) for k, v in self.separate.items()},
            "t": list(self.t),
            "residual_population": [finite_or_none(v) for v in self.residual_population],
            "residual_series": [finite_or_none(v) for v in self.residual_series],
        }

    @classmethod
    def from_dict(cls, raw: Mapping[str, Any]) -> SeriesEffects:
        sep = raw.get("separate")
        return cls(str(raw["name"]), str(raw.get("group", "all")),
                   {k: _float(v) for k, v in raw["constants"].items()},
                   {k: _float(v) for k, v in (raw.get("random_effects") or {}).items()},
                   None if sep is None else {k: _float(v) for k, v in sep.items()},
                   tuple(float(v) for v in raw.get("t", ())),
                   tuple(_float(v) for v in raw.get("residual_population", ())),
                   tuple(_float(v) for v in raw.get("residual_series", ())))


@dataclass(frozen=True)
class PopulationFit:
    """A nonlinear mixed-effects fit over a set of series; ``status`` is ``converged`` or ``failed``.

    ``fixed`` holds the population constants and, named ``constant:condition``, the shifts of the
    conditions after the first. ``random_sd`` and ``correlations`` (``"K,r"``) describe Ψ;
    ``held`` are constants held at given values for every series; a curve's p0 is its state at
    ``time_origin`` (the earliest first time of the series; 0 for curves without p0).
    """

    model: str
    status: str
    message: str
    estimation: str
    error: str
    algorithm: str = ""
    random: tuple[str, ...] = ()
    covariance: str = "diagonal"
    shifted: tuple[str, ...] = ()
    held: Mapping[str, float] = field(default_factory=dict)
    conditions: tuple[str, ...] = ()
    time_origin: float = 0.0
    fixed: Mapping[str, Estimate] = field(default_factory=dict)
    fixed_cov: tuple[tuple[float, ...], ...] = ()
    random_sd: Mapping[str, Estimate] = field(default_factory=dict)
    correlations: Mapping[str, Estimate] = field(default_factory=dict)
    residual_sd: Estimate | None = None
    loglik: float = math.nan
    aic: float = math.nan
    bic: float = math.nan
    n_obs: int = 0
    n_params: int = 0
    iterations: int = 0
    series: tuple[SeriesEffects, ...] = ()
    notes: tuple[str, ...] = ()

    @property
    def success(self) -> bool:
        return self.status == "converged"

    @property
    def fixed_values(self) -> dict[str, float]:
        return {k: v.value for k, v in self.fixed.items()}

    def population_constants(self, group: str | None = None) -> dict[str, float]:
        """The curve's constants for the population of ``group`` (the first condition by default)."""
        g = group if group is not None else (self.conditions[0] if self.conditions else "all")
        names = [n for n in self.fixed if ":" not in n]
        out = {n: self.fixed[n].value for n in names}
        if self.conditions and g != self.conditions[0]:
            for n in self.shifted:
                out[n] += self.fixed[f"{n}:{g}"].value
        return {**out, **self.held}

    def to_dict(self) -> dict[str, Any]:
        return {
            "model": self.model, "status": self.status, "message": self.message,
            "estimation": self.estimation, "error": self.error, "algorithm": self.algorithm,
            "random": list(self.random), "covariance": self.covariance, "shifted": list(self.shifted),
            "held": dict(self.held), "conditions": list(self.conditions), "time_origin": self.time_origin,
            "fixed": {k: v.to_dict() for k, v in self.fixed.items()},
            "fixed_cov": [[finite_or_none(v) for v in row] for row in self.fixed_cov],
            "random_sd": {k: finite_or_none(v.value) for k, v in self.random_sd.items()},
            "random_sd_ci95": {k: _pair(v.ci95) for k, v in self.random_sd.items()},
            "correlations": {k: v.to_dict() for k, v in self.correlations.items()},
            "residual_sd": finite_or_none(self.residual_sd.value) if self.residual_sd else None,
            "residual_sd_ci95": _pair(self.residual_sd.ci95) if self.residual_sd else None,
            "loglik": finite_or_none(self.loglik), "aic": finite_or_none(self.aic), "bic": finite_or_none(self.bic),
            "n_obs": self.n_obs, "n_params": self.n_params, "iterations": self.iterations,
            "series": [s.to_dict() for s in self.series],
            "notes": list(self.notes),
        }

    @classmethod
    def from_dict(cls, raw: Mapping[str, Any]) -> PopulationFit:
        sd_ci = raw.get("random_sd_ci95") or {}
        resid = raw.get("residual_sd")
        return cls(
            model=str(raw["model"]), status=str(raw["status"]), message=str(raw.get("message", "")),
            estimation=str(raw["estimation"]), error=str(raw.get("error", "additive")),
            algorithm=str(raw.get("algorithm", "")), random=tuple(raw.get("random", ())),
            covariance=str(raw.get("covariance", "diagonal")), shifted=tuple(raw.get("shifted", ())),
            held={k: float(v) for k, v in (raw.get("held") or {}).items()},
            conditions=tuple(raw.get("conditions", ())), time_origin=float(raw.get("time_origin", 0.0)),
            fixed={k: Estimate.from_dict(v) for k, v in (raw.get("fixed") or {}).items()},
            fixed_cov=tuple(tuple(_float(v) for v in row) for row in raw.get("fixed_cov", ())),
            random_sd={k: Estimate(_float(v), None, _unpair(sd_ci.get(k)))
                       for k, v in (raw.get("random_sd") or {}).items()},
            correlations={k: Estimate.from_dict(v) for k, v in (raw.get("correlations") or {}).items()},
            residual_sd=None if resid is None else Estimate(float(resid), None, _unpair(raw.get("residual_sd_ci95"))),
            loglik=_float(raw.get("loglik")), aic=_float(raw.get("aic")), bic=_float(raw.get("bic")),
            n_obs=int(raw.get("n_obs", 0)), n_params=int(raw.get("n_params", 0)),
            iterations=int(raw.get("iterations", 0)),
            series=tuple(SeriesEffects.from_dict(s) for s in raw.get("series", ())),
            notes=tuple(raw.get("notes", ())),
        )


def failed_population(model: str, message: str, *, estimation: str, error: str, **extra: Any) -> PopulationFit:
    """A failed fit: the message says why, in words a user can act on."""
    return PopulationFit(model=model, status="failed", message=message, estimation=estimation, error=error, **extra)
