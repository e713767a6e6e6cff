"""Joint fits of several series with shared constants: pooled replicate fits and their variants.

Notes
-----
Each constant of the form has a scope: ``all`` (one value for every series), ``group`` (one value
per group) or ``series`` (one per series). With every series' residuals stacked, the joint
problem is ordinary nonlinear least squares in the scoped constants, min Σ_j Σ_i r_ij², and its
standard errors, metrics and diagnostics come from :func:`growthcore.fit.problem.build_result`
over the stacked residuals. Joint constants are named ``K`` (all), ``K[ctrl]`` (group ``ctrl``)
and ``p0[A1]`` (series ``A1``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from growthcore.batch.problems import Prepared, prepare
from growthcore.batch.vectorised import fit_vectorised
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.fit.nls import solve
from growthcore.fit.problem import Problem, build_result
from growthcore.fit.result import (
    FitResult,
    FitSettings,
    JointLayout,
    ParameterEstimate,
    as_error_model,
    as_status,
    failed,
)
from growthcore.models.catalogue import get_form
from growthcore.stats import Diagnostics, Metrics

SCOPES: tuple[str, ...] = ("all", "group", "series")
Array = np.ndarray


@dataclass(frozen=True)
class JointFit:
    """A joint fit: the stacked result and how each constant is scoped."""

    model: str
    error: str
    series: tuple[str, ...]
    groups: tuple[str, ...]
    scopes: Mapping[str, str]
    result: FitResult

    @property
    def success(self) -> bool:
        return self.result.success

    @property
    def sse(self) -> float:
        return self.result.metrics.sse if self.result.metrics is not None else math.nan

    @property
    def n(self) -> int:
        return self.result.metrics.n if self.result.metrics is not None else 0

    @property
    def n_params(self) -> int:
        return self.result.metrics.n_params if self.result.metrics is not None else 0

    @property
    def dof(self) -> int:
        return self.n - self.n_params

    def value(self, name: str, scope_label: str | None = None) -> float:
        """A constant by its base name and group or series label (None for an ``all`` constant)."""
        key = name if scope_label is None else f"{name}[{scope_label}]"
        return self.result.parameter(key).value

    def to_dict(self) -> dict[str, Any]:
        r = self.result
        return {
            "model": self.model, "error": self.error, "status": r.status, "message": r.message,
            "series": list(self.series), "groups": list(self.groups), "scopes": dict(self.scopes),
            "parameters": {p.name: p.to_dict() for p in r.parameters},
            "metrics": r.metrics.to_dict() if r.metrics else None,
            "diagnostics": r.diagnostics.to_dict() if r.diagnostics else None,
            "notes": list(r.notes),
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> JointFit:
        """The joint fit a :meth:`to_dict` wrote: its constants, metrics, diagnostics and notes (no paths)."""
        metrics, diagnostics = d.get("metrics"), d.get("diagnostics")
        result = FitResult(
            model=str(d["model"]), method="trajectory", error=as_error_model(str(d["error"])),
            status=as_status(str(d["status"])), message=str(d["message"]),
            parameters=tuple(ParameterEstimate.from_dict(n, p) for n, p in dict(d["parameters"]).items()),
            metrics=None if metrics is None else Metrics.from_dict(metrics),
            diagnostics=None if diagnostics is None else Diagnostics.from_dict(diagnostics),
            notes=tuple(str(n) for n in d.get("notes", ())))
        return cls(str(d["model"]), str(d["error"]), tuple(str(s) for s in d["series"]),
                   tuple(str(g) for g in d["groups"]), {str(k): str(v) for k, v in dict(d["scopes"]).items()}, result)


def _singles(preps: Sequence[Prepared], series: Sequence[Series], model: str,
             error: str) -> list[dict[str, float] | None]:
    """Each series' own fit, as starting values for the joint fit."""
    form = preps[0].problem.form
    solved = fit_vectorised(form, preps, error=error)
    out: list[dict[str, float] | None] = []
    for s, r in zip(series, solved, strict=True):
        if r is None:
            r = fit(s, model, error=error, profile=False)
        out.append(r.values if r.success else None)
    return out


