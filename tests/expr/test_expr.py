"""Tests of the rate-term expression parser: values, errors, derivatives and printouts."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st

from growthcore.errors import ExpressionError, GrowthcoreInputError
from growthcore.expr import (
    MAX_DEPTH,
    MAX_LENGTH,
    BinOp,
    Call,
    Neg,
    Num,
    Var,
    parse_term,
    to_text,
)

RNG = np.random.default_rng(20240611)
P = RNG.uniform(0.2, 9.0, size=50)
K = 12.5

# --------------------------------------------------------------------------------------------
# Values. Source for every row: the same formula written directly with numpy ("numpy reference").

VALUE_CASES = [
    ("p*(K-p)", lambda p, k: p * (k - p)),
    ("p*ln(K/p)", lambda p, k: p * np.log(k / p)),
    ("p*(1-(p/K)^2)", lambda p, k: p * (1 - (p / k) ** 2)),
    ("exp(-p/K)", lambda p, k: np.exp(-p / k)),
    ("min(p,K)", lambda p, k: np.minimum(p, k)),
    ("max(p-1,0)", lambda p, k: np.maximum(p - 1, 0)),
    ("-p^2", lambda p, k: -(p**2)),
    ("p**2 - 3*p", lambda p, k: p**2 - 3 * p),
    ("sqrt(p)*log10(K)", lambda p, k: np.sqrt(p) * np.log10(k)),
    ("abs(p - 5)/K", lambda p, k: np.abs(p - 5) / k),
    ("2.5E+1*p/(1e1 + p)", lambda p, k: 25 * p / (10 + p)),
    ("p − K·2 × p", lambda p, k: p - k * 2 * p),
    ("p*(1 - p/K)^-0.5", lambda p, k: p * (1 - p / k) ** -0.5),
    ("  p ^ 0.5 ^ 2  ", lambda p, k: p**0.25),
]


@pytest.mark.parametrize("text, reference", VALUE_CASES, ids=[c[0] for c in VALUE_CASES])
def test_values_match_numpy_reference(text, reference):
    # source: numpy reference (the formula typed directly with numpy operators)
    term = parse_term(text)
    with np.errstate(all="ignore"):
        expected = reference(P, K)
    np.testing.assert_allclose(term.evaluate(P, K), expected, rtol=1e-13, equal_nan=True)


@pytest.mark.parametrize(
    "text, expected",
    [
        # source: arithmetic by hand; ^ is right-associative, so 2^3^2 = 2^9
        ("2^3^2", 512.0),
        ("2**3**2", 512.0),
        ("(2^3)^2", 64.0),
        # source: arithmetic by hand; * before +, unary minus below ^
        ("2+3*4", 14.0),
        ("2*3^2", 18.0),
        ("-2^2", -4.0),
        ("(-2)^2", 4.0),
        ("2^-1", 0.5),
        ("-2^-2", -0.25),
        # source: arithmetic by hand; - and / are left-associative
        ("8-4-2", 2.0),
        ("8/4/2", 1.0),
        ("2*-3", -6.0),
        ("--3", 3.0),
        ("+3 - +1", 2.0),
        ("1.5e2 + .5 + 2.", 152.5),
    ],
)
def test_precedence_and_associativity(text, expected):
    assert float(parse_term(text).evaluate(1.0)) == expected


def test_uses_capacity_and_missing_capacity_message():
    assert parse_term("p*(K - p)").uses_capacity
    assert not parse_term("p*(2 - p)").uses_capacity
    with pytest.raises(GrowthcoreInputError, match="uses the capacity K"):
        parse_term("p*(K - p)").evaluate(P)
    # A constant still takes the shape of p (broadcast, numpy reference np.full).
    np.testing.assert_array_equal(parse_term("3").evaluate(P), np.full(P.shape, 3.0))


def test_capacity_array_broadcasts():
    # source: numpy reference (broadcasting a column of capacities against a row of states)
    ks = np.array([[5.0], [10.0]])
    out = parse_term("p*(K - p)").evaluate(P, ks)
    np.testing.assert_allclose(out, P * (ks - P), rtol=1e-14)
    with pytest.raises(GrowthcoreInputError, match="does not broadcast"):
        parse_term("K").evaluate(np.ones(3), np.ones(4))
    with pytest.raises(GrowthcoreInputError, match="`p` must be numbers"):
        parse_term("p").evaluate(["a", "b"])


def test_evaluation_gives_inf_and_nan_without_warnings():
    # source: IEEE 754 conventions as implemented by numpy (log 0 = -inf, log of negative = nan)
    p = np.array([-1.0, 0.0, 1000.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ln = parse_term("ln(p)").evaluate(p)
        inv = parse_term("1/p").evaluate(p)
        big = parse_term("exp(p)").evaluate(p)
        root = parse_term("sqrt(p)").evaluate(p)
        d = parse_term("p*ln(K/p)").derivative_values(p, 1.0)
    assert np.isnan(ln[0]) and ln[1] == -np.inf
    assert inv[1] == np.inf
    assert big[2] == np.inf
    assert np.isnan(root[0])
    assert d.shape == p.shape


# --------------------------------------------------------------------------------------------
# Errors: the reason and the 0-based position of the offending character.

ERROR_CASES = [
    ("p +", 3, "expression ended"),
    ("p ** ** 2", 5, "found '**'"),
    ("foo(p)", 0, "unknown function 'foo'"),
    ("p.real", 1, "attribute access"),
    ("__import__('os')", 0, "unknown function '__import__'"),
    ("(p", 0, "never closed"),
    ("p)", 1, "unmatched ')'"),
    ("min(p)", 5, "min takes 2 arguments"),
    ("max(p, K, 1)", 8, "one too many"),
    ("1e", 1, "incomplete exponent"),
    ("2.5e+ * p", 3, "incomplete exponent"),
    ("", 0, "empty"),
    ("   ", 0, "empty"),
    ("p K", 2, "missing operator before 'K'"),
    ("ln()", 3, "got none"),
    ("K^^2", 2, "found '^'"),
    ("p(2)", 1, "missing operator before '('"),
    ("ln p", 3, "must be followed by '('"),
    ("k*p", 0, "case-sensitive"),
    ("p²", 1, "write powers with ^"),
    ("p @ K", 2, "unexpected character '@'"),
    ("(p + )", 5, "found ')'"),
    ("p, K", 1, "separates function arguments"),
    ("1e999*p", 0, "too large"),
    ("min(p K)", 6, "expected ')'"),
    ("()", 1, "empty parentheses"),
    ("sign(p)", 0, "unknown function 'sign'"),
    ("p*[K]", 2, "round parentheses"),
    ("lambda: p", 0, "unknown name 'lambda'"),
]


@pytest.mark.parametrize("text, position, fragment", ERROR_CASES, ids=[c[0] or "empty" for c in ERROR_CASES])
def test_malformed_input_names_reason_and_position(text, position, fragment):
    with pytest.raises(ExpressionError) as info:
        parse_term(text)
    err = info.value
    assert fragment in err.reason
    assert err.position == position
    assert err.text == text
    assert f"character {position + 1}" in str(err)


def test_length_limit_is_exact():
    ok = "p*(K - p)" + " " * (MAX_LENGTH - 9)
    assert len(ok) == MAX_LENGTH
    parse_term(ok)
    with pytest.raises(ExpressionError) as info:
        parse_term(ok + " ")
    assert info.value.position == MAX_LENGTH
    assert "501 characters" in info.value.reason


def test_nesting_limit_is_exact():
    ok = "(" * MAX_DEPTH + "p" + ")" * MAX_DEPTH
    assert parse_term(ok).canonical == "p"
    with pytest.raises(ExpressionError) as info:
        parse_term("(" * (MAX_DEPTH + 1) + "p" + ")" * (MAX_DEPTH + 1))
    assert info.value.position == MAX_DEPTH
    assert "nested deeper than 60" in info.value.reason
    parse_term("-" * MAX_DEPTH + "p")
    with pytest.raises(ExpressionError) as info:
        parse_term("-" * (MAX_DEPTH + 1) + "p")
    assert info.value.position == MAX_DEPTH
    with pytest.raises(ExpressionError) as info:
        parse_term("exp(" * (MAX_DEPTH + 1) + "p" + ")" * (MAX_DEPTH + 1))
    assert info.value.position == 4 * MAX_DEPTH + 3  # the '(' of the 61st exp
    # A long flat chain is a deep tree: the 61st operator is refused.
    parse_term("p*" * MAX_DEPTH + "p")
    with pytest.raises(ExpressionError) as info:
        parse_term("p*" * (MAX_DEPTH + 1) + "p")
    assert info.value.position == 2 * MAX_DEPTH + 1


def test_non_text_input_is_an_input_error():
    with pytest.raises(GrowthcoreInputError, match="must be text"):
        parse_term(None)  # type: ignore[arg-type]


# --------------------------------------------------------------------------------------------
# Derivatives against a central finite difference (numerical reference), and known identities.

DERIVATIVE_CASES = [
    ("p*(K-p)", (0.1, 20.0)),
    ("p*ln(K/p)", (0.1, 20.0)),
    ("p*(1-(p/K)^2)", (0.1, 20.0)),
    ("exp(-p/K)", (0.1, 20.0)),
    ("log10(p)*p", (0.1, 20.0)),
    ("sqrt(p + 1)", (0.1, 20.0)),
    ("abs(p - 5)", (0.1, 20.0)),
    ("min(p, K)", (0.1, 20.0)),
    ("max(p - 1, 0)", (0.1, 20.0)),
    ("min(p^2, 3*p)", (0.1, 20.0)),
    ("-p^2", (-5.0, 5.0)),
    ("p^2.5", (0.1, 20.0)),  # constant exponent
    ("2^(p/4)", (0.1, 20.0)),  # constant base
    ("p^(p/10)", (0.1, 10.0)),  # general u^v
    ("(p/K)^(K/p)", (0.5, 10.0)),
    ("p/(1 + p^2)", (-5.0, 5.0)),
    ("ln(1 + exp(-p))", (-5.0, 5.0)),
    ("3", (0.1, 20.0)),
    ("K", (0.1, 20.0)),
]
KINKS = {"abs(p - 5)": [5.0], "min(p, K)": [K], "max(p - 1, 0)": [1.0], "min(p^2, 3*p)": [3.0]}


@pytest.mark.parametrize("text, domain", DERIVATIVE_CASES, ids=[c[0] for c in DERIVATIVE_CASES])
def test_derivative_matches_central_difference(text, domain):
    term = parse_term(text)
    p = RNG.uniform(*domain, size=40)
    for kink in KINKS.get(text, []):
        p = p[np.abs(p - kink) > 1e-3]
    h = 1e-6 * np.maximum(1.0, np.abs(p))
    # source: central finite difference (f(p+h) - f(p-h)) / 2h, error O(h^2)
    numeric = (term.evaluate(p + h, K) - term.evaluate(p - h, K)) / (2 * h)
    exact = term.derivative_values(p, K)
    np.testing.assert_allclose(exact, numeric, rtol=1e-6, atol=1e-7)


def test_derivative_identities_and_readability():
    # source: calculus identities, d/dp p(K-p) = K - 2p and d/dp p ln(K/p) = ln(K/p) - 1
    np.testing.assert_allclose(parse_term("p*(K-p)").derivative_values(P, K), K - 2 * P)
    np.testing.assert_allclose(
        parse_term("p*ln(K/p)").derivative_values(P, K), np.log(K / P) - 1, rtol=1e-12
    )
    # trivial 0/1 products and sums are folded away
    assert parse_term("p^2").derivative().canonical == "2*p"
    assert parse_term("3*p + K").derivative().canonical == "3"
    assert parse_term("K").derivative().canonical == "0"
    assert parse_term("abs(p)").derivative().canonical == "sign(p)"
    assert parse_term("min(p, K)").derivative().canonical == "where_le(p, K, 1, 0)"
    assert parse_term("max(p, K)").derivative().canonical == "where_le(K, p, 1, 0)"
    assert parse_term("ln(p)").derivative().canonical == "1/p"
    assert parse_term("log10(p)").derivative().canonical == "1/(p*ln(10))"
    assert not parse_term("K*p").derivative().derivative().uses_capacity


def test_second_derivative_matches_central_difference():
    term = parse_term("p*ln(K/p) + min(p, 4)^2")
    p = RNG.uniform(0.5, 15.0, size=30)
    p = p[np.abs(p - 4) > 1e-3]
    h = 1e-5 * np.maximum(1.0, p)
    first = term.derivative()
    # source: central finite difference of the first derivative
    numeric = (first.evaluate(p + h, K) - first.evaluate(p - h, K)) / (2 * h)
    np.testing.assert_allclose(first.derivative_values(p, K), numeric, rtol=1e-5, atol=1e-6)


# --------------------------------------------------------------------------------------------
# Printouts

@pytest.mark.parametrize(
    "text, canonical",
    [
        ("p*(K-p)", "p*(K - p)"),
        ("p ** 2", "p^2"),
        ("(p^2)^3", "(p^2)^3"),
        ("p^(2^3)", "p^2^3"),
        ("-(p^2)", "-p^2"),
        ("(-p)^2", "(-p)^2"),
        ("p - (K - p)", "p - (K - p)"),
        ("(p - K) - p", "p - K - p"),
        ("p / (K * p)", "p/(K*p)"),
        ("+p", "p"),
        ("3 × p − 1·K", "3*p - 1*K"),
        ("2.50", "2.5"),
        ("1e-3*p", "0.001*p"),
        ("1E20", "1e+20"),
        ("min( p ,K )", "min(p, K)"),
    ],
)
def test_canonical_printout(text, canonical):
    term = parse_term(text)
    assert term.canonical == canonical
    assert parse_term(term.canonical).tree == term.tree


def test_derivative_printouts_reparse_with_helper_functions():
    for text, _ in DERIVATIVE_CASES:
        d = parse_term(text).derivative()
        assert parse_term(d.canonical, allow_internal=True).tree == d.tree


def test_trees_are_immutable():
    term = parse_term("p*(K - p)")
    with pytest.raises(AttributeError):
        term.tree.op = "+"  # type: ignore[union-attr]
    with pytest.raises(AttributeError):
        term.canonical = "p"  # type: ignore[misc]


# --------------------------------------------------------------------------------------------
# Properties

NUMBERS = st.one_of(
    st.integers(0, 10**6).map(float),
    st.floats(min_value=0.0, max_value=1e300, allow_nan=False, allow_infinity=False),
    st.sampled_from([0.5, 1e-3, 2.5e-7, 1e16, 123456789012345678.0]),
)
LEAVES = st.one_of(NUMBERS.map(Num), st.sampled_from([Var("p"), Var("K")]))


def _extend(children):
    return st.one_of(
        children.map(Neg),
        st.tuples(st.sampled_from("+-*/^"), children, children).map(lambda t: BinOp(*t)),
        st.tuples(st.sampled_from(["ln", "log10", "exp", "sqrt", "abs"]), children).map(
            lambda t: Call(t[0], (t[1],))
        ),
        st.tuples(st.sampled_from(["min", "max"]), children, children).map(
            lambda t: Call(t[0], (t[1], t[2]))
        ),
    )


TREES = st.recursive(LEAVES, _extend, max_leaves=14)


TOKENS = [
    "p", "K", "0", "1", "2.5", "1e-3", ".5", "e", "E", "+", "-", "*", "/", "^", "**", "(", ")",
    ",", " ", "ln", "log10", "exp", "sqrt", "abs", "min", "max", "−", "·", "×", ".", "_", "'",
]
SOUP = st.one_of(
    st.lists(st.sampled_from(TOKENS), max_size=25).map("".join),
    st.text(max_size=40),
    st.text(alphabet="pK0123456789.eE+-*/^(),  −·×", max_size=40),
    # near misses: a valid printout with one token spliced in or one character cut out
    st.tuples(TREES.map(to_text), st.integers(0, 400), st.sampled_from(TOKENS)).map(
        lambda t: t[0][: t[1] % (len(t[0]) + 1)] + t[2] + t[0][t[1] % (len(t[0]) + 1) :]
    ),
    st.tuples(TREES.map(to_text), st.integers(0, 400)).map(
        lambda t: t[0][: t[1] % len(t[0])] + t[0][t[1] % len(t[0]) + 1 :]
    ),
)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(SOUP)
def test_arbitrary_text_parses_or_raises_expression_error(text):
    try:
        term = parse_term(text)
    except ExpressionError as err:
        event("refused")
        assert 0 <= err.position <= len(text)
        assert err.reason
        return
    event("parsed")
    # Whatever parses must print, reparse, evaluate and differentiate without any warning.
    assert parse_term(term.canonical).tree == term.tree
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        values = term.evaluate(np.array([-1.0, 0.0, 0.5, 3.0]), 2.0)
        slopes = term.derivative_values(np.array([-1.0, 0.0, 0.5, 3.0]), 2.0)
    assert values.shape == slopes.shape == (4,)


@settings(max_examples=300, deadline=None)
@given(TREES)
def test_random_trees_print_and_reparse_identically(tree):
    text = to_text(tree)
    assume(len(text) <= MAX_LENGTH)
    term = parse_term(text)
    assert term.tree == tree
    assert term.canonical == text
    # The derivative is itself a tree that prints and reparses (with the helper functions).
    d = term.derivative()
    assume(len(d.canonical) <= 20_000)
    try:
        assert parse_term(d.canonical, allow_internal=True).tree == d.tree
    except ExpressionError as err:
        assert "nested deeper" in err.reason  # a derivative can outgrow the nesting limit
