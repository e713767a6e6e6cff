"""Iterating a difference form from p0, for many parameter sets at once."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from growthcore.budget import BudgetExceeded, check_budget
from growthcore.models.base import DifferenceForm

Array = np.ndarray

#: Up to this many parameter sets, plain Python floats beat numpy's per-call overhead on tiny arrays.
SCALAR_LIMIT = 8
#: Plain-float steps between two looks at the time budget (a path of a long grid is seconds of work).
CHECK_EVERY = 65_536


def iterate(form: DifferenceForm, p0: Array | float, values: Mapping[str, Array | float], steps: int) -> Array:
    """States p_0 .. p_steps; shape (steps + 1,) + broadcast shape of p0 and the values.

    Overflow gives inf or nan in the path rather than an exception.
    """
    p = np.asarray(p0, dtype=float)
    shape = _common_shape([p.shape, *(np.shape(v) for v in values.values())])
    size = math.prod(shape)
    if size <= SCALAR_LIMIT:
        scalar = _iterate_scalar(form, p, values, steps, shape, size)
        if scalar is not None:
            return scalar
    return _iterate_numpy(form, p, values, steps, shape)


def _iterate_numpy(form: DifferenceForm, p: Array, values: Mapping[str, Array | float], steps: int,
                   shape: tuple[int, ...]) -> Array:
    path = np.empty((steps + 1, *shape))
    p = np.broadcast_to(p, shape).astype(float)
    path[0] = p
    increment = form.increment
    with np.errstate(all="ignore"):
        for n in range(1, steps + 1):
            check_budget()
            p = p + increment(p, values)
            path[n] = p
            if n % SETTLED_CHECK == 0 and _same_bits(p, path[n - 1]):
                # every state is a fixed point of the map to the last bit: the rest of the path is exactly it
                path[n + 1:] = p
                break
    return path


#: Steps between checks whether every state has stopped changing (long runs of stable maps settle in
#: a few hundred steps; the check costs about one step).
SETTLED_CHECK = 64


def _same_bits(a: Array, b: Array) -> bool:
    """Bitwise equality: f(x) = x as bits makes every later iterate x (signed zeros and NaNs kept apart)."""
    return bool(np.array_equal(np.ascontiguousarray(a).view(np.int64), np.ascontiguousarray(b).view(np.int64)))


def _common_shape(shapes: list[tuple[int, ...]]) -> tuple[int, ...]:
    """The broadcast shape; the usual case (scalars and one shared shape) without numpy's general rule."""
    distinct = {sh for sh in shapes if sh != ()}
    if len(distinct) <= 1:
        return distinct.pop() if distinct else ()
    return np.broadcast_shapes(*shapes)


def path_of(form: DifferenceForm, p0: float, values: Mapping[str, float], steps: int) -> Array:
    """States p_0 .. p_steps for one parameter set given as plain floats."""
    try:
        return np.array(_float_path(form, p0, values, steps))
    except BudgetExceeded:
        raise
    except (ArithmeticError, ValueError, TypeError):
        # Python floats raise (or turn complex) where numpy gives inf or nan: let numpy do it
        return _iterate_numpy(form, np.asarray(p0, dtype=float), values, steps, ())


def _float_path(form: DifferenceForm, p: float, values: Mapping[str, float], steps: int) -> list[float]:
    check_budget()
    if steps > CHECK_EVERY:
        return _float_path_in_parts(form, p, values, steps)
    out = [p]
    append = out.append
    if form.scalar_step is not None:
        step = form.scalar_step(values)
        for _ in range(steps):
            p = step(p)
            append(p)
    else:
        increment = form.increment
        state: Any = p  # a numpy scalar after the first step, which gives inf or nan where floats raise
        with np.errstate(all="ignore"):
            for _ in range(steps):
                state = state + increment(state, values)
                append(state)
        p = state
    if isinstance(p, complex):  # a fractional power of a negative state: numpy gives nan instead
        raise TypeError("the path left the real numbers")
    return out


def _float_path_in_parts(form: DifferenceForm, p: float, values: Mapping[str, float], steps: int) -> list[float]:
    """A long path in parts of CHECK_EVERY steps, each after a look at the time budget."""
    out = [p]
    while len(out) <= steps:
        out.extend(_float_path(form, out[-1], values, min(CHECK_EVERY, steps + 1 - len(out)))[1:])
    return out


def _iterate_scalar(form: DifferenceForm, p0: Array, values: Mapping[str, Array | float], steps: int,
                    shape: tuple[int, ...], size: int) -> Array | None:
    """The same iteration one parameter set at a time in Python floats; None if floats would raise."""
    starts = _floats(p0, shape, size)
    columns = {n: _floats(v, shape, size) for n, v in values.items()}
    path = np.empty((steps + 1, size))
    try:
        for j in range(size):
            path[:, j] = _float_path(form, starts[j], {n: c[j] for n, c in columns.items()}, steps)
    except BudgetExceeded:
        raise
    except (ArithmeticError, ValueError, TypeError):
        return None
    return path.reshape((steps + 1, *shape))


def _floats(v: Array | float, shape: tuple[int, ...], size: int) -> list[float]:
    """``v`` broadcast to ``shape`` and flattened to Python floats (tolist is the fast route)."""
    a = np.asarray(v, dtype=float)
    if a.size == 1:
        return [float(a.reshape(-1)[0])] * size
    if a.size == size:
        return a.reshape(-1).tolist()
    return np.broadcast_to(a, shape).reshape(-1).tolist()
