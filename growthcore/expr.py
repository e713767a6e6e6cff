"""A small, safe parser for user-written rate terms such as ``p*(K - p)`` or ``p*ln(K/p)``.

The text is read by a hand-written tokenizer and a recursive-descent parser into an immutable
tree of frozen dataclasses; nothing the user types is ever handed to the Python interpreter.

Grammar (lowest to highest binding)::

    expr    := term (("+" | "-") term)*
    term    := unary (("*" | "/") unary)*
    unary   := ("-" | "+") unary | power
    power   := primary ("^" unary)?          # right-associative; -p^2 is -(p^2)
    primary := NUMBER | "p" | "K" | FUNC "(" expr ("," expr)* ")" | "(" expr ")"

``**`` is read as ``^``; the typographic minus "−" as ``-``; "·" and "×" as ``*``.
Functions: ln, log10, exp, sqrt, abs (one argument); min, max (two arguments).
Text over ``MAX_LENGTH`` characters or nested deeper than ``MAX_DEPTH`` is refused, which keeps
every recursive walk over the tree far from Python's stack limit.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike

from growthcore.errors import ExpressionError, GrowthcoreInputError

#: Longest accepted user text, in characters.
MAX_LENGTH = 500
#: Deepest accepted nesting: both the depth of parentheses, calls, signs and exponents, and the
#: height of the tree (each operator adds one), so ``p*p*...*p`` with 61 products is refused.
MAX_DEPTH = 60

VARIABLES = ("p", "K")
#: User-visible functions and their argument counts.
FUNCTIONS: dict[str, int] = {
    "ln": 1,
    "log10": 1,
    "exp": 1,
    "sqrt": 1,
    "abs": 1,
    "min": 2,
    "max": 2,
}
#: Helper functions that only derivatives produce: ``sign(u)`` and ``where_le(a, b, x, y)``,
#: which is ``x`` where ``a <= b`` and ``y`` elsewhere (the branches of min and max).
INTERNAL_FUNCTIONS: dict[str, int] = {"sign": 1, "where_le": 4}

_HINTS = {
    "e": "write exp(1) for Euler's number",
    "log": "write ln(...) for the natural logarithm or log10(...) for base 10",
    "pi": "write the number 3.141592653589793",
    "k": "names are case-sensitive: the capacity is K",
    "P": "names are case-sensitive: the state is p",
}


# --------------------------------------------------------------------------------------------
# The tree


@dataclass(frozen=True)
class Num:
    """A non-negative finite constant; a negative constant is ``Neg(Num(...))`` as when read."""

    value: float

    def __post_init__(self) -> None:
        v = float(self.value)
        if not math.isfinite(v) or v < 0:
            raise ValueError(f"Num holds a finite non-negative value; got {self.value!r}")
        object.__setattr__(self, "value", v + 0.0)  # folds -0.0 into 0.0


@dataclass(frozen=True)
class Var:
    """The state ``p`` or the capacity ``K``."""

    name: str


@dataclass(frozen=True)
class Neg:
    """Unary minus."""

    operand: Node


@dataclass(frozen=True)
class BinOp:
    """A binary operation; ``op`` is one of ``+ - * / ^``."""

    op: str
    left: Node
    right: Node


@dataclass(frozen=True)
class Call:
    """A function applied to its arguments."""

    name: str
    args: tuple[Node, ...]


Node = Num | Var | Neg | BinOp | Call


# --------------------------------------------------------------------------------------------
# Tokenizer


@dataclass(frozen=True)
class _Token:
    kind: str  # "num", "name", "op", "end"
    text: str  # as written by the user
    pos: int
    value: str = ""  # normalised operator, name or number text


_SINGLE_OPS = {
    "+": "+",
    "-": "-",
    "\u2212": "-",  # typographic minus
    "*": "*",
    "\u00b7": "*",  # middle dot
    "\u00d7": "*",  # multiplication sign
    "/": "/",
    "^": "^",
    "(": "(",
    ")": ")",
    ",": ",",
}
_DIGITS = "0123456789"
_NAME_START = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ_"
_NAME_CHARS = _NAME_START + _DIGITS
_SUPERSCRIPTS = "\u00b2\u00b3\u00b9\u2070\u2074\u2075\u2076\u2077\u2078\u2079"


def _tokens(text: str, seen: list[_Token]) -> Iterator[_Token]:
    """Yield tokens one at a time, so that errors come in reading order."""
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch.isspace():
            i += 1
        elif ch in _DIGITS or (ch == "." and i + 1 < n and text[i + 1] in _DIGITS):
            j = _number_end(text, i)
            yield _Token("num", text[i:j], i, text[i:j])
            i = j
        elif ch in _NAME_START:
            j = i
            while j < n and text[j] in _NAME_CHARS:
                j += 1
            yield _Token("name", text[i:j], i, text[i:j])
            i = j
        elif text.startswith("**", i):
            yield _Token("op", "**", i, "^")
            i += 2
        elif ch in _SINGLE_OPS:
            yield _Token("op", ch, i, _SINGLE_OPS[ch])
            i += 1
        else:
            raise ExpressionError(_stray_reason(ch, seen), text, i)
    while True:
        yield _Token("end", "", n)


def _number_end(text: str, i: int) -> int:
    n = len(text)
    j = i
    while j < n and text[j] in _DIGITS:
        j += 1
    if j < n and text[j] == ".":
        j += 1
        while j < n and text[j] in _DIGITS:
            j += 1
    if j < n and text[j] in "eE":
        k = j + 1
        if k < n and text[k] in "+-":
            k += 1
        if k < n and text[k] in _DIGITS:
            while k < n and text[k] in _DIGITS:
                k += 1
            j = k
        elif not (j + 1 < n and text[j + 1] in _NAME_CHARS):
            # "2exp(p)" is a number followed by a name (the parser then asks for an operator);
            # "1e", "1e+" or "1e)" can only be an unfinished exponent.
            raise ExpressionError(
                f"number {text[i:k]!r} has an incomplete exponent (write e.g. 1e-3)", text, j
            )
    literal = text[i:j]
    value = float(literal)
    if not math.isfinite(value):
        raise ExpressionError(f"number {literal!r} is too large", text, i)
    return j


def _stray_reason(ch: str, tokens: list[_Token]) -> str:
    if ch == "." and tokens and (tokens[-1].kind == "name" or tokens[-1].value == ")"):
        return "attribute access with '.' is not part of the language"
    if ch in _SUPERSCRIPTS:
        return f"unexpected character {ch!r} (write powers with ^, e.g. p^2)"
    if ch in "'\"":
        return "text in quotes is not part of the language"
    if ch in "[]{}":
        return f"unexpected character {ch!r} (group with round parentheses)"
    return f"unexpected character {ch!r}"


# --------------------------------------------------------------------------------------------
# Parser


def _describe(tok: _Token) -> str:
    return "the end of the expression" if tok.kind == "end" else repr(tok.text)


class _Parser:
    def __init__(self, text: str, functions: dict[str, int], max_depth: int) -> None:
        self.text = text
        self.tokens: list[_Token] = []
        self.stream = _tokens(text, self.tokens)
        self.i = 0
        self.depth = 0
        self.functions = functions
        self.max_depth = max_depth

    # helpers ---------------------------------------------------------------------------------
    @property
    def tok(self) -> _Token:
        while len(self.tokens) <= self.i:
            self.tokens.append(next(self.stream))
        return self.tokens[self.i]

    def fail(self, reason: str, pos: int) -> ExpressionError:
        return ExpressionError(reason, self.text, pos)

    def is_op(self, *ops: str) -> bool:
        return self.tok.kind == "op" and self.tok.value in ops

    def enter(self, tok: _Token) -> None:
        self.depth += 1
        if self.depth > self.max_depth:
            raise self.too_deep(tok)

    def too_deep(self, tok: _Token) -> ExpressionError:
        return self.fail(
            f"expression is nested deeper than {self.max_depth} levels "
            "(each operator, sign, function call and parenthesis adds a level)",
            tok.pos,
        )

    def build(self, node: Node, children: tuple[int, ...], tok: _Token) -> tuple[Node, int]:
        # The tree's height is bounded as well as the parser's recursion, so that printing,
        # evaluating and differentiating (all recursive) stay far from Python's stack limit.
        height = 1 + max(children)
        if height > self.max_depth:
            raise self.too_deep(tok)
        return node, height

    # grammar: each rule returns the node and its height ---------------------------------------
    def parse(self) -> Node:
        if self.tok.kind == "end":
            raise self.fail("the expression is empty", 0)
        node, _ = self.expr()
        tok = self.tok
        if tok.kind != "end":
            if tok.value == ")":
                raise self.fail("unmatched ')'", tok.pos)
            if tok.value == ",":
                raise self.fail("',' separates function arguments only", tok.pos)
            if tok.value == "(":
                raise self.fail("missing operator before '(' (write p*(...) to multiply)", tok.pos)
            raise self.fail(f"missing operator before {tok.text!r}", tok.pos)
        return node

    def expr(self) -> tuple[Node, int]:
        node, h = self.term()
        while self.is_op("+", "-"):
            tok = self.tok
            self.i += 1
            right, hr = self.term()
            node, h = self.build(BinOp(tok.value, node, right), (h, hr), tok)
        return node, h

    def term(self) -> tuple[Node, int]:
        node, h = self.unary()
        while self.is_op("*", "/"):
            tok = self.tok
            self.i += 1
            right, hr = self.unary()
            node, h = self.build(BinOp(tok.value, node, right), (h, hr), tok)
        return node, h

    def unary(self) -> tuple[Node, int]:
        if self.is_op("-", "+"):
            tok = self.tok
            self.i += 1
            self.enter(tok)
            operand, h = self.unary()
            self.depth -= 1
            if tok.value == "+":
                return operand, h
            return self.build(Neg(operand), (h,), tok)
        return self.power()

    def power(self) -> tuple[Node, int]:
        base, hb = self.primary()
        if self.is_op("^"):
            tok = self.tok
            self.i += 1
            self.enter(tok)
            exponent, he = self.unary()
            self.depth -= 1
            return self.build(BinOp("^", base, exponent), (hb, he), tok)
        return base, hb

    def primary(self) -> tuple[Node, int]:
        tok = self.tok
        if tok.kind == "num":
            self.i += 1
            return Num(float(tok.value)), 0
        if tok.kind == "name":
            return self.name()
        if tok.kind == "op" and tok.value == "(":
            self.i += 1
            self.enter(tok)
            if self.is_op(")"):
                raise self.fail("empty parentheses", self.tok.pos)
            inner = self.expr()
            self.close(tok)
            self.depth -= 1
            return inner
        after = self.tokens[self.i - 1] if self.i > 0 else None
        where = f" after {after.text!r}" if after is not None else ""
        if tok.kind == "end":
            raise self.fail(
                f"expected a number, variable, function or '('{where} but the expression ended",
                tok.pos,
            )
        raise self.fail(
            f"expected a number, variable, function or '('{where} but found {tok.text!r}", tok.pos
        )

    def close(self, opener: _Token) -> None:
        tok = self.tok
        if self.is_op(")"):
            self.i += 1
            return
        if tok.kind == "end":
            raise self.fail("'(' is never closed", opener.pos)
        raise self.fail(
            f"expected ')' to close the '(' at character {opener.pos + 1} but found {tok.text!r}",
            tok.pos,
        )

    def name(self) -> tuple[Node, int]:
        tok = self.tok
        self.i += 1
        if tok.value not in VARIABLES and tok.value not in self.functions:
            try:
                kind = "function" if self.is_op("(") else "name"
            except ExpressionError:  # the name is the first fault, whatever follows it
                kind = "name"
            known = ", ".join(FUNCTIONS)
            hint = _HINTS.get(tok.value)
            extra = f"; {hint}" if hint else ""
            raise self.fail(
                f"unknown {kind} {tok.value!r}{extra} (the variables are p and K; "
                f"the functions are {known})",
                tok.pos,
            )
        if tok.value in VARIABLES:
            return Var(tok.value), 0
        if not self.is_op("("):
            raise self.fail(
                f"function {tok.value!r} must be followed by '(', as in {tok.value}(p)", self.tok.pos
            )
        opener = self.tok
        self.i += 1
        self.enter(opener)
        arity = self.functions[tok.value]
        plural = "argument" if arity == 1 else "arguments"
        if self.is_op(")"):
            raise self.fail(f"{tok.value} takes {arity} {plural}; got none", self.tok.pos)
        args = [self.expr()]
        while self.is_op(","):
            comma = self.tok
            if len(args) == arity:
                raise self.fail(
                    f"{tok.value} takes {arity} {plural}; this ',' starts one too many", comma.pos
                )
            self.i += 1
            args.append(self.expr())
        if len(args) < arity and self.is_op(")"):
            raise self.fail(
                f"{tok.value} takes {arity} {plural} separated by ','; got {len(args)}",
                self.tok.pos,
            )
        self.close(opener)
        self.depth -= 1
        call = Call(tok.value, tuple(node for node, _ in args))
        return self.build(call, tuple(h for _, h in args), tok)


# --------------------------------------------------------------------------------------------
# Printing


def _format_number(value: float) -> str:
    # Whole numbers print without ".0"; others use repr, the shortest text that reads back exactly.
    if value.is_integer() and value < 1e16:
        return str(int(value))
    return repr(value)


def _rank(node: Node) -> int:
    if isinstance(node, BinOp):
        return {"+": 1, "-": 1, "*": 2, "/": 2, "^": 4}[node.op]
    if isinstance(node, Neg):
        return 3
    return 5


def to_text(node: Node) -> str:
    """Print ``node`` with only the parentheses needed to read back the same tree."""
    if isinstance(node, Num):
        return _format_number(node.value)
    if isinstance(node, Var):
        return node.name
    if isinstance(node, Call):
        return node.name + "(" + ", ".join(to_text(a) for a in node.args) + ")"
    if isinstance(node, Neg):
        inner = to_text(node.operand)
        return "-" + (inner if _rank(node.operand) >= 3 else f"({inner})")
    left, right = to_text(node.left), to_text(node.right)
    rl, rr = _rank(node.left), _rank(node.right)
    if node.op == "^":
        # The base is a primary; the exponent is a unary, so it keeps right-associativity.
        left = left if rl == 5 else f"({left})"
        right = right if rr >= 3 else f"({right})"
        return f"{left}^{right}"
    level = _rank(node)
    # Both operator levels are left-associative: a right operand at the same level needs parens.
    left = left if rl >= level else f"({left})"
    right = right if rr > level else f"({right})"
    if node.op in "+-":
        return f"{left} {node.op} {right}"
    return f"{left}{node.op}{right}"


# --------------------------------------------------------------------------------------------
# Evaluation

_UNARY_NUMPY: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "ln": np.log,
    "log10": np.log10,
    "exp": np.exp,
    "sqrt": np.sqrt,
    "abs": np.abs,
    "sign": np.sign,
}
_BINARY_NUMPY: dict[str, Callable[[np.ndarray, np.ndarray], np.ndarray]] = {
    "+": np.add,
    "-": np.subtract,
    "*": np.multiply,
    "/": np.divide,
    "^": np.power,
    "min": np.minimum,
    "max": np.maximum,
}


def _evaluate(node: Node, env: dict[str, np.ndarray]) -> np.ndarray:
    if isinstance(node, Num):
        return np.float64(node.value)
    if isinstance(node, Var):
        return env[node.name]
    if isinstance(node, Neg):
        return np.negative(_evaluate(node.operand, env))
    if isinstance(node, BinOp):
        return _BINARY_NUMPY[node.op](_evaluate(node.left, env), _evaluate(node.right, env))
    args = [_evaluate(a, env) for a in node.args]
    if node.name == "where_le":
        return np.where(args[0] <= args[1], args[2], args[3])
    if len(args) == 1:
        return _UNARY_NUMPY[node.name](args[0])
    return _BINARY_NUMPY[node.name](args[0], args[1])


def _variables(node: Node) -> frozenset[str]:
    if isinstance(node, Var):
        return frozenset({node.name})
    if isinstance(node, Num):
        return frozenset()
    if isinstance(node, Neg):
        return _variables(node.operand)
    if isinstance(node, BinOp):
        return _variables(node.left) | _variables(node.right)
    out: frozenset[str] = frozenset()
    for a in node.args:
        out |= _variables(a)
    return out


# --------------------------------------------------------------------------------------------
# Symbolic derivative with light simplification

ZERO = Num(0.0)
ONE = Num(1.0)


def _num(value: float) -> Node:
    return Neg(Num(-value)) if value < 0 else Num(value)


def _is(node: Node, value: float) -> bool:
    return isinstance(node, Num) and node.value == value


def _neg(a: Node) -> Node:
    if isinstance(a, Neg):
        return a.operand
    if _is(a, 0.0):
        return ZERO
    return Neg(a)


def _add(a: Node, b: Node) -> Node:
    if _is(a, 0.0):
        return b
    if _is(b, 0.0):
        return a
    if isinstance(a, Num) and isinstance(b, Num) and math.isfinite(a.value + b.value):
        return Num(a.value + b.value)
    if isinstance(b, Neg):
        return _sub(a, b.operand)
    return BinOp("+", a, b)


def _sub(a: Node, b: Node) -> Node:
    if _is(b, 0.0):
        return a
    if _is(a, 0.0):
        return _neg(b)
    if isinstance(a, Num) and isinstance(b, Num):
        return _num(a.value - b.value)
    if isinstance(b, Neg):
        return _add(a, b.operand)
    return BinOp("-", a, b)


def _mul(a: Node, b: Node) -> Node:
    if _is(a, 0.0) or _is(b, 0.0):
        return ZERO
    if _is(a, 1.0):
        return b
    if _is(b, 1.0):
        return a
    if isinstance(a, Neg):
        return _neg(_mul(a.operand, b))
    if isinstance(b, Neg):
        return _neg(_mul(a, b.operand))
    if isinstance(b, BinOp) and b.op == "/" and _is(b.left, 1.0):
        return _div(a, b.right)  # a*(1/d) reads better as a/d
    if isinstance(a, BinOp) and a.op == "/" and _is(a.left, 1.0):
        return _div(b, a.right)
    if isinstance(a, Num) and isinstance(b, Num) and math.isfinite(a.value * b.value):
        return Num(a.value * b.value)
    return BinOp("*", a, b)


def _div(a: Node, b: Node) -> Node:
    if _is(a, 0.0):
        return ZERO
    if _is(b, 1.0):
        return a
    if isinstance(a, Neg):
        return _neg(_div(a.operand, b))
    return BinOp("/", a, b)


def _pow(a: Node, b: Node) -> Node:
    if _is(b, 1.0):
        return a
    if _is(b, 0.0):
        return ONE
    return BinOp("^", a, b)


def _minus_one(v: Node) -> Node:
    if isinstance(v, Num):
        return _num(v.value - 1.0)
    if isinstance(v, Neg) and isinstance(v.operand, Num):
        return _num(-v.operand.value - 1.0)
    return BinOp("-", v, ONE)


def differentiate(node: Node) -> Node:
    """The derivative of ``node`` with respect to ``p`` (``K`` is a constant)."""
    if isinstance(node, Num):
        return ZERO
    if isinstance(node, Var):
        return ONE if node.name == "p" else ZERO
    if isinstance(node, Neg):
        return _neg(differentiate(node.operand))
    if isinstance(node, BinOp):
        u, v = node.left, node.right
        du, dv = differentiate(u), differentiate(v)
        if node.op == "+":
            return _add(du, dv)
        if node.op == "-":
            return _sub(du, dv)
        if node.op == "*":
            return _add(_mul(du, v), _mul(u, dv))
        if node.op == "/":
            if _is(dv, 0.0):
                return _div(du, v)
            return _div(_sub(_mul(du, v), _mul(u, dv)), _pow(v, Num(2.0)))
        # power
        if _is(dv, 0.0):
            return _mul(_mul(v, _pow(u, _minus_one(v))), du)
        if _is(du, 0.0):
            return _mul(_mul(node, Call("ln", (u,))), dv)
        # u^v = exp(v ln u), so (u^v)' = u^v (v' ln u + v u'/u)
        return _mul(node, _add(_mul(dv, Call("ln", (u,))), _div(_mul(v, du), u)))
    name, args = node.name, node.args
    if name in ("min", "max"):
        a, b = args
        da, db = differentiate(a), differentiate(b)
        if _is(da, 0.0) and _is(db, 0.0):
            return ZERO
        # min picks a where a <= b; max picks a where b <= a.
        first, second = (a, b) if name == "min" else (b, a)
        return Call("where_le", (first, second, da, db))
    if name == "where_le":
        dx, dy = differentiate(args[2]), differentiate(args[3])
        if _is(dx, 0.0) and _is(dy, 0.0):
            return ZERO
        return Call("where_le", (args[0], args[1], dx, dy))
    if name == "sign":
        return ZERO  # zero wherever the derivative exists
    u = args[0]
    du = differentiate(u)
    if _is(du, 0.0):
        return ZERO
    if name == "ln":
        return _div(du, u)
    if name == "log10":
        return _div(du, _mul(u, Call("ln", (Num(10.0),))))
    if name == "exp":
        return _mul(node, du)
    if name == "sqrt":
        return _div(du, _mul(Num(2.0), node))
    if name == "abs":
        return _mul(Call("sign", (u,)), du)
    raise AssertionError(f"no derivative rule for {name}")  # unreachable for parsed trees


# --------------------------------------------------------------------------------------------
# Public API


@dataclass(frozen=True)
class RateTerm:
    """A parsed rate term.

    Attributes
    ----------
    text : the text as the user wrote it (for a derivative: its printout).
    tree : the expression tree (``Num``, ``Var``, ``Neg``, ``BinOp``, ``Call``).
    canonical : a normalised printout; ``parse_term(canonical).tree == tree``.
    uses_capacity : whether ``K`` appears.
    """

    text: str
    tree: Node
    canonical: str = field(init=False)
    uses_capacity: bool = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "canonical", to_text(self.tree))
        object.__setattr__(self, "uses_capacity", "K" in _variables(self.tree))

    def evaluate(self, p: ArrayLike, K: ArrayLike | None = None) -> np.ndarray:
        """Values of the term at states ``p`` (array-like) and capacity ``K`` (scalar or array).

        Overflow, logarithms of non-positive values and division by zero give inf or nan
        without a warning. The result has the broadcast shape of ``p`` and ``K``.
        """
        p_arr = _as_float_array(p, "p")
        env = {"p": p_arr}
        shape = p_arr.shape
        if K is not None:
            k_arr = _as_float_array(K, "K")
            try:
                shape = np.broadcast_shapes(p_arr.shape, k_arr.shape)
            except ValueError:
                raise GrowthcoreInputError(
                    f"`K` of shape {k_arr.shape} does not broadcast against `p` of shape "
                    f"{p_arr.shape}"
                ) from None
            env["K"] = k_arr
        elif self.uses_capacity:
            raise GrowthcoreInputError(
                f"the term {self.canonical!r} uses the capacity K; pass a value with K=..."
            )
        with np.errstate(all="ignore"):
            out = _evaluate(self.tree, env)
        return np.array(np.broadcast_to(out, shape), dtype=float)

    def derivative(self) -> RateTerm:
        """The symbolic derivative with respect to ``p``, lightly simplified."""
        try:
            tree = differentiate(self.tree)
            return RateTerm(to_text(tree), tree)
        except RecursionError:
            # Only trees built outside the parser can be this deep; parsed ones are bounded.
            raise GrowthcoreInputError(
                "the term is nested too deeply to differentiate; write it more simply"
            ) from None

    def derivative_values(self, p: ArrayLike, K: ArrayLike | None = None) -> np.ndarray:
        """Values of :meth:`derivative` at ``p`` and ``K``."""
        return self.derivative().evaluate(p, K)


def _as_float_array(x: object, name: str) -> np.ndarray:
    try:
        return np.asarray(x, dtype=float)
    except (TypeError, ValueError):
        raise GrowthcoreInputError(f"`{name}` must be numbers; got {x!r:.60}") from None


def parse_term(text: str, *, allow_internal: bool = False) -> RateTerm:
    """Read a user-written rate term.

    Parameters
    ----------
    text : the expression, e.g. ``"p*(K - p)"``; at most ``MAX_LENGTH`` characters.
    allow_internal : also accept ``sign`` and ``where_le``, which derivative printouts use,
        and lift the length limit (derivative printouts can be long). Not for user text.

    Raises
    ------
    ExpressionError
        When the text is outside the grammar; ``position`` is the 0-based offending character.
    """
    if not isinstance(text, str):
        raise GrowthcoreInputError(f"a rate term must be text; got {type(text).__name__}")
    if not allow_internal and len(text) > MAX_LENGTH:
        raise ExpressionError(
            f"the expression is {len(text)} characters long; the limit is {MAX_LENGTH}",
            text,
            MAX_LENGTH,
        )
    functions = {**FUNCTIONS, **INTERNAL_FUNCTIONS} if allow_internal else FUNCTIONS
    tree = _Parser(text, functions, MAX_DEPTH).parse()
    return RateTerm(text, tree)


__all__ = [
    "BinOp",
    "Call",
    "ExpressionError",
    "MAX_DEPTH",
    "MAX_LENGTH",
    "Neg",
    "Node",
    "Num",
    "RateTerm",
    "Var",
    "differentiate",
    "parse_term",
    "to_text",
]
