"""One analysis from the plan to the sealed record: the one path that ``growthcore fit`` and the app's
export both take, so that one plan gives one record by either door.

The steps, each a function a test can call on its own:

1. :class:`Plan` (with its :class:`Extras`): which forms, by which method and error model, K held or
   fitted, the custom terms, and the bootstrap and forecast asked for; checked when made.
2. :func:`fit_plan`: every form by every method (:func:`growthcore.fit.forms.fit_forms` decides which
   forms hold a fixed K).
3. :func:`comparison_of`: the side-by-side comparison.
4. :func:`run_extras`: dynamics, bootstrap intervals, derived-time intervals and forecasts per fit.
5. :func:`seal_record`: the record, built and sealed last.

:func:`run` takes them in order. Nothing here prints: the lines for the user come back as values.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal, get_args

from growthcore.budget import BudgetExceeded
from growthcore.compare import ComparisonRow, compare, comparison_notes
from growthcore.data import Series
from growthcore.dynamics import Dynamics, analyse
from growthcore.errors import GrowthcoreInputError, PlanError
from growthcore.fit import ERROR_MODELS, FitResult
from growthcore.fit.forms import fit_forms
from growthcore.fit.result import ErrorModel
from growthcore.limits import DEFAULT as LIMITS
from growthcore.record import DataSource, build_record, seal
from growthcore.timeaxis import is_calendar_years, time_point_text
from growthcore.uncertainty import (
    DEFAULT_SEED,
    FORECAST_CAUTION,
    BootstrapResult,
    Forecast,
    bootstrap,
    derived_intervals,
    forecast,
)

#: ``both`` fits every form by increments and by trajectory (curves by trajectory only).
Method = Literal["increments", "trajectory", "both"]
METHOD_CHOICES: tuple[str, ...] = get_args(Method)
#: The record's settings that the later steps write, in the order they are written.
EXTRAS_SETTINGS = ("bootstrap", "seed", "forecast_steps", "forecast_span", "bound", "levels")


def _text(value: Any) -> str:
    """``repr`` of a value, safe inside a :class:`PlanError` template."""
    return repr(value).replace("{", "{{").replace("}", "}}")


def _whole(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _finite(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


# --------------------------------------------------------------------------------------------
# 1. The plan


@dataclass(frozen=True, kw_only=True)
class Extras:
    """The steps after the fits: a residual bootstrap of ``bootstrap`` resamples seeded by ``seed``,
    a forecast of ``forecast_steps`` steps or a time ``forecast_span`` (a plausibility ``bound`` on
    the state beside it), and the time to reach each of ``levels``. Dynamics are always worked out.

    Out-of-range choices raise :class:`~growthcore.errors.PlanError` naming the setting.
    """

    bootstrap: int | None = None
    seed: int = DEFAULT_SEED
    forecast_steps: int | None = None
    forecast_span: float | None = None
    bound: float | None = None
    levels: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "levels", tuple(self.levels))
        for name in ("bootstrap", "forecast_steps", "seed"):
            value = getattr(self, name)
            if value is not None and not _whole(value):
                raise PlanError(f"{{0}} must be a whole number; got {_text(value)}", name)
        if self.seed < 0:  # the generator takes seeds of 0 and more
            raise PlanError(f"{{0}} must be 0 or larger; got {self.seed}", "seed")
        if self.bound is not None and not _finite(self.bound):
            raise PlanError(f"{{0}} must be a finite number; got {_text(self.bound)}", "bound")
        for level in self.levels:
            if not _finite(level):
                raise PlanError(f"{{0}} must be a finite number; got {_text(level)}", "levels")
        boot, steps, span = self.bootstrap, self.forecast_steps, self.forecast_span
        if boot is not None and boot < 1:
            raise PlanError(f"{{0}} needs a positive number of resamples; got {boot}", "bootstrap")
        if boot is not None and boot > LIMITS.max_resamples:
            raise PlanError(f"{{0}} {boot:,} is over the limit of {LIMITS.max_resamples:,} resamples: refused",
                            "bootstrap")
        if steps is not None and steps > LIMITS.max_forecast_steps:
            raise PlanError(f"{{0}} {steps:,} is over the limit of {LIMITS.max_forecast_steps:,} steps: refused",
                            "forecast_steps")
        if span is not None and not _finite(span):
            raise PlanError(f"{{0}} must be a finite time span; got {_text(span)}", "forecast_span")
        if steps is not None and span is not None:
            raise PlanError("give {0} or {1}, not both", "forecast_steps", "forecast_span")
        if steps is not None and steps < 1:
            raise PlanError(f"{{0}} needs at least 1 step; got {steps}", "forecast_steps")
        if span is not None and not span > 0:
            raise PlanError(f"{{0}} needs a positive time span; got {span}", "forecast_span")

    @property
    def forecasting(self) -> bool:
        return self.forecast_steps is not None or self.forecast_span is not None

    def settings(self) -> dict[str, Any]:
        """The record's settings for these steps."""
        return {"bootstrap": self.bootstrap, "seed": self.seed, "forecast_steps": self.forecast_steps,
                "forecast_span": self.forecast_span, "bound": self.bound, "levels": list(self.levels)}

    @classmethod
    def from_settings(cls, settings: Mapping[str, Any], *, base: Mapping[str, Any] | None = None) -> Extras:
        """The steps a record's ``settings`` name; a setting the record lacks is taken from ``base``."""
        values = {**(base or {}), **{k: settings[k] for k in EXTRAS_SETTINGS if k in settings}}
        if isinstance(values.get("levels"), list):
            values["levels"] = tuple(values["levels"])
        return cls(**values)


