"""Iterating a difference form from p0, for many parameter sets at once."""

from __future__ import annotations

from typing import Mapping

import numpy as np

from growthcore.models.base import DifferenceForm

Array = np.ndarray


def iterate(form: DifferenceForm, p0: Array | float, values: Mapping[str, Array | float], steps: int) -> Array:
    """States p_0 .. p_steps; shape (steps + 1,) + broadcast shape of p0 and the values.

    Overflow gives inf or nan in the path rather than an exception.
    """
    p = np.asarray(p0, dtype=float)
    shape = np.broadcast_shapes(p.shape, *(np.shape(v) for v in values.values()))
    path = np.empty((steps + 1, *shape))
    p = np.broadcast_to(p, shape).astype(float)
    path[0] = p
    increment = form.increment
    with np.errstate(all="ignore"):
        for n in range(1, steps + 1):
            p = p + increment(p, values)
            path[n] = p
    return path
