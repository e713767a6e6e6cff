"""The Series type: times, values, units and per-point exclusions that carry a reason."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Any

import numpy as np

from growthcore.errors import GrowthcoreInputError
from growthcore.numbers import finite_or_none

#: Relative tolerance on the step when deciding whether sampling is regular (times written in full).
STEP_TOLERANCE = 1e-6
#: Most decimals taken as the precision times are written in; more means the times are exact binary values.
MAX_WRITTEN_DECIMALS = 6
#: A grid is never accepted with a misfit beyond this share of its step, whatever the written precision.
MAX_STEP_SHARE = 0.05
#: More grid steps than this between the first and last time is no regular sampling a form can iterate.
MAX_GRID_STEPS = 10_000_000


@dataclass(frozen=True)
class StepInfo:
    """How the series is sampled.

    ``regular`` is true when every time lies on a grid ``t0 + k·h`` within ``tolerance``; ``index``
    then gives each point's position ``k`` on that grid, so a missing row leaves a gap instead of
    breaking the grid, and replicates (repeated times) share a position. ``decimals`` is the
    precision the times are written in (None when they are exact to the last binary digit).
    """

    regular: bool
    h: float | None
    index: np.ndarray | None
    message: str
    tolerance: float | None = None
    decimals: int | None = None

    def to_dict(self) -> dict[str, object]:
        return {"regular": self.regular, "h": self.h, "tolerance": self.tolerance, "decimals": self.decimals,
                "message": self.message}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> StepInfo:
        """The step a :meth:`to_dict` wrote; each point's grid position is not in the dict (``index`` is
        None: :meth:`Series.step` finds it again from the times)."""
        h, tolerance, decimals = d.get("h"), d.get("tolerance"), d.get("decimals")
        return cls(bool(d["regular"]), None if h is None else float(h), None, str(d["message"]),
                   None if tolerance is None else float(tolerance), None if decimals is None else int(decimals))


def written_decimals(t: np.ndarray) -> int | None:
    """Fewest decimals that reproduce every time, or None beyond ``MAX_WRITTEN_DECIMALS``.

    Times read from a file written to three decimals (0.333, 0.667) give 3: their grid is only as
    exact as that.
    """
    scale = np.max(np.abs(t)) if t.size else 0.0
    for d in range(MAX_WRITTEN_DECIMALS + 1):
        if np.all(np.abs(np.round(t, d) - t) <= 1e-9 * max(scale, 10.0 ** -d)):
            return d
    return None


def detect_step(t: np.ndarray) -> StepInfo:
    """The regular grid of sorted times ``t`` (ties allowed), to the precision they are written in.

    Notes
    -----
    With distinct times u_0 < ... < u_m and smallest gap h_0, each time gets k_i = round((u_i - u_0)/h_0);
    the grid t0 + k·h is then fitted by least squares and accepted when no time misses it by more
    than the tolerance: one unit of the last written decimal (0.001 for times written to three
    decimals), never more than ``MAX_STEP_SHARE`` of h, and at least ``STEP_TOLERANCE`` of the span.
    """
    u, inverse = np.unique(t, return_inverse=True)
    if u.size < 2:
        return StepInfo(False, None, None, "fewer than two distinct times: no step can be found")
    diffs = np.diff(u)
    h0 = float(np.min(diffs))
    span = float(u[-1] - u[0])
    decimals = written_decimals(u)
    floor = STEP_TOLERANCE * max(span, h0)
    tol = floor if decimals is None else max(floor, min(10.0 ** -decimals, MAX_STEP_SHARE * h0))
    with np.errstate(over="ignore", invalid="ignore"):
        k = np.rint((u - u[0]) / h0)
    steps = f"steps from {h0:g} to {float(np.max(diffs)):g}"
    if not np.isfinite(k[-1]) or k[-1] > MAX_GRID_STEPS:
        return StepInfo(False, None, None, _irregular(steps), None, decimals)
    h_ends = span / k[-1] if k[-1] > 0 else h0
    exact = float(np.max(np.abs(u - (u[0] + k * h_ends))))
    if exact <= floor:
        h, misfit = float(h_ends), exact
    else:  # rounded times: the grid that fits them best
        slope, intercept = np.polyfit(k, u, 1)
        h, misfit = float(slope), float(np.max(np.abs(u - (intercept + k * slope))))
    if misfit <= tol and np.all(np.diff(k) >= 1):
        gaps = int(np.sum(np.diff(k) > 1))
        note = f"regular step h = {h:.6g}" + (f" with {gaps} gap(s)" if gaps else "")
        if misfit > floor:
            note += f" (times written to {decimals} decimal(s) lie on the grid within {tol:g})"
        grid_index = k.astype(int)[inverse]
        grid_index.setflags(write=False)  # shared by every caller of the cached step
        return StepInfo(True, h, grid_index, note, tol, decimals)
    return StepInfo(False, None, None, _irregular(f"{steps}, off a regular grid by up to {misfit:.3g} where "
                                                  f"{tol:.3g} is allowed"), tol, decimals)


def _irregular(detail: str) -> str:
    return (f"irregular sampling ({detail}): difference-equation forms need a regular grid; "
            "the curve forms serve irregular times")


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
        if np.any(diffs < 0):
            i = int(np.flatnonzero(diffs < 0)[0])
            raise GrowthcoreInputError(
                f"`t` must be non-decreasing (a repeated time is a replicate); got t[{i + 1}]={t[i + 1]:g} "
                f"after t[{i}]={t[i]:g}"
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

    def exclude(self, i: int, reason: str) -> Series:
        """A copy with point ``i`` left out for ``reason``."""
        excluded = dict(self.excluded)
        excluded[int(i)] = reason
        return replace(self, excluded=excluded)

    def restore(self, i: int) -> Series:
        """A copy with point ``i`` used again."""
        excluded = {k: v for k, v in self.excluded.items() if k != int(i)}
        return replace(self, excluded=excluded)

    def step(self) -> StepInfo:
        """Detect a regular step, allowing gaps that are whole multiples of it."""
        return self._step

    @cached_property
    def _step(self) -> StepInfo:
        return detect_step(self.t)

    @cached_property
    def replicate_times(self) -> int:
        """How many times carry more than one point (replicates)."""
        return int(np.count_nonzero(np.unique(self.t, return_counts=True)[1] > 1))

    @property
    def has_replicates(self) -> bool:
        return self.replicate_times > 0

    def means_per_time(self) -> Series:
        """One point per distinct time: the mean of the used replicates there.

        A time whose every replicate is left out stays as one excluded point; rows are those of the
        first replicate at each time.
        """
        if not self.has_replicates:
            return self
        u, first, inverse = np.unique(self.t, return_index=True, return_inverse=True)
        used = self.used
        counts = np.bincount(inverse, weights=used.astype(float), minlength=u.size)
        sums = np.bincount(inverse, weights=np.where(used, self.p, 0.0), minlength=u.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            means = np.where(counts > 0, sums / np.where(counts > 0, counts, 1.0), np.nan)
        excluded = {int(j): "every replicate at this time is left out" for j in np.flatnonzero(counts == 0)}
        rows = tuple(self.rows[int(i)] for i in first) if self.rows is not None else None
        return replace(self, t=u, p=means, excluded=excluded, rows=rows)

    @cached_property
    def consecutive(self) -> tuple[np.ndarray, np.ndarray, np.ndarray] | str:
        """(positions i, p_i, p_{i+1}) for used points one grid step apart, or why there are none.

        A series with replicates has one value a step only as the mean per time: its pairs are those
        of :meth:`means_per_time`, and the positions refer to that series.
        """
        if self.has_replicates:
            return self.means_per_time().consecutive
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
                "p": finite_or_none(self.p[i]),
                "used": bool(used[i]),
                "reason": self.reason(i),
            }
            for i in range(len(self))
        ]