@dataclass(frozen=True, kw_only=True)
class Plan:
    """What to fit and how, and what to work out after the fits.

    ``capacity`` holds K at that estimate in every form that has K (None: K is fitted); ``profile``
    asks for the profile interval of a fitted K. Bad choices raise :class:`~growthcore.errors.PlanError`
    (or another :class:`~growthcore.errors.GrowthcoreInputError` from the fit of a form).
    """

    models: tuple[str, ...]
    method: Method = "trajectory"
    error: ErrorModel = "additive"
    capacity: float | None = None
    terms: tuple[str, ...] = ()
    profile: bool = True
    extras: Extras = field(default_factory=Extras)

    def __post_init__(self) -> None:
        object.__setattr__(self, "models", tuple(self.models))
        object.__setattr__(self, "terms", tuple(self.terms))
        if self.method not in METHOD_CHOICES:
            raise PlanError(f"{{0}} must be one of {', '.join(METHOD_CHOICES)}; got {_text(self.method)}", "method")
        if self.error not in ERROR_MODELS:
            raise PlanError(f"{{0}} must be one of {', '.join(ERROR_MODELS)}; got {_text(self.error)}", "error")
        k = self.capacity
        if k is not None and (isinstance(k, bool) or not isinstance(k, (int, float))
                              or not (math.isfinite(k) and k > 0)):
            shown = f"{k:g}" if isinstance(k, (int, float)) else _text(k)
            raise PlanError(f"{{0}} must be a finite number above 0; got {shown}", "capacity")
        n_models, n_methods = len(self.models), len(self.methods)
        if n_models * n_methods > LIMITS.max_fits:
            raise PlanError(f"{n_models} form(s) × {n_methods} method(s) is {n_models * n_methods} fits, over the "
                            f"limit of {LIMITS.max_fits} fits in one record: refused", "models")

    @property
    def methods(self) -> tuple[str, ...]:
        return ("increments", "trajectory") if self.method == "both" else (self.method,)

    def settings(self) -> dict[str, Any]:
        """The record's run-wide settings of the fits."""
        return {"models": list(self.models), "methods": list(self.methods), "error": self.error,
                "capacity": self.capacity, "terms": list(self.terms), "profile": self.profile}


# --------------------------------------------------------------------------------------------
# 2. The fits


