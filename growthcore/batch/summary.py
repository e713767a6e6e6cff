"""Per-group summaries of fitted constants: mean, SD and a t-based 95% interval of the mean.

Notes
-----
For the n converged replicate fits of a group, mean = Σx/n, SD with n − 1 in the denominator,
SE = SD/√n and the interval mean ± t(0.975; n − 1)·SE (the usual interval for a mean of
independent replicates; it treats each replicate's estimate as one observation).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.batch.runner import BatchResult
from growthcore.stats import t_quantile


@dataclass(frozen=True)
class GroupParameterSummary:
    group: str
    model: str
    parameter: str
    n: int
    n_failed: int
    mean: float | None
    sd: float | None
    se_mean: float | None
    ci95: tuple[float, float] | None

    def to_dict(self) -> dict[str, Any]:
        return {"group": self.group, "model": self.model, "parameter": self.parameter, "n": self.n,
                "n_failed": self.n_failed, "mean": self.mean, "sd": self.sd, "se_mean": self.se_mean,
                "ci95_low": self.ci95[0] if self.ci95 else None, "ci95_high": self.ci95[1] if self.ci95 else None}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> GroupParameterSummary:
        lo, hi = d.get("ci95_low"), d.get("ci95_high")
        return cls(str(d["group"]), str(d["model"]), str(d["parameter"]), int(d["n"]), int(d["n_failed"]),
                   d["mean"], d["sd"], d["se_mean"], None if lo is None or hi is None else (float(lo), float(hi)))


def summarise(values: np.ndarray) -> tuple[float | None, float | None, float | None, tuple[float, float] | None]:
    """(mean, SD, SE of the mean, 95% interval) of finite values; None where n is too small."""
    x = values[np.isfinite(values)]
    n = x.size
    if n == 0:
        return None, None, None, None
    mean = float(np.mean(x))
    if n < 2:
        return mean, None, None, None
    sd = float(np.std(x, ddof=1))
    se = sd / math.sqrt(n)
    half = t_quantile(0.975, n - 1) * se
    return mean, sd, se, (mean - half, mean + half)


def group_summary(batch: BatchResult, model: str | None = None) -> list[GroupParameterSummary]:
    """One entry per group, form and free constant; series in no group are left out of the table."""
    out: list[GroupParameterSummary] = []
    groups = batch.data.members()
    for m in (batch.models if model is None else (model,)):
        fits = {f.series: f.result for f in batch.for_model(m)}
        names: list[str] = []
        for r in fits.values():
            for p in r.parameters:
                if not p.fixed and p.name not in names:
                    names.append(p.name)
        values = {sid: (r.values if r.success else None) for sid, r in fits.items()}
        out.extend(summarise_groups(m, names, groups, values))
    return out


def summarise_groups(model: str, constants: Sequence[str], members: Mapping[str, Sequence[str]],
                     values: Mapping[str, Mapping[str, float] | None]) -> list[GroupParameterSummary]:
    """Per group (in the order of ``members``) and constant, the summary of the converged fits.

    ``values[id]`` holds a converged fit's constants and is None for a failed fit; a series absent
    from ``values`` was not fitted and counts neither way.
    """
    out = []
    for label, ids in members.items():
        fitted = [i for i in ids if i in values]
        ok = [values[i] for i in fitted if values[i] is not None]
        for name in constants:
            vals = np.array([v[name] for v in ok if v is not None and name in v], dtype=float)
            mean, sd, se, ci = summarise(vals)
            out.append(GroupParameterSummary(label, model, name, int(np.isfinite(vals).sum()), len(fitted) - len(ok),
                                             mean, sd, se, ci))
    return out
