"""The side-by-side table of several fitted forms on the same data.

Information criteria are comparable only between fits of the same observations on the same
scale, so ΔAICc and Akaike weights are computed within groups of equal method, error model and n.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from growthcore.fit.result import FitResult
from growthcore.numbers import finite_or_none
from growthcore.stats import akaike_weights


@dataclass(frozen=True)
class ComparisonRow:
    model: str
    method: str
    error: str
    status: str
    message: str
    parameters: dict[str, dict[str, Any]]
    n: int | None
    n_params: int | None
    sse: float | None
    rmse: float | None
    r2: float | None
    r2_uncentered: float | None
    aicc: float | None
    delta_aicc: float | None
    weight: float | None
    bic: float | None
    systematic_misfit: bool | None
    warnings: tuple[str, ...]
    best: bool
    group: str = ""
    missing: dict[str, str] | None = None

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__, warnings=list(self.warnings), missing=dict(self.missing or {}))

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> ComparisonRow:
        """The row a :meth:`to_dict` wrote (a record's comparison row)."""
        return cls(**{**d, "parameters": {str(k): dict(v) for k, v in dict(d["parameters"]).items()},
                      "warnings": tuple(str(w) for w in d["warnings"]), "missing": dict(d.get("missing") or {})})


#: ΔAICc values this close to zero (relative to the AICc) are round-off of equal criteria.
TIE_RTOL = 1e-9


def group_label(method: str, error: str, n: int) -> str:
    """Words for a comparable group: fits of the same points on the same scale."""
    return f"{method}, {error} error, n = {n}"


def missing_reasons(f: FitResult) -> dict[str, str]:
    """Why a figure of a converged fit is not shown ("–"), per metric key."""
    m = f.metrics
    if m is None:
        return {}
    out: dict[str, str] = {}
    q = m.n_params + 1
    if not math.isfinite(m.aicc):
        out["aicc"] = (f"AICc needs n > k + 2 (k = {m.n_params} constants + the error variance): "
                       f"n = {m.n} points" if m.n - q - 1 <= 0 else "AICc is not finite (a perfect fit)")
    if not math.isfinite(m.r2):
        out["r2"] = "R² of the states needs observations that vary"
    if f.method != "increments":
        out["r2_uncentered"] = "the uncentered R² belongs to the regression of Δp (increments fits)"
    return out


def _group(f: FitResult) -> tuple[str, str, int]:
    return (f.method, f.error, f.metrics.n if f.metrics else -1)


def compare(fits: Sequence[FitResult]) -> list[ComparisonRow]:
    """One row per fit, best by AICc first within each comparable group; failed fits last."""
    deltas: dict[int, tuple[float | None, float | None]] = {}
    groups: dict[tuple[str, str, int], list[int]] = {}
    for i, f in enumerate(fits):
        if f.success and f.metrics is not None:
            groups.setdefault(_group(f), []).append(i)
    best: set[int] = set()
    for members in groups.values():
        aiccs = [fits[i].metrics.aicc for i in members]  # type: ignore[union-attr]
        weights = akaike_weights(aiccs)
        finite = [a for a in aiccs if math.isfinite(a)]
        low = min(finite) if finite else math.nan
        for i, a, w in zip(members, aiccs, weights, strict=True):
            delta = a - low
            if math.isfinite(delta) and abs(delta) <= TIE_RTOL * max(1.0, abs(low)):
                delta = 0.0  # equal criteria up to round-off
            deltas[i] = (finite_or_none(delta), finite_or_none(w))
        tied = [i for i in members if deltas[i][0] == 0.0]
        if tied:
            best.add(tied[0])  # one best per comparable group; a tie is said in the warnings
    rows = []
    for i, f in enumerate(fits):
        m = f.metrics
        delta_aicc, weight = deltas.get(i, (None, None))
        rows.append(
            ComparisonRow(
                model=f.model,
                method=f.method,
                error=f.error,
                status=f.status,
                message=f.message,
                parameters={p.name: p.to_dict() for p in f.parameters},
                n=m.n if m else None,
                n_params=m.n_params if m else None,
                sse=finite_or_none(m.sse) if m else None,
                rmse=finite_or_none(m.rmse) if m else None,
                r2=finite_or_none(m.r2) if m else None,
                r2_uncentered=finite_or_none(m.r2_uncentered) if m and m.r2_uncentered is not None else None,
                aicc=finite_or_none(m.aicc) if m else None,
                delta_aicc=delta_aicc,
                weight=weight,
                bic=finite_or_none(m.bic) if m else None,
                systematic_misfit=f.diagnostics.systematic if f.diagnostics else None,
                warnings=f.notes + ((f.diagnostics.message,) if f.diagnostics and f.diagnostics.systematic else ())
                + _tie_note(i, fits, deltas, best),
                best=i in best and len(groups.get(_group(f), [])) > 1,
                group=group_label(*_group(f)) if f.success and m is not None else "",
                missing=missing_reasons(f) if f.success else {},
            )
        )
    order = sorted(range(len(rows)), key=lambda i: (
        rows[i].status != "converged", _group(fits[i]),
        rows[i].delta_aicc if rows[i].delta_aicc is not None else math.inf))
    return [rows[i] for i in order]


def _tie_note(i: int, fits: Sequence[FitResult], deltas: dict[int, tuple[float | None, float | None]],
              best: set[int]) -> tuple[str, ...]:
    if deltas.get(i, (None,))[0] != 0.0 or i in best:
        return ()
    first = next(j for j in best if _group(fits[j]) == _group(fits[i]))
    return (f"ties with {fits[first].model} on AICc (ΔAICc = 0): the data cannot tell them apart",)


def comparison_notes(fits: Sequence[FitResult]) -> list[str]:
    """Plain warnings about what the table can and cannot compare."""
    groups = {_group(f) for f in fits if f.success and f.metrics is not None}
    notes = []
    if len(groups) > 1:
        named = "; ".join(group_label(*g) for g in sorted(groups))
        notes.append("these fits differ in method, error model or number of points: ΔAICc, weights and the best "
                     f"AICc are computed only within rows that share all three ({named})")
    return notes
