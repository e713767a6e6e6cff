"""The two kinds of model form: difference equations on a step grid and closed-form growth curves.

Parameter values are passed as a mapping from name to a float or an array; arrays broadcast, so one
call evaluates many parameter sets at once (the fitting code uses this for Jacobians and bootstraps).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

Array = np.ndarray
Values = Mapping[str, float | Array]
StateFn = Callable[[Array, Values], Array]

INF = math.inf


@dataclass(frozen=True)
class ParamSpec:
    """A named model constant with its bounds and what it means."""

    name: str
    lower: float
    upper: float
    description: str
    unit: str = ""

    def clip(self, value: float) -> float:
        """``value`` moved just inside the bounds, for starting values."""
        lo = self.lower if math.isfinite(self.lower) else -1e300
        hi = self.upper if math.isfinite(self.upper) else 1e300
        span = hi - lo
        pad = 1e-6 * (span if math.isfinite(span) and span < 1e300 else max(abs(value), 1.0))
        return float(min(max(value, lo + pad), hi - pad))


@dataclass(frozen=True)
class DifferenceForm:
    """A difference equation p_{n+1} = p_n + Δ(p_n), with every rate constant per step h.

    ``increment`` gives Δ(p) and ``increment_dp`` its derivative dΔ/dp, so the map's
    derivative is f'(p) = 1 + dΔ/dp. ``increment_partials`` gives ∂Δ/∂θ for the constants it
    knows in closed form (trajectory fits take the rest by finite differences). ``scalar_step``,
    given plain-float values, returns f as a function of one float: iterating one parameter set
    in Python floats is several times faster than numpy on a single state. When Δ is linear in some
    constants, ``linear`` names them and ``basis`` returns one column per name for given values of
    the others: Δ = Σ coef_j · basis_j(p).
    The increments method then regresses the change on those columns through the origin.
    """

    id: str
    title: str
    equation: str
    params: tuple[ParamSpec, ...]
    increment: StateFn
    increment_dp: StateFn
    linear: tuple[str, ...] = ()
    basis: Callable[[Array, Values], list[Array]] | None = None
    increment_partials: Callable[[Array, Values], dict[str, Array]] | None = None
    scalar_step: Callable[[Mapping[str, float]], Callable[[float], float]] | None = None
    needs_positive: bool = False
    notes: tuple[str, ...] = field(default_factory=tuple)
    kind: Literal["difference"] = "difference"
    terms: tuple[str, ...] = ()  # the rate terms as written, for the custom form

    def __reduce__(self) -> tuple[Any, ...]:
        # forms hold functions that do not pickle; a form crosses to a worker process by its id
        return (_form_by_id, (self.id, self.terms))

    @property
    def param_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.params)

    @property
    def shape(self) -> tuple[str, ...]:
        """Constants that enter nonlinearly (K, theta, A, ...)."""
        return tuple(n for n in self.param_names if n not in self.linear)

    def next_state(self, p: Array, values: Values) -> Array:
        """f(p) = p + Δ(p)."""
        return p + self.increment(p, values)

    def next_state_dp(self, p: Array, values: Values) -> Array:
        """f'(p), the multiplier that decides stability of an equilibrium."""
        return 1.0 + self.increment_dp(p, values)

    def spec(self, name: str) -> ParamSpec:
        return _spec(self.params, name)


@dataclass(frozen=True)
class CurveForm:
    """A closed-form growth curve p(t) in continuous time with p0 = p(0).

    ``rate`` is the right-hand side of the equivalent ODE dp/dt = F(p); derived quantities
    (maximum rate, inflection, equilibria and their stability) come from it. ``value_partials``
    gives ∂p(t)/∂θ for every constant, for the exact Jacobian of trajectory fits.
    """

    id: str
    title: str
    equation: str
    params: tuple[ParamSpec, ...]
    value: Callable[[Array, Values], Array]
    rate: StateFn
    rate_dp: StateFn
    value_partials: Callable[[Array, Values], dict[str, Array]] | None = None
    needs_positive: bool = False
    notes: tuple[str, ...] = field(default_factory=tuple)
    kind: Literal["curve"] = "curve"

    def __reduce__(self) -> tuple[Any, ...]:
        return (_form_by_id, (self.id, ()))

    @property
    def param_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.params)

    def spec(self, name: str) -> ParamSpec:
        return _spec(self.params, name)


ModelForm = DifferenceForm | CurveForm


def _spec(params: tuple[ParamSpec, ...], name: str) -> ParamSpec:
    for s in params:
        if s.name == name:
            return s
    raise KeyError(name)


def _form_by_id(model_id: str, terms: tuple[str, ...]) -> ModelForm:
    """The catalogue's form for ``model_id`` (how a pickled form is rebuilt)."""
    from growthcore.models.catalogue import get_form  # the catalogue is built from this module

    return get_form(model_id, terms=terms)
