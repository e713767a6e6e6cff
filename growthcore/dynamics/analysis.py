"""What a fitted form says about the long run: equilibria, their stability, the long-run regime and
plain sentences that say it in words."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.dynamics.interpret import describe
from growthcore.dynamics.longrun import LongRun, long_run
from growthcore.dynamics.regimes import RegimeShares, rate_parameter, regime_shares, state_scale
from growthcore.fit.result import FitResult
from growthcore.models.base import CurveForm, DifferenceForm

Array = np.ndarray


@dataclass(frozen=True)
class Dynamics:
    """Equilibria (value, multiplier, stable), the long run from the starting level, and sentences."""

    model: str
    method: str
    equilibria: tuple[Mapping[str, Any], ...]
    long_run: LongRun
    rate_parameter: str | None
    regimes: RegimeShares | None
    sentences: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "equilibria": [dict(e) for e in self.equilibria],
            "long_run": self.long_run.to_dict(),
            "rate_parameter": self.rate_parameter,
            "regimes": self.regimes.to_dict() if self.regimes else None,
            "sentences": list(self.sentences),
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any], *, model: str, method: str) -> Dynamics:
        """The dynamics a :meth:`to_dict` wrote for the fit of ``model`` by ``method`` (a record's fit
        entry holds both beside its ``dynamics``)."""
        regimes = d.get("regimes")
        return cls(model, method, tuple(dict(e) for e in d["equilibria"]), LongRun.from_dict(d["long_run"]),
                   d.get("rate_parameter"), None if regimes is None else RegimeShares.from_dict(regimes),
                   tuple(str(s) for s in d["sentences"]))


def _curve_long_run(result: FitResult, form: CurveForm) -> LongRun:
    """A scalar autonomous ODE moves monotonically: it settles, dies out or grows without bound."""
    span = float(np.ptp(result.t)) if result.t.size > 1 else 1.0
    t_far = float(result.t[-1]) + 1e3 * max(span, 1e-9) if result.t.size else 1e3
    values = result.values
    with np.errstate(all="ignore"):
        late = np.asarray(form.value(np.array([t_far, 2.0 * t_far]) - result.time_origin, values), dtype=float)
    scale = state_scale(result)
    start = float(values.get("p0", math.nan))
    if not np.all(np.isfinite(late)) or late[-1] > 1e12 * scale or late[1] > late[0] * (1 + 1e-6):
        return LongRun("unbounded", None, None, (), start)
    if abs(late[-1]) <= 1e-9 * scale:
        return LongRun("extinction", None, None, (), start)
    return LongRun("monotone", None, None, (float(late[-1]),), start)


def analyse(result: FitResult, *, samples: Mapping[str, Array] | None = None) -> Dynamics | None:
    """The dynamics of a converged fit; ``samples`` (bootstrap refits, name → values) widen the view
    from the estimate to the regimes its uncertainty allows. None for a failed fit."""
    form = result.form
    if not result.success or form is None:
        return None
    equilibria = tuple(result.derived.get("equilibria", ()))
    if isinstance(form, DifferenceForm):
        lr = long_run(form, result.values, result.start_level, scale=state_scale(result))
        regimes = regime_shares(result, samples=samples)
    else:
        lr = _curve_long_run(result, form)
        regimes = None
    rate = rate_parameter(result)
    return Dynamics(result.model, result.method, equilibria, lr, rate, regimes,
                    tuple(describe(result, lr, equilibria, regimes)))
