"""The side-by-side table of several fitted forms on the same data.

Information criteria are comparable only between fits of the same observations on the same
scale, so ΔAICc and Akaike weights are computed within groups of equal method, error model and n.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

from growthcore.fit.result import FitResult
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
    aicc: float | None
    delta_aicc: float | None
    weight: float | None
    bic: float | None
    systematic_misfit: bool | None
    warnings: tuple[str, ...]
    best: bool

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__, warnings=list(self.warnings))


def _group(f: FitResult) -> tuple[str, str, int]:
    return (f.method, f.error, f.metrics.n if f.metrics else -1)


def _num(x: float | None) -> float | None:
    return float(x) if x is not None and math.isfinite(x) else None


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
        for i, a, w in zip(members, aiccs, weights):
            deltas[i] = (_num(a - low), _num(w))
            if finite and a == low:
                best.add(i)
    rows = []
    for i, f in enumerate(fits):
        m = f.metrics
        d, w = deltas.get(i, (None, None))
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
                sse=_num(m.sse) if m else None,
                rmse=_num(m.rmse) if m else None,
                r2=_num(m.r2) if m else None,
                aicc=_num(m.aicc) if m else None,
                delta_aicc=d,
                weight=w,
                bic=_num(m.bic) if m else None,
                systematic_misfit=f.diagnostics.systematic if f.diagnostics else None,
                warnings=f.notes + ((f.diagnostics.message,) if f.diagnostics and f.diagnostics.systematic else ()),
                best=i in best and len(groups.get(_group(f), [])) > 1,
            )
        )
    order = sorted(range(len(rows)), key=lambda i: (
        rows[i].status != "converged", _group(fits[i]), rows[i].delta_aicc if rows[i].delta_aicc is not None else math.inf))
    return [rows[i] for i in order]


def comparison_notes(fits: Sequence[FitResult]) -> list[str]:
    """Plain warnings about what the table can and cannot compare."""
    groups = {_group(f) for f in fits if f.success}
    notes = []
    if len(groups) > 1:
        notes.append("these fits differ in method, error model or number of points: ΔAICc and weights are "
                     "computed only within rows that share all three")
    return notes
