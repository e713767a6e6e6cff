"""The fitted result: parameters with uncertainty, metrics, diagnostics, residuals and predictions."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING, Any, Literal, get_args

import numpy as np

from growthcore.errors import GrowthcoreInputError
from growthcore.fit.simulate import iterate
from growthcore.models.base import ModelForm
from growthcore.numbers import finite_or_none
from growthcore.stats import Diagnostics, Metrics

if TYPE_CHECKING:
    from growthcore.summary import FitSummary

Array = np.ndarray
Method = Literal["increments", "trajectory"]
ErrorModel = Literal["additive", "log"]
Status = Literal["converged", "failed"]
#: Which solver found the optimum: the exact-Jacobian Levenberg–Marquardt (growthcore.fit.lm),
#: MINPACK (growthcore.fit.nls), the vectorised Levenberg–Marquardt of many series at once
#: (growthcore.fit.batched) or a closed-form linear regression.
SolverName = Literal["exact-lm", "minpack", "batched-lm", "linear"]
METHODS: tuple[Method, ...] = get_args(Method)
ERROR_MODELS: tuple[ErrorModel, ...] = get_args(ErrorModel)
STATUSES: tuple[Status, ...] = get_args(Status)


def as_method(value: str) -> Method:
    """``value`` as a :data:`Method`; an input error naming the choices otherwise."""
    for choice in METHODS:
        if value == choice:
            return choice
    raise GrowthcoreInputError(f"`method` must be one of {', '.join(METHODS)}; got {value!r}")


def as_error_model(value: str) -> ErrorModel:
    """``value`` as an :data:`ErrorModel`; an input error naming the choices otherwise."""
    for choice in ERROR_MODELS:
        if value == choice:
            return choice
    raise GrowthcoreInputError(f"`error` must be one of {', '.join(ERROR_MODELS)}; got {value!r}")


def as_solver(value: str) -> SolverName:
    """``value`` as a :data:`SolverName`; an input error naming the choices otherwise."""
    for choice in get_args(SolverName):
        if value == choice:
            return choice
    raise GrowthcoreInputError(f"`solver` must be one of {', '.join(get_args(SolverName))}; got {value!r}")


def _nan(x: Any) -> float:
    return math.nan if x is None else float(x)


def _optional(x: Any) -> float | None:
    return None if x is None else float(x)


def as_status(value: str) -> Status:
    """``value`` as a :data:`Status`; an input error naming the choices otherwise."""
    for choice in STATUSES:
        if value == choice:
            return choice
    raise GrowthcoreInputError(f"`status` must be one of {', '.join(STATUSES)}; got {value!r}")


@dataclass(frozen=True)
class ParameterEstimate:
    """One constant: its value, standard error and t-based 95% interval (None when not estimable)."""

    name: str
    value: float
    se: float | None = None
    ci95: tuple[float, float] | None = None
    fixed: bool = False
    at_bound: bool = False
    description: str = ""
    unit: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {
            "value": finite_or_none(self.value),
            "se": finite_or_none(self.se),
            "ci95": [finite_or_none(self.ci95[0]), finite_or_none(self.ci95[1])] if self.ci95 else None,
            "fixed": self.fixed,
            "at_bound": self.at_bound,
            "description": self.description,
            "unit": self.unit,
        }

    @classmethod
    def from_dict(cls, name: str, d: Mapping[str, Any]) -> ParameterEstimate:
        """The estimate a :meth:`to_dict` wrote under ``name`` (None becomes NaN)."""
        ci = d.get("ci95")
        return cls(name, _nan(d["value"]), None if d["se"] is None else float(d["se"]),
                   None if ci is None else (_nan(ci[0]), _nan(ci[1])), bool(d["fixed"]),
                   bool(d.get("at_bound", False)), str(d.get("description", "")), str(d.get("unit", "")))


@dataclass(frozen=True)
class CapacityProfile:
    """SSE with K fixed at each grid value and the other constants refitted.

    The interval is {K : SSE(K) ≤ threshold}, with the F-calibrated cut
    threshold = SSE_min·(1 + F(0.95; 1, n − q)/(n − q)); ``interval_lr`` is the same set under the
    chi-square likelihood-ratio cut ``threshold_lr`` = SSE_min·exp(χ²(0.95; 1)/n). The ends are
    found by root-finding on the profile, not read off the grid.
    """

    k: Array
    sse: Array
    threshold: float
    interval: tuple[float | None, float | None]
    message: str = ""
    threshold_lr: float = math.nan
    interval_lr: tuple[float | None, float | None] = (None, None)
    cut: str = "F-calibrated"

    def to_dict(self) -> dict[str, Any]:
        return {
            "K": [float(v) for v in self.k],
            "sse": [finite_or_none(float(v)) for v in self.sse],
            "threshold": finite_or_none(self.threshold),
            "interval": [finite_or_none(self.interval[0]), finite_or_none(self.interval[1])],
            "cut": self.cut,
            "threshold_lr": finite_or_none(self.threshold_lr),
            "interval_lr": [finite_or_none(self.interval_lr[0]), finite_or_none(self.interval_lr[1])],
            "message": self.message,
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> CapacityProfile:
        interval = d.get("interval") or (None, None)
        interval_lr = d.get("interval_lr") or (None, None)
        return cls(np.array([float(v) for v in d["K"]]), np.array([_nan(v) for v in d["sse"]]),
                   _nan(d["threshold"]), (_optional(interval[0]), _optional(interval[1])),
                   str(d.get("message", "")), _nan(d.get("threshold_lr")),
                   (_optional(interval_lr[0]), _optional(interval_lr[1])), str(d.get("cut", "F-calibrated")))


@dataclass(frozen=True)
class Grid:
    """The step grid of a difference form: t_n = t0 + n·h."""

    t0: float
    h: float

    def to_dict(self) -> dict[str, float]:
        return {"t0": self.t0, "h": self.h}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Grid:
        return cls(float(d["t0"]), float(d["h"]))


@dataclass(frozen=True)
class JointLayout:
    """How a joint fit stacks its series: their names, the points of each, and each constant's scope."""

    series: tuple[str, ...] = ()
    points: tuple[int, ...] = ()
    scopes: Mapping[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"series": list(self.series), "points": list(self.points), "scopes": dict(self.scopes)}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> JointLayout:
        return cls(tuple(str(s) for s in d.get("series") or ()), tuple(int(n) for n in d.get("points") or ()),
                   {str(k): str(v) for k, v in dict(d.get("scopes") or {}).items()})


