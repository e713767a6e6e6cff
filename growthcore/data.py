"""The Series type: times, values, units and per-point exclusions that carry a reason."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Mapping

import numpy as np

from growthcore.errors import GrowthcoreInputError

#: Relative tolerance on the step when deciding whether sampling is regular.
STEP_TOLERANCE = 1e-6


@dataclass(frozen=True)
class StepInfo:
    """How the series is sampled.

    ``regular`` is true when every gap between consecutive times is a whole multiple of ``h``
    (within ``STEP_TOLERANCE``); ``index`` then gives each point's position on that grid, so a
    missing row leaves a gap instead of breaking the grid.
    """

    regular: bool
    h: float | None
    index: np.ndarray | None
    message: str


@dataclass(frozen=True)
class Series:
    """One quantity measured over time.

    ``excluded`` maps a point's position to the reason it is left out of fits; the point stays in
    the series so that it is shown, listed and can be restored. ``rows`` gives each point's row
    number as the user sees it in the source spreadsheet, for messages.
    """

    t: np.ndarray
    p: np.ndarray
    name: str = "series"
    time_unit: str = ""
    value_unit: str = ""
    time_column: str = "t"
    value_column: str = "p"
    excluded: Mapping[int, str] = field(default_factory=dict)
    rows: tuple[int, ...] | None = None

    def __post_init__(self) -> None:
        t = np.asarray(self.t, dtype=float).reshape(-1)
        p = np.asarray(self.p, dtype=float).reshape(-1)
        if t.shape != p.shape:
            raise GrowthcoreInputError(
                f"`t` and `p` must have the same length; got {t.size} times and {p.size} values"
            )
        if not np.all(np.isfinite(t)):
            bad = int(np.flatnonzero(~np.isfinite(t))[0])
            raise GrowthcoreInputError(f"`t` must be finite; got t[{bad}]={t[bad]}")
        diffs = np.diff(t)
        if np.any(diffs <= 0):
            i = int(np.flatnonzero(diffs <= 0)[0])
            raise GrowthcoreInputError(
                f"`t` must be strictly increasing; got t[{i + 1}]={t[i + 1]:g} after t[{i}]={t[i]:g}"
            )
        for i in self.excluded:
            if not 0 <= int(i) < t.size:
                raise GrowthcoreInputError(f"exclusion index {i} is outside 0..{t.size - 1}")
        if self.rows is not None and len(self.rows) != t.size:
            raise GrowthcoreInputError("`rows` must give one row number per point")
        t.setflags(write=False)
        p.setflags(write=False)
        object.__setattr__(self, "t", t)
        object.__setattr__(self, "p", p)
        object.__setattr__(self, "excluded", {int(k): str(v) for k, v in self.excluded.items()})

    def __len__(self) -> int:
        return int(self.t.size)

    @cached_property
    def used(self) -> np.ndarray:
        """Boolean mask (read-only) of points that enter fits: not excluded and finite."""
        mask = np.isfinite(self.p)
        for i in self.excluded:
            mask[i] = False
        mask.setflags(write=False)
        return mask

    def reason(self, i: int) -> str:
        """Why point ``i`` is left out, or an empty string when it is used."""
        if i in self.excluded:
            return self.excluded[i]
        if not np.isfinite(self.p[i]):
            return "value is not a finite number"
        return ""

    def row_of(self, i: int) -> int:
        """Row number of point ``i`` in the source, or its 1-based position when there is none."""
        return self.rows[i] if self.rows is not None else i + 1

    def exclude(self, i: int, reason: str) -> "Series":
        """A copy with point ``i`` left out for ``reason``."""
        excluded = dict(self.excluded)
        excluded[int(i)] = reason
        return replace(self, excluded=excluded)

    def restore(self, i: int) -> "Series":
        """A copy with point ``i`` used again."""
        excluded = {k: v for k, v in self.excluded.items() if k != int(i)}
        return replace(self, excluded=excluded)

    def step(self) -> StepInfo:
        """Detect a regular step, allowing gaps that are whole multiples of it."""
        return self._step

    @cached_property
    def _step(self) -> StepInfo:
        if self.t.size < 2:
            return StepInfo(False, None, None, "fewer than two times: no step can be found")
        diffs = np.diff(self.t)
        h = float(np.min(diffs))
        span = float(self.t[-1] - self.t[0])
        ratio = (self.t - self.t[0]) / h
        index = np.rint(ratio)
        if np.all(np.abs(ratio - index) * h <= STEP_TOLERANCE * max(span, h)):
            gaps = int(np.sum(np.rint(diffs / h) > 1))
            note = f"regular step h = {h:g}" + (f" with {gaps} gap(s)" if gaps else "")
            grid_index = index.astype(int)
            grid_index.setflags(write=False)  # shared by every caller of the cached step
            return StepInfo(True, h, grid_index, note)
        return StepInfo(
            False,
            None,
            None,
            f"irregular sampling (steps from {h:g} to {float(np.max(diffs)):g}): "
            "difference-equation forms need a regular grid; the curve forms serve irregular times",
        )

    @cached_property
    def consecutive(self) -> tuple[np.ndarray, np.ndarray, np.ndarray] | str:
        """(positions i, p_i, p_{i+1}) for used points one grid step apart, or why there are none."""
        step = self.step()
        if not step.regular or step.index is None:
            return step.message
        used = self.used
        i = np.flatnonzero((np.diff(step.index) == 1) & used[:-1] & used[1:])
        pairs = (i, self.p[i], self.p[i + 1])
        for a in pairs:
            a.setflags(write=False)
        return pairs

    def to_points(self) -> list[dict[str, object]]:
        """The points as plain records: t, p, whether used, and the reason when not."""
        used = self.used
        return [
            {
                "t": float(self.t[i]),
                "p": float(self.p[i]) if np.isfinite(self.p[i]) else None,
                "used": bool(used[i]),
                "reason": self.reason(i),
            }
            for i in range(len(self))
        ]