@dataclass(frozen=True, kw_only=True)
class Fits:
    """The fits of a plan, and a note per form the engine refused (only when refusals are skipped)."""

    results: tuple[FitResult, ...]
    refused: tuple[str, ...] = ()


def fit_plan(series: Series, plan: Plan, *, skip_refused: bool = False) -> Fits:
    """Every form of ``plan`` by its methods, in the plan's order.

    A form the engine refuses (an unknown id, a custom form without terms) raises, unless
    ``skip_refused``: then it is left out and named in ``refused``. Numerical trouble is a failed fit.
    """
    def fit_each(models: Sequence[str]) -> list[FitResult]:
        return fit_forms(series, models, method=plan.method, error=plan.error, capacity=plan.capacity,
                         terms=plan.terms, profile=plan.profile)

    if not skip_refused:
        return Fits(results=tuple(fit_each(plan.models)))
    results: list[FitResult] = []
    refused: list[str] = []
    for model in plan.models:
        try:
            results.extend(fit_each([model]))
        except BudgetExceeded:
            raise  # out of time is not a refusal of this form
        except GrowthcoreInputError as exc:
            refused.append(f"{model}: {str(exc).splitlines()[0]}")
    return Fits(results=tuple(results), refused=tuple(refused))


# --------------------------------------------------------------------------------------------
# 3. The comparison


@dataclass(frozen=True, kw_only=True)
class Comparison:
    """The comparison rows and their notes."""

    rows: tuple[ComparisonRow, ...]
    notes: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        return {"rows": [r.to_dict() for r in self.rows], "notes": list(self.notes)}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Comparison:
        """The comparison a :meth:`to_dict` wrote (a record's ``comparison``)."""
        return cls(rows=tuple(ComparisonRow.from_dict(r) for r in d["rows"]), notes=tuple(str(n) for n in d["notes"]))


def comparison_of(fits: Sequence[FitResult]) -> Comparison:
    return Comparison(rows=tuple(compare(fits)), notes=tuple(comparison_notes(fits)))


# --------------------------------------------------------------------------------------------
# 4. After the fits: dynamics, bootstrap, derived intervals, forecast


@dataclass(frozen=True, kw_only=True)
class FitExtras:
    """What the later steps found for one fit (a failed fit gets none of them), and the lines that
    say so for the user."""

    converged: bool
    bootstrap: BootstrapResult | None = None
    derived_intervals: Mapping[str, Mapping[str, Any]] = field(default_factory=dict)
    dynamics: Dynamics | None = None
    forecast: Forecast | None = None
    lines: tuple[str, ...] = ()

    def write(self, entry: dict[str, Any]) -> None:
        """Add these members to a record's fit entry (its ``parameters`` gain ``ci95_bootstrap``)."""
        if not self.converged:
            entry["dynamics"] = None
            return
        if self.bootstrap is not None:
            entry["bootstrap"] = self.bootstrap.summary()
            for name, ci in self.bootstrap.intervals().items():
                if name in entry["parameters"]:
                    entry["parameters"][name]["ci95_bootstrap"] = list(ci) if ci else None
        entry["derived_intervals"] = {k: dict(v) for k, v in self.derived_intervals.items()}
        entry["dynamics"] = self.dynamics.to_dict() if self.dynamics is not None else None
        if self.forecast is not None:
            entry["forecast"] = self.forecast.points()
            entry["forecast_notes"] = {k: v for k, v in self.forecast.to_dict().items() if k != "points"}


def level_line(level: float, d: Mapping[str, Any], series: Series) -> str:
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


