"""Which long-run behaviours the uncertainty in the fitted constants allows.

With bootstrap refits, every refit's constants are classified and the shares reported. Without
them, the rate constant is stepped across its t-based 95% interval with the other constants held
at their estimates.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.dynamics.longrun import KINDS, classify
from growthcore.fit.result import FitResult
from growthcore.models.base import DifferenceForm

Array = np.ndarray
#: Rate constants in the order they are looked for: the first the form has is its "rate".
RATE_NAMES: tuple[str, ...] = ("r", "lambda", "b1")


def rate_parameter(result: FitResult) -> str | None:
    """The constant that sets how fast the form grows (r, lambda, or b1 of a custom form)."""
    for name in RATE_NAMES:
        if name in result.values:
            return name
    return None


def state_scale(result: FitResult) -> float:
    """A typical state: the largest observation or K, whichever is larger (tolerances scale with it)."""
    top = float(np.nanmax(np.abs(result.observed))) if result.observed.size else 1.0
    k = result.values.get("K")
    if k is not None and math.isfinite(k):
        top = max(top, float(k))
    return top if top > 0 and math.isfinite(top) else 1.0


def regime_label(kind: str, period: int | None) -> str:
    """A key that keeps cycles of different period apart: ``cycle-2``, ``cycle-4``, ``monotone``."""
    return f"cycle-{period}" if kind == "cycle" and period else kind


@dataclass(frozen=True)
class RegimeShares:
    """Shares of long-run regimes over the plausible constants; ``source`` says where those came from."""

    parameter: str
    interval: tuple[float, float] | None
    shares: Mapping[str, float]
    source: str  # "bootstrap" or "interval grid"
    count: int
    #: The part of ``interval`` that was stepped when the interval reaches past the constant's bounds.
    stepped: tuple[float, float] | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"parameter": self.parameter,
                "interval": list(self.interval) if self.interval else None,
                "shares": dict(self.shares), "source": self.source, "count": self.count,
                "stepped": list(self.stepped) if self.stepped else None}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> RegimeShares:
        interval, stepped = d.get("interval"), d.get("stepped")
        return cls(str(d["parameter"]), None if interval is None else (float(interval[0]), float(interval[1])),
                   {str(k): float(v) for k, v in dict(d["shares"]).items()}, str(d["source"]), int(d["count"]),
                   None if stepped is None else (float(stepped[0]), float(stepped[1])))


def _shares(kinds: Array, periods: Array) -> dict[str, float]:
    labels = [regime_label(KINDS[int(k)], int(p) or None) for k, p in zip(kinds, periods, strict=True)]
    counts: dict[str, int] = {}
    for label in labels:
        counts[label] = counts.get(label, 0) + 1
    return {label: c / len(labels) for label, c in sorted(counts.items(), key=lambda kv: -kv[1])}


def regime_shares(result: FitResult, *, samples: Mapping[str, Array] | None = None,
                  interval: tuple[float, float] | None = None, points: int = 41) -> RegimeShares | None:
    """Long-run regimes over bootstrap ``samples`` (name → values), else over the rate's interval."""
    form = result.form
    rate = rate_parameter(result)
    if not result.success or not isinstance(form, DifferenceForm) or rate is None:
        return None
    values: dict[str, Any] = dict(result.values)
    start = result.start_level
    if samples is not None and len(next(iter(samples.values()), [])):
        values.update({n: np.asarray(v, dtype=float) for n, v in samples.items()})
        start_here = values.pop("p0") if "p0" in samples else start
        batch = classify(form, values, start_here, scale=state_scale(result))
        rate_values = np.asarray(values[rate], dtype=float)
        finite = rate_values[np.isfinite(rate_values)]
        lo_hi = (float(np.percentile(finite, 2.5)), float(np.percentile(finite, 97.5))) if finite.size else None
        return RegimeShares(rate, lo_hi, _shares(batch.kind, batch.period), "bootstrap", int(batch.kind.size))
    ci = interval or result.parameter(rate).ci95
    if ci is None or not all(math.isfinite(c) for c in ci):
        return None
    spec = form.spec(rate)
    lo, hi = max(ci[0], spec.lower), min(ci[1], spec.upper)
    table = (float(ci[0]), float(ci[1]))  # the interval as the tables show it, never clipped
    if not lo < hi:
        return RegimeShares(rate, table, {}, "interval grid", 0, None)
    grid = np.linspace(lo, hi, points)
    values[rate] = grid
    batch = classify(form, values, start, scale=state_scale(result))
    stepped = (float(lo), float(hi)) if (lo, hi) != table else None
    return RegimeShares(rate, table, _shares(batch.kind, batch.period), "interval grid", points, stepped)

