"""User-written rate terms: Δp = Σ b_i·g_i(p; K), each g_i parsed by growthcore.expr (never eval)."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from growthcore.errors import GrowthcoreInputError
from growthcore.expr import RateTerm, parse_term
from growthcore.models.base import INF, Array, DifferenceForm, ParamSpec, Values
from growthcore.models.difference import K_CAP

MAX_TERMS = 6


def custom_form(terms: Sequence[str]) -> DifferenceForm:
    """A difference form whose change per step is a linear combination of the given terms.

    Raises ``GrowthcoreInputError`` (an ``ExpressionError`` for text outside the grammar) when a
    term cannot be used.
    """
    if not terms:
        raise GrowthcoreInputError("the `custom` form needs at least one rate term, e.g. 'p*(K-p)'")
    if len(terms) > MAX_TERMS:
        raise GrowthcoreInputError(f"the `custom` form takes at most {MAX_TERMS} terms; got {len(terms)}")
    parsed: tuple[RateTerm, ...] = tuple(parse_term(text) for text in terms)
    derivatives = tuple(term.derivative() for term in parsed)
    names = tuple(f"b{i + 1}" for i in range(len(parsed)))
    uses_k = any(term.uses_capacity for term in parsed)
    capacity = (lambda v: v["K"]) if uses_k else (lambda v: None)

    def basis(p: Array, v: Values) -> list[Array]:
        k = capacity(v)
        cols = [term.evaluate(p, k) for term in parsed]
        # A constant term gives a scalar; an array of K values (Jacobian columns) widens the shape.
        return [np.broadcast_to(c, np.broadcast_shapes(np.shape(p), np.shape(c))) for c in cols]

    def increment(p: Array, v: Values) -> Array:
        return sum(v[n] * col for n, col in zip(names, basis(p, v), strict=True))  # type: ignore[return-value]

    def increment_dp(p: Array, v: Values) -> Array:
        k = capacity(v)
        return sum(v[n] * d.evaluate(p, k) for n, d in zip(names, derivatives, strict=True))  # type: ignore[return-value]

    def partials(p: Array, v: Values) -> dict[str, Array]:
        return dict(zip(names, basis(p, v), strict=True))  # K enters the terms nonlinearly: left to finite differences

    params = tuple(ParamSpec(n, -INF, INF, f"coefficient of {t.canonical}", "")
                   for n, t in zip(names, parsed, strict=True))
    if uses_k:
        params = (*params, K_CAP)
    equation = "Δp = " + " + ".join(f"{n}·({t.canonical})" for n, t in zip(names, parsed, strict=True))
    return DifferenceForm(
        id="custom",
        title="Custom rate terms",
        equation=equation,
        params=params,
        increment=increment,
        increment_dp=increment_dp,
        increment_partials=partials,
        linear=names,
        basis=basis,
        notes=tuple(f"term {n}: {t.text}" for n, t in zip(names, parsed, strict=True)),
        terms=tuple(terms),
    )