@dataclass(frozen=True)
class FitSettings:
    """How a fit was set up, as its record entry's ``settings`` member holds it.

    Each field is None where the fit does not set it, and :meth:`to_dict` leaves it out, so the
    member keeps the keys (and their order) a fit has always written: ``fixed`` (the constants
    held), ``pairs`` (consecutive pairs an increments fit regressed), ``t_first`` (the first used
    time), ``p_first`` (the first used observation of an increments fit), ``time_origin`` (the
    time at which a curve's p0 applies), ``start`` (starting values) and ``joint`` (a joint fit's
    layout). A failed fit sets none. Keys this class does not know are not read.
    """

    fixed: Mapping[str, float] | None = None
    pairs: int | None = None
    t_first: float | None = None
    p_first: float | None = None
    time_origin: float | None = None
    start: Mapping[str, float] | None = None
    joint: JointLayout | None = None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        if self.fixed is not None:
            out["fixed"] = dict(self.fixed)
        if self.pairs is not None:
            out["pairs"] = self.pairs
        for name in ("t_first", "p_first", "time_origin"):
            value = getattr(self, name)
            if value is not None:
                out[name] = value
        if self.start is not None:
            out["start"] = dict(self.start)
        if self.joint is not None:
            out["joint"] = self.joint.to_dict()
        return out

    @classmethod
    def from_dict(cls, d: Mapping[str, Any] | None) -> FitSettings:
        """The settings a :meth:`to_dict` wrote (an empty or missing member gives none)."""
        d = d or {}
        fixed, start, joint, pairs = d.get("fixed"), d.get("start"), d.get("joint"), d.get("pairs")
        return cls(
            fixed=None if fixed is None else {str(k): float(v) for k, v in dict(fixed).items()},
            pairs=None if pairs is None else int(pairs),
            t_first=_optional(d.get("t_first")), p_first=_optional(d.get("p_first")),
            time_origin=_optional(d.get("time_origin")),
            start=None if start is None else {str(k): float(v) for k, v in dict(start).items()},
            joint=None if joint is None else JointLayout.from_dict(joint),
        )


