"""Options of ``growthcore fit`` for bootstrap intervals, dynamics and forecasts.

Every converged fit gains ``dynamics`` (equilibria, long run, sentences); with ``--bootstrap`` each
free constant gains ``ci95_bootstrap`` and the fit a ``bootstrap`` summary and ``derived_intervals``;
with ``--forecast`` or ``--forecast-span`` the fit gains ``forecast`` points and ``forecast_notes``.
"""

from __future__ import annotations

import argparse
import math
import sys
from collections.abc import Sequence
from typing import Any

from growthcore.data import Series
from growthcore.dynamics import analyse
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import FitResult
from growthcore.limits import DEFAULT as LIMITS
from growthcore.timeaxis import is_calendar_years, time_point_text
from growthcore.uncertainty import (
    DEFAULT_RESAMPLES,
    DEFAULT_SEED,
    FORECAST_CAUTION,
    BootstrapResult,
    bootstrap,
    derived_intervals,
    forecast,
)


def add_options(p: argparse.ArgumentParser) -> None:
    """Add this module's options to the ``fit`` parser."""
    g = p.add_argument_group("uncertainty, dynamics and forecast")
    g.add_argument("--bootstrap", nargs="?", type=int, const=DEFAULT_RESAMPLES, default=None, metavar="N",
                   help=f"bootstrap intervals from N residual resamples (default N: {DEFAULT_RESAMPLES})")
    g.add_argument("--seed", type=int, default=DEFAULT_SEED, metavar="S",
                   help="seed of the resampling (default %(default)s)")
    g.add_argument("--forecast", type=int, metavar="STEPS", help="forecast STEPS steps past the last observation")
    g.add_argument("--forecast-span", type=float, metavar="T", help="forecast a time span T past the last observation")
    g.add_argument("--bound", type=float, metavar="B",
                   help="plausibility bound on the state: report when the forecast passes it")
    g.add_argument("--level", type=float, action="append", default=[], metavar="P",
                   help="report the time to reach state P, with its interval (repeatable)")


def check(args: argparse.Namespace) -> None:
    """Refuse options outside their range or over a limit, before any work (also for a record's settings)."""
    for option, value in (("--bootstrap", args.bootstrap), ("--forecast", args.forecast), ("--seed", args.seed)):
        if value is not None and (isinstance(value, bool) or not isinstance(value, int)):
            raise GrowthcoreInputError(f"{option} must be a whole number; got {value!r}")
    if args.bootstrap is not None and args.bootstrap < 1:
        raise GrowthcoreInputError(f"--bootstrap needs a positive number of resamples; got {args.bootstrap}")
    if args.bootstrap is not None and args.bootstrap > LIMITS.max_resamples:
        raise GrowthcoreInputError(f"--bootstrap {args.bootstrap:,} is over the limit of {LIMITS.max_resamples:,} "
                                   "resamples: refused")
    if args.forecast is not None and args.forecast > LIMITS.max_forecast_steps:
        raise GrowthcoreInputError(f"--forecast {args.forecast:,} is over the limit of {LIMITS.max_forecast_steps:,} "
                                   "steps: refused")
    if args.forecast_span is not None and not (isinstance(args.forecast_span, (int, float))
                                               and math.isfinite(args.forecast_span)):
        raise GrowthcoreInputError(f"--forecast-span must be a finite time span; got {args.forecast_span!r}")
    if args.forecast is not None and args.forecast_span is not None:
        raise GrowthcoreInputError("give --forecast STEPS or --forecast-span T, not both")
    if args.forecast is not None and args.forecast < 1:
        raise GrowthcoreInputError(f"--forecast needs at least 1 step; got {args.forecast}")
    if args.forecast_span is not None and not args.forecast_span > 0:
        raise GrowthcoreInputError(f"--forecast-span needs a positive time span; got {args.forecast_span}")


