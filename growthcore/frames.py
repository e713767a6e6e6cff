"""Comparison and batch results as pandas DataFrames, for notebooks and further analysis."""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from growthcore.batch.runner import BatchResult
from growthcore.batch.table import rows
from growthcore.compare import compare
from growthcore.fit.result import FitResult


def comparison_frame(fits: Sequence[FitResult]) -> pd.DataFrame:
    """One row per fit, ranked as :func:`growthcore.compare.compare` ranks them; each constant's value
    and standard error in columns of their own (``K``, ``K_se``)."""
    out = []
    for row in compare(fits):
        d = row.to_dict()
        flat = {k: v for k, v in d.items() if k != "parameters"}
        for name, p in (d.get("parameters") or {}).items():
            flat[name] = p.get("value")
            flat[f"{name}_se"] = p.get("se")
        out.append(flat)
    return pd.DataFrame(out)


def batch_frame(batch: BatchResult) -> pd.DataFrame:
    """The batch table (one row per series and form, conditions as columns) as a DataFrame."""
    header, body = rows(batch)
    return pd.DataFrame([{h: r.get(h) for h in header} for r in body], columns=header)