@dataclass(frozen=True)
class FitResult:
    """What one fit of one form by one method found. ``status`` is ``converged`` or ``failed``.

    ``settings`` (a :class:`FitSettings`) says how the fit was set up: the constants held, the first
    used time and state, a curve's time origin, a joint fit's layout.
    """

    model: str
    method: Method
    error: ErrorModel
    status: Status
    message: str
    form: ModelForm | None = None
    parameters: tuple[ParameterEstimate, ...] = ()
    metrics: Metrics | None = None
    diagnostics: Diagnostics | None = None
    t: Array = field(default_factory=lambda: np.zeros(0))
    observed: Array = field(default_factory=lambda: np.zeros(0))
    predicted: Array = field(default_factory=lambda: np.zeros(0))
    residuals: Array = field(default_factory=lambda: np.zeros(0))
    correlation: Array | None = None
    profile: CapacityProfile | None = None
    notes: tuple[str, ...] = ()
    grid: Grid | None = None
    terms: tuple[str, ...] = ()
    settings: FitSettings = field(default_factory=FitSettings)
    solver: SolverName | None = None  # None when no solver ran (a fit that failed before)
    nfev: int | None = None  # residual evaluations the solver made; None where it does not count them

    @cached_property
    def derived(self) -> dict[str, Any]:
        """Growth factor, doubling time, inflection, maximum rate, lag and equilibria (computed once)."""
        from growthcore.derived import derived_quantities  # derived builds on this module

        return derived_quantities(self)

    @property
    def success(self) -> bool:
        return self.status == "converged"

    @property
    def values(self) -> dict[str, float]:
        return {p.name: p.value for p in self.parameters}

    @property
    def time_origin(self) -> float:
        """The time at which a curve's p0 applies (0 for difference forms, which start at their grid)."""
        origin = self.settings.time_origin
        return 0.0 if origin is None else origin

    @property
    def start_level(self) -> float:
        """The state the fitted path starts from: p0 when fitted, else the first used observation."""
        values = self.values
        if "p0" in values:
            return float(values["p0"])
        return math.nan if self.settings.p_first is None else self.settings.p_first

    def first_time(self, default: float) -> float:
        """The first time the fit used, or ``default`` where its settings do not say."""
        t_first = self.settings.t_first
        return default if t_first is None else t_first

    def summary(self) -> FitSummary:
        """Constants, goodness of fit and diagnostics as tables with numbered notes (text or HTML)."""
        from growthcore.summary import summarise  # the summary builds on this module

        return summarise(self)

    def parameter(self, name: str) -> ParameterEstimate:
        for p in self.parameters:
            if p.name == name:
                return p
        raise KeyError(f"{self.model} has no parameter {name!r}; it has {', '.join(self.values)}")

    def predict(self, t: Array | float) -> Array:
        """The fitted path at times ``t``.

        Curves are evaluated directly; a difference form is iterated from p0 on its grid, so ``t``
        must fall on grid points t0 + n·h with n ≥ 0.
        """
        if not self.success or self.form is None:
            raise GrowthcoreInputError(f"the {self.model} fit did not converge: nothing to predict")
        t = np.asarray(t, dtype=float)
        values = self.values
        if self.form.kind == "curve":
            with np.errstate(all="ignore"):
                return np.asarray(self.form.value(t - self.time_origin, values), dtype=float)
        assert self.grid is not None
        steps = (t - self.grid.t0) / self.grid.h
        n = np.rint(steps)
        if np.any(np.abs(steps - n) > 1e-6) or np.any(n < 0):
            raise GrowthcoreInputError(
                f"a difference form is defined on its grid only (t0 = {self.grid.t0:g}, h = {self.grid.h:g})"
            )
        n_int = n.astype(int)
        path = iterate(self.form, self.start_level, values, int(n_int.max()) if n_int.size else 0)
        return path[n_int]

    def path(self, t_end: float, *, points: int = 200) -> tuple[Array, Array]:
        """A smooth (curve) or stepwise (difference form) path from the first time to ``t_end``."""
        if self.form is not None and self.form.kind == "difference" and self.grid is not None:
            steps = max(int(math.floor((t_end - self.grid.t0) / self.grid.h + 1e-9)), 0)
            t = self.grid.t0 + self.grid.h * np.arange(steps + 1)
        else:
            t0 = self.first_time(self.time_origin)
            t = np.linspace(min(self.time_origin, t0), t_end, points)
        return t, self.predict(t)

    def iterated_path(self, start: str, t_end: float) -> tuple[Array, Array]:
        """A difference form's map iterated on its grid from the first or the last fitted observation.

        ``start`` is ``"first"`` (from the fit's starting level at the first grid time, as
        :meth:`path` draws it) or ``"last"`` (from the last observation the fit used, forward to
        ``t_end``). An increments fit predicts one step ahead from each observed state; this is what
        the same map does when fed its own output instead.
        """
        if start not in ("first", "last"):
            raise GrowthcoreInputError(f"start must be 'first' or 'last'; got {start!r}")
        if not self.success or self.form is None:
            raise GrowthcoreInputError(f"the {self.model} fit did not converge: nothing to iterate")
        if self.form.kind != "difference" or self.grid is None:
            raise GrowthcoreInputError(f"{self.model} is a closed-form curve: it has no map to iterate")
        if start == "first":
            return self.path(t_end)
        t_last, p_last = float(self.t[-1]), float(self.observed[-1])
        steps = max(int(math.floor((t_end - t_last) / self.grid.h + 1e-9)), 0)
        return t_last + self.grid.h * np.arange(steps + 1), iterate(self.form, p_last, self.values, steps)

    def to_dict(self) -> dict[str, Any]:
        """The fit as plain JSON-ready data, for the record."""
        out: dict[str, Any] = {
            "model": self.model,
            "method": self.method,
            "error": self.error,
            "status": self.status,
            "message": self.message,
            "solver": self.solver,
            "nfev": self.nfev,
            "equation": self.form.equation if self.form is not None else None,
            "terms": list(self.terms),
            "settings": self.settings.to_dict(),
            "parameters": {p.name: p.to_dict() for p in self.parameters},
            "metrics": self.metrics.to_dict() if self.metrics else None,
            "diagnostics": self.diagnostics.to_dict() if self.diagnostics else None,
            "derived": dict(self.derived),
            "notes": list(self.notes),
            "residuals": [
                {"t": float(t), "observed": float(o), "predicted": finite_or_none(p), "residual": finite_or_none(r)}
                for t, o, p, r in zip(self.t, self.observed, self.predicted, self.residuals, strict=True)
            ],
        }
        if self.correlation is not None:
            free = [p.name for p in self.parameters if not p.fixed]
            out["correlation"] = {
                "parameters": free,
                "matrix": [[finite_or_none(float(v)) for v in row] for row in self.correlation],
            }
        if self.profile is not None:
            out["capacity_profile"] = self.profile.to_dict()
        if self.grid is not None:
            out["grid"] = self.grid.to_dict()
        return out

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> FitResult:
        """The fit result a :meth:`to_dict` (a record's fit entry) describes, without fitting again.

        Numbers are taken as stored (``None`` becomes NaN); the form comes from the catalogue by its
        id and terms (None when the catalogue does not know it), so paths, predictions and derived
        quantities can be drawn from the record alone.
        """
        from growthcore.models.catalogue import get_form  # the catalogue builds on the fit modules' forms

        terms = tuple(d.get("terms") or ())
        try:
            form: ModelForm | None = get_form(str(d["model"]), terms=terms)
        except GrowthcoreInputError:
            form = None
        metrics, diagnostics = d.get("metrics"), d.get("diagnostics")
        residuals = d.get("residuals") or []
        corr, prof, grid = d.get("correlation"), d.get("capacity_profile"), d.get("grid")
        solver, nfev = d.get("solver"), d.get("nfev")
        return cls(
            model=str(d["model"]), method=as_method(str(d["method"])), error=as_error_model(str(d["error"])),
            status=as_status(str(d["status"])), message=str(d["message"]), form=form,
            parameters=tuple(ParameterEstimate.from_dict(n, p) for n, p in (d.get("parameters") or {}).items()),
            metrics=None if metrics is None else Metrics.from_dict(metrics),
            diagnostics=None if diagnostics is None else Diagnostics.from_dict(diagnostics),
            t=np.array([float(r["t"]) for r in residuals]),
            observed=np.array([float(r["observed"]) for r in residuals]),
            predicted=np.array([_nan(r["predicted"]) for r in residuals]),
            residuals=np.array([_nan(r["residual"]) for r in residuals]),
            correlation=None if corr is None else np.array([[_nan(v) for v in row] for row in corr["matrix"]]),
            profile=None if prof is None else CapacityProfile.from_dict(prof),
            notes=tuple(str(n) for n in d.get("notes", ())),
            grid=None if grid is None else Grid.from_dict(grid),
            terms=terms if d["model"] == "custom" else (),
            settings=FitSettings.from_dict(d.get("settings")),
            solver=None if solver is None else as_solver(str(solver)),
            nfev=None if nfev is None else int(nfev),
        )


def failed(model: str, method: str, error: str, message: str, **extra: Any) -> FitResult:
    """A failed fit: the message says why, in words a user can act on."""
    return FitResult(model=model, method=as_method(method), error=as_error_model(error), status="failed",
                     message=message, **extra)