def extras_of(series: Series, result: FitResult, extras: Extras) -> FitExtras:
    """The later steps for one fit."""
    if not result.success:
        return FitExtras(converged=False)
    who = f"{result.model} ({result.method})"
    lines: list[str] = []
    boot = None
    if extras.bootstrap:
        boot = bootstrap(result, series=series, resamples=extras.bootstrap, seed=extras.seed)
        if boot.message:
            lines.append(f"{who}: bootstrap: {boot.message}")
    intervals = derived_intervals(result, boot, levels=extras.levels)
    for level in extras.levels:
        lines.append(f"{who}: {level_line(level, intervals.get(f'time_to_level_{level:g}', {}), series)}")
    dyn = analyse(result, samples=boot.good() if boot is not None and boot.ok.sum() else None)
    if dyn is not None:
        lines += [f"{who}: {s}" for s in dyn.sentences]
    fc = None
    if extras.forecasting:
        fc = forecast(result, steps=extras.forecast_steps, span=extras.forecast_span, boot=boot, series=series,
                      bound=extras.bound, seed=extras.seed)
        lines += [f"{who}: forecast: {w}" for w in fc.warnings]
    return FitExtras(converged=True, bootstrap=boot, derived_intervals=intervals, dynamics=dyn, forecast=fc,
                     lines=tuple(lines))


def run_extras(series: Series, fits: Sequence[FitResult], extras: Extras) -> tuple[FitExtras, ...]:
    """The later steps for each fit, in order."""
    return tuple(extras_of(series, result, extras) for result in fits)


def write_extras(record: dict[str, Any], found: Sequence[FitExtras], extras: Extras) -> None:
    """Add the later steps to a record whose ``fits`` are the fits they were found for (in place):
    each fit's members, the bootstrap intervals in the comparison rows, the settings and the caution."""
    for entry, one in zip(record["fits"], found, strict=True):
        one.write(entry)
    if extras.bootstrap:
        _mark_comparison(record)
    record.setdefault("settings", {}).update(extras.settings())
    record["caution"] = FORECAST_CAUTION


def extend_record(record: dict[str, Any], series: Series, fits: Sequence[FitResult],
                  extras: Extras) -> tuple[FitExtras, ...]:
    """The later steps worked out for ``fits`` and written into their record (in place; seal it after)."""
    found = run_extras(series, fits, extras)
    write_extras(record, found, extras)
    return found


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


# --------------------------------------------------------------------------------------------
# 5. The record, and the whole analysis


def seal_record(series: Series, fits: Sequence[FitResult], *, plan: Plan, comparison: Comparison,
                extras: Sequence[FitExtras] | None, source: DataSource | None = None,
                provenance: Mapping[str, Any] | None = None, created: _dt.datetime | None = None) -> dict[str, Any]:
    """The sealed record of ``fits``: the plan's settings, then ``provenance`` (how the data were read,
    e.g. ``replicates``), the data, the fits, the comparison and, unless ``extras`` is None, what the
    later steps found."""
    record = build_record(series, fits, source=source, settings={**plan.settings(), **(provenance or {})},
                          created=created)
    record["comparison"] = comparison.to_dict()
    if extras is not None:
        write_extras(record, extras, plan.extras)
    return seal(record)


@dataclass(frozen=True, kw_only=True)
class Analysis:
    """Every step's result; ``record`` is sealed."""

    plan: Plan
    series: Series
    fits: tuple[FitResult, ...]
    refused: tuple[str, ...]
    comparison: Comparison
    extras: tuple[FitExtras, ...]
    record: dict[str, Any]

    @property
    def lines(self) -> tuple[str, ...]:
        """What the later steps say, fit by fit."""
        return tuple(line for one in self.extras for line in one.lines)

    @property
    def success(self) -> bool:
        return any(f.success for f in self.fits)


def run(series: Series, plan: Plan, *, source: DataSource | None = None, provenance: Mapping[str, Any] | None = None,
        created: _dt.datetime | None = None, skip_refused: bool = False) -> Analysis:
    """The plan carried out on ``series``: fits, comparison, later steps, and the record built last."""
    fitted = fit_plan(series, plan, skip_refused=skip_refused)
    comparison = comparison_of(fitted.results)
    found = run_extras(series, fitted.results, plan.extras)
    record = seal_record(series, fitted.results, plan=plan, comparison=comparison, extras=found, source=source,
                         provenance=provenance, created=created)
    return Analysis(plan=plan, series=series, fits=fitted.results, refused=fitted.refused, comparison=comparison,
                    extras=found, record=record)
