"""Small number helpers shared across the engine."""

from __future__ import annotations

import math
from collections.abc import Iterable


def finite_or_none(x: float | None) -> float | None:
    """``x`` as a float when it is a finite number, else None (JSON has no NaN or infinity)."""
    if x is None:
        return None
    value = float(x)
    return value if math.isfinite(value) else None


def finite_list(values: Iterable[float | None]) -> list[float | None]:
    """:func:`finite_or_none` of each value."""
    return [finite_or_none(v) for v in values]


def nan_if_none(x: float | None) -> float:
    """The inverse of :func:`finite_or_none`: ``x`` as a float, None read back as NaN."""
    return math.nan if x is None else float(x)


def nan_list(values: Iterable[float | None]) -> list[float]:
    """:func:`nan_if_none` of each value."""
    return [nan_if_none(v) for v in values]
