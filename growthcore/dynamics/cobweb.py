"""Cobweb diagram data for a fitted map p_{n+1} = f(p_n): the map, the diagonal and the staircase."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.fit.simulate import iterate
from growthcore.models.base import DifferenceForm
from growthcore.numbers import finite_list, nan_list

Array = np.ndarray


@dataclass(frozen=True)
class Cobweb:
    """``p`` and ``f`` trace the map; ``stairs_x``, ``stairs_y`` the path (p_0, 0) → (p_0, p_1) → (p_1, p_1) → ..."""

    p: Array
    f: Array
    stairs_x: Array
    stairs_y: Array
    orbit: Array
    equilibria: tuple[Mapping[str, Any], ...]

    def to_dict(self) -> dict[str, Any]:
        return {"p": finite_list(self.p), "f": finite_list(self.f), "stairs_x": finite_list(self.stairs_x),
                "stairs_y": finite_list(self.stairs_y), "orbit": finite_list(self.orbit),
                "equilibria": [dict(e) for e in self.equilibria]}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Cobweb:
        """The cobweb a :meth:`to_dict` wrote (a number written as None is NaN again)."""
        def arr(key: str) -> Array:
            return np.array(nan_list(d[key]), dtype=float)

        return cls(arr("p"), arr("f"), arr("stairs_x"), arr("stairs_y"), arr("orbit"),
                   tuple(dict(e) for e in d["equilibria"]))


def cobweb(form: DifferenceForm, values: Mapping[str, float], start: float, *, upper: float, steps: int = 60,
           points: int = 400, equilibria: tuple[Mapping[str, Any], ...] = ()) -> Cobweb:
    """The map on [0, ``upper``] and ``steps`` steps of the staircase from ``start``."""
    lo = 1e-9 * upper if form.needs_positive else 0.0
    p = np.linspace(lo, upper, points)
    with np.errstate(all="ignore"):
        f = form.next_state(p, values)
    orbit = iterate(form, start, values, steps)
    orbit = orbit[: int(np.argmax(~np.isfinite(orbit))) or orbit.size] if not np.all(np.isfinite(orbit)) else orbit
    xs = [float(orbit[0])]
    ys = [0.0]
    for a, b in zip(orbit[:-1], orbit[1:], strict=True):
        xs += [float(a), float(b)]
        ys += [float(b), float(b)]
    return Cobweb(p, f, np.array(xs), np.array(ys), orbit, tuple(equilibria))
