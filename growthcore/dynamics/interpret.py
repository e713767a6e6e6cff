"""Plain sentences for the long-run behaviour a fit implies and what its uncertainty allows."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.dynamics.longrun import LongRun
from growthcore.dynamics.regimes import RegimeShares, rate_parameter

PHRASES: dict[str, str] = {
    "monotone": "settle monotonically to a steady level",
    "damped-oscillation": "settle to a steady level through damped oscillations",
    "chaos": "fluctuate chaotically",
    "unbounded": "grow without bound",
    "extinction": "fall to zero",
    "cycle": "keep cycling without settling",
}


def _g(x: float) -> str:
    return f"{x:.4g}"


def phrase(label: str) -> str:
    """Words for a regime label such as ``monotone`` or ``cycle-4``."""
    if label.startswith("cycle-"):
        return f"settle into a {label.split('-', 1)[1]}-cycle"
    return PHRASES.get(label, label)


def _subject(result: Any) -> str:
    rate = rate_parameter(result)
    if rate is None:
        return "The fitted model"
    return f"The fitted {rate} = {_g(result.values[rate])}"


def describe(result: Any, lr: LongRun, equilibria: Sequence[Mapping[str, Any]],
             regimes: RegimeShares | None) -> list[str]:
    """One sentence for the estimate's long run, one for what the interval allows, one per extra note."""
    subject = _subject(result)
    out: list[str] = []
    if lr.kind in ("monotone", "damped-oscillation") and lr.states:
        level = lr.states[0]
        target = _approached(equilibria, level)
        how = ("monotonically" if lr.kind == "monotone"
               else "through damped oscillations (the deviation changes sign each step)")
        if target is not None and abs(target["value"] - level) > 1e-3 * max(abs(target["value"]), abs(level), 1e-300):
            # the path is still far from the level it tends to: say both, with the multiplier of the level itself
            mult = target.get("multiplier")
            extra = f"; multiplier f'(p*) = {_g(mult)}" if mult is not None and result.form.kind == "difference" else ""
            out.append(f"{subject} implies a steady level p* = {_g(target['value'])}, approached {how} but slowly: "
                       f"the path is still at {_g(level)} after the steps followed{extra}.")
        else:
            mult = _multiplier_at(equilibria, level)
            extra = f"; multiplier f'(p*) = {_g(mult)}" if mult is not None and result.form.kind == "difference" else ""
            out.append(f"{subject} implies a steady level p* = {_g(level)}, approached {how}{extra}.")
    elif lr.kind == "cycle":
        if lr.period and lr.states:
            out.append(f"{subject} implies a {lr.period}-cycle between {_g(min(lr.states))} and "
                       f"{_g(max(lr.states))} rather than a steady level.")
        else:
            out.append(f"{subject} implies lasting fluctuations with no period up to 64 steps and no clear chaos.")
    elif lr.kind == "chaos":
        out.append(f"{subject} implies chaotic fluctuations (Lyapunov exponent {_g(lr.lyapunov or math.nan)} per step "
                   "> 0) rather than a steady level or a regular cycle: small differences grow, so forecasts "
                   "lose accuracy within a few steps.")
    elif lr.kind == "unbounded":
        out.append(f"{subject} implies growth without bound: the model has no stable level above the data, "
                   "so forecasts keep rising.")
    elif lr.kind == "extinction":
        out.append(f"{subject} implies that the state falls to zero (or below, where the form has no meaning) "
                   "from the starting level.")
    if regimes is not None and regimes.shares:
        out.append(_interval_sentence(regimes, lr))
    elif regimes is not None and regimes.interval and regimes.source == "interval grid":
        lo, hi = regimes.interval
        out.append(f"The 95% interval of {regimes.parameter} ({_g(lo)} to {_g(hi)}) lies outside the values the form "
                   "allows: the long run over it is not assessed.")
    return out


def _approached(equilibria: Sequence[Mapping[str, Any]], level: float) -> Mapping[str, Any] | None:
    """The stable equilibrium nearest the long-run state (None when none is stable)."""
    stable = [e for e in equilibria if e.get("stable")]
    return min(stable, key=lambda e: abs(e["value"] - level)) if stable else None


def _multiplier_at(equilibria: Sequence[Mapping[str, Any]], level: float) -> float | None:
    best = None
    for e in equilibria:
        if best is None or abs(e["value"] - level) < abs(best["value"] - level):
            best = e
    return best.get("multiplier") if best is not None else None


def _percent(share: float) -> str:
    return "under 1%" if 0 < share < 0.005 else f"{100 * share:.0f}%"


def _interval_sentence(regimes: RegimeShares, lr: LongRun) -> str:
    from growthcore.dynamics.regimes import regime_label

    own = regime_label(lr.kind, lr.period)
    span = (f" of {regimes.parameter} ({_g(regimes.interval[0])} to {_g(regimes.interval[1])})"
            if regimes.interval else f" of {regimes.parameter}")
    if regimes.stepped:
        span += (f", of which {_g(regimes.stepped[0])} to {_g(regimes.stepped[1])} lies within the form's "
                 "allowed values and was stepped,")
    others = [(label, share) for label, share in regimes.shares.items() if label != own]
    unit = "of bootstrap refits" if regimes.source == "bootstrap" else "of the interval"
    if not others:
        return f"Within the 95% interval{span} the long-run behaviour is the same throughout."
    parts = [f"{phrase(label)} ({_percent(share)} {unit})" for label, share in others]
    listed = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " or " + parts[-1]
    return f"Within the 95% interval{span} the model could also {listed}."