def joint_fit(
    series: Sequence[Series],
    model: str,
    *,
    error: str = "additive",
    scopes: Mapping[str, str] | None = None,
    groups: Sequence[str] | None = None,
    start: Mapping[str, float] | None = None,
) -> JointFit:
    """Fit ``model`` to all ``series`` at once with constants scoped as ``scopes`` says.

    Parameters
    ----------
    scopes : base constant name -> ``all``, ``group`` or ``series``; constants not named are
        ``group`` (``all`` when there are no groups), except the initial state ``p0``, ``series``.
    groups : one group label per series (default: one group).
    start : joint starting values by joint name; by default the means of the series' own fits.
    """
    if len(series) < 1:
        raise GrowthcoreInputError("a joint fit needs at least one series")
    form = get_form(model)
    labels = tuple(groups) if groups is not None else ("",) * len(series)
    if len(labels) != len(series):
        raise GrowthcoreInputError(f"`groups` needs one label per series; got {len(labels)} for {len(series)} series")
    names = tuple(s.name for s in series)
    preps: list[Prepared] = []
    for s in series:
        prep = prepare(s, form, model=form.id, error=error)
        if prep is None:
            single = fit(s, model, error=error, profile=False)
            why = single.message if not single.success else "its points do not allow a trajectory fit"
            return JointFit(form.id, error, names, labels, {}, failed(form.id, "trajectory", error,
                            f"series {s.name!r} cannot enter the joint fit: {why}", form=form))
        preps.append(prep)
    base = preps[0].problem.free
    scoped = _scopes(base, scopes or {}, grouped=groups is not None)
    joint_names: list[str] = []
    index = np.zeros((len(series), len(base)), dtype=int)
    where: dict[str, int] = {}
    for j, (s, g) in enumerate(zip(series, labels, strict=True)):
        for i, n in enumerate(base):
            key = n if scoped[n] == "all" else f"{n}[{g}]" if scoped[n] == "group" else f"{n}[{s.name}]"
            if key not in where:
                where[key] = len(joint_names)
                joint_names.append(key)
            index[j, i] = where[key]
    specs = tuple(replace(preps[0].problem.spec(n.split("[", 1)[0]), name=n) for n in joint_names)
    sizes = [p.problem.observed.size for p in preps]

    def predict(cols: Array) -> Array:
        return np.concatenate([p.problem.predict(cols[index[j]]) for j, p in enumerate(preps)], axis=0)

    problem = Problem(form.id, "trajectory", as_error_model(error), form, specs, tuple(joint_names), {}, predict,
                      np.concatenate([p.problem.t for p in preps]), np.concatenate([p.problem.observed for p in preps]),
                      settings=FitSettings(fixed={}, joint=JointLayout(tuple(names), tuple(sizes), dict(scoped))))
    x0 = _joint_start(preps, series, form.id, error, base, index, len(joint_names), start, joint_names)
    lower, upper = problem.lower, problem.upper
    x0 = np.array([problem.spec(n).clip(v) for n, v in zip(joint_names, x0, strict=True)])
    with np.errstate(all="ignore"):
        outcome = solve(problem.residuals, x0, lower, upper, scale=problem.scale)
    if not outcome.finite:
        return JointFit(form.id, error, names, labels, scoped, failed(
            form.id, "trajectory", error, f"the joint fit did not reach a finite optimum ({outcome.message})",
            form=form))
    notes = () if outcome.success else (f"optimiser stopped before full convergence: {outcome.message}",)
    result = build_result(problem, outcome.x,
                          message=f"joint nonlinear least squares on {len(series)} paths ({outcome.message})",
                          notes=notes, solver=outcome.solver, nfev=outcome.nfev)
    return JointFit(form.id, error, names, labels, scoped, result)


def _scopes(base: Sequence[str], given: Mapping[str, str], *, grouped: bool) -> dict[str, str]:
    unknown = sorted(set(given) - set(base))
    if unknown:
        raise GrowthcoreInputError(f"no constant {', '.join(unknown)} to scope; the form has {', '.join(base)}")
    out = {}
    for n in base:
        scope = given.get(n, "series" if n == "p0" else "group" if grouped else "all")
        if scope not in SCOPES:
            raise GrowthcoreInputError(f"the scope of {n} must be one of {', '.join(SCOPES)}; got {scope!r}")
        out[n] = scope
    return out


def _joint_start(preps: Sequence[Prepared], series: Sequence[Series], model: str, error: str, base: Sequence[str],
                 index: Array, k: int, start: Mapping[str, float] | None, joint_names: Sequence[str]) -> Array:
    """Mean of the series' own estimates over each joint constant's series."""
    singles = _singles(preps, series, model, error)
    sums = np.zeros(k)
    counts = np.zeros(k)
    fallback = np.zeros(k)
    for j, values in enumerate(singles):
        for i, n in enumerate(base):
            fallback[index[j, i]] = preps[j].first[i]
            if values is not None and n in values and math.isfinite(values[n]):
                sums[index[j, i]] += values[n]
                counts[index[j, i]] += 1
    x0 = np.where(counts > 0, sums / np.maximum(counts, 1), fallback)
    for name, v in (start or {}).items():
        if name not in joint_names:
            raise GrowthcoreInputError(f"no joint constant {name!r}; the joint fit has {', '.join(joint_names)}")
        x0[list(joint_names).index(name)] = float(v)
    return x0


def pooled_fit(series: Sequence[Series], model: str, *, error: str = "additive",
               per_series: Sequence[str] = ("p0",)) -> JointFit:
    """One fit to all replicates: every constant shared except those in ``per_series``."""
    form = get_form(model)
    free = [*form.param_names, *(["p0"] if form.kind == "difference" else [])]
    return joint_fit(series, model, error=error, scopes={n: ("series" if n in per_series else "all") for n in free})