def _one(args: argparse.Namespace, series: Series, result: FitResult, out: dict[str, Any]) -> list[str]:
    """Fill the fit dict ``out``; return lines for the user."""
    lines: list[str] = []
    if not result.success:
        out["dynamics"] = None
        return lines
    boot: BootstrapResult | None = None
    if args.bootstrap:
        boot = bootstrap(result, series=series, resamples=args.bootstrap, seed=args.seed)
        out["bootstrap"] = boot.summary()
        for name, ci in boot.intervals().items():
            if name in out["parameters"]:
                out["parameters"][name]["ci95_bootstrap"] = list(ci) if ci else None
        if boot.message:
            lines.append(f"{result.model} ({result.method}): bootstrap: {boot.message}")
    out["derived_intervals"] = derived_intervals(result, boot, levels=args.level)
    for level in args.level:
        d = out["derived_intervals"].get(f"time_to_level_{level:g}", {})
        lines.append(f"{result.model} ({result.method}): {level_line(level, d, series)}")
    dyn = analyse(result, samples=boot.good() if boot is not None and boot.ok.sum() else None)
    out["dynamics"] = dyn.to_dict() if dyn is not None else None
    if dyn is not None:
        lines += [f"{result.model} ({result.method}): {s}" for s in dyn.sentences]
    if args.forecast is not None or args.forecast_span is not None:
        fc = forecast(result, steps=args.forecast, span=args.forecast_span, boot=boot, series=series,
                      bound=args.bound, seed=args.seed)
        out["forecast"] = fc.points()
        out["forecast_notes"] = {k: v for k, v in fc.to_dict().items() if k != "points"}
        lines += [f"{result.model} ({result.method}): forecast: {w}" for w in fc.warnings]
    return lines


def level_line(level: float, d: dict[str, Any], series: Series) -> str:
    """When the fitted path reaches ``level``, as a moment on the series' time axis, with its interval."""
    unit = series.time_unit
    years = is_calendar_years(list(series.t), unit)

    def when(t: float | None) -> str:
        return time_point_text(t, unit, calendar_years=years)

    if d.get("value") is None:
        return f"the fitted path does not reach {level:g} within the horizon"
    ci = d.get("ci95")
    band = (f", 95% interval {when(ci[0])} to {when(ci[1])} ({d.get('method')})" if ci else
            ", no interval (the fit gives no covariance of its constants, and no bootstrap was run)")
    return f"reaches {level:g} at {when(d['value'])}{band}"


def apply(args: argparse.Namespace, series: Series, fits: Sequence[FitResult], record: dict[str, Any],
          *, quiet: bool = False) -> None:
    """Add dynamics, bootstrap intervals and forecasts to the fit dicts (record["fits"][i] is fits[i]).

    The plain sentences go to standard error for the terminal unless ``quiet`` (the app shows them).
    """
    check(args)
    lines: list[str] = []
    for result, out in zip(fits, record["fits"], strict=True):
        lines += _one(args, series, result, out)
    if args.bootstrap:
        _mark_comparison(record)
    forecasting = args.forecast is not None or args.forecast_span is not None
    record.setdefault("settings", {}).update({
        "bootstrap": args.bootstrap, "seed": args.seed, "forecast_steps": args.forecast,
        "forecast_span": args.forecast_span, "bound": args.bound, "levels": list(args.level)})
    record["caution"] = FORECAST_CAUTION
    if quiet:
        return
    for line in lines:
        print(line, file=sys.stderr)
    if forecasting:
        print(f"caution: {FORECAST_CAUTION}", file=sys.stderr)


def _mark_comparison(record: dict[str, Any]) -> None:
    """Copy the bootstrap intervals into the comparison rows (matched by model, method and error)."""
    by_key = {(f["model"], f["method"], f["error"]): f for f in record.get("fits", [])}
    for row in record.get("comparison", {}).get("rows", []):
        fit_dict = by_key.get((row.get("model"), row.get("method"), row.get("error")))
        if fit_dict is None:
            continue
        for name, p in row.get("parameters", {}).items():
            ci = fit_dict["parameters"].get(name, {}).get("ci95_bootstrap")
            if ci is not None:
                p["ci95_bootstrap"] = ci
