"""Grouping patterns: a safe subset of regular-expression syntax, matched in linear time.

Python's ``re`` backtracks: ``^(a+)+$`` against ``aaaa…a!`` takes time that doubles with each
character, and a request cannot be interrupted while it runs. Patterns here are compiled to a
small program for a Pike VM (threads advanced in lock-step over the text), so a match costs at
most (text length) × (program length) steps whatever the pattern; captures follow the same
leftmost, greedy-first rules as ``re.search``.

Supported: literals, ``.``, classes ``[a-z_]`` and ``[^…]``, the escapes ``\\d \\w \\s \\D \\W \\S``
(and an escaped punctuation mark for itself), ``^`` and ``$``, groups ``( )``, ``(?: )`` and
``(?P<name> )``, alternation ``|``, and the quantifiers ``* + ? {m} {m,} {m,n}`` with an optional
``?`` for the lazy form. Back-references and look-arounds are refused (they cannot be matched in
linear time), and so is a repeated part that can match nothing, such as ``(a*)*``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from growthcore.errors import GrowthcoreInputError
from growthcore.limits import DEFAULT as LIMITS

#: Longest pattern accepted (characters) and largest compiled program (instructions).
MAX_PATTERN = LIMITS.max_pattern
MAX_PROGRAM = 4_000
#: Largest count in ``{m,n}``.
MAX_REPEAT = 100

Pred = Callable[[str], bool]

_CLASSES: dict[str, Pred] = {
    "d": str.isdecimal,
    "D": lambda c: not c.isdecimal(),
    "w": lambda c: c.isalnum() or c == "_",
    "W": lambda c: not (c.isalnum() or c == "_"),
    "s": str.isspace,
    "S": lambda c: not c.isspace(),
}
_CONTROL = {"t": "\t", "n": "\n", "r": "\r", "f": "\f", "v": "\v"}


class PatternError(GrowthcoreInputError):
    """A pattern outside the supported syntax, with the position of the trouble."""

    def __init__(self, pattern: str, position: int, reason: str) -> None:
        super().__init__(f"pattern {pattern!r} is not a valid regular expression of the supported kind: "
                         f"{reason} at character {position + 1}")


# ------------------------------------------------------------------------------------- parsing
# A tree of tuples: ("char", pred) ("cat", [..]) ("alt", [..]) ("rep", node, lo, hi, greedy)
# ("group", index, node) ("bol",) ("eol",)

class _Parser:
    def __init__(self, text: str) -> None:
        self.text = text
        self.pos = 0
        self.groups = 0
        self.names: dict[str, int] = {}

    def fail(self, reason: str, at: int | None = None) -> PatternError:
        return PatternError(self.text, self.pos if at is None else at, reason)

    def peek(self) -> str | None:
        return self.text[self.pos] if self.pos < len(self.text) else None

    def parse(self) -> tuple:
        node = self.alternation()
        if self.pos < len(self.text):
            raise self.fail("unbalanced ')'")
        return node

    def alternation(self) -> tuple:
        branches = [self.sequence()]
        while self.peek() == "|":
            self.pos += 1
            branches.append(self.sequence())
        return branches[0] if len(branches) == 1 else ("alt", branches)

    def sequence(self) -> tuple:
        items: list[tuple] = []
        while self.peek() not in (None, "|", ")"):
            items.append(self.quantified())
        return ("cat", items)

    def quantified(self) -> tuple:
        start = self.pos
        atom = self.atom()
        ch = self.peek()
        if ch not in ("*", "+", "?", "{"):
            return atom
        if ch == "{":
            bounds = self.braces()
            if bounds is None:
                return atom
            lo, hi = bounds
        else:
            self.pos += 1
            lo, hi = {"*": (0, None), "+": (1, None), "?": (0, 1)}[ch]
        greedy = True
        if self.peek() == "?":
            self.pos += 1
            greedy = False
        if self.peek() in ("*", "+", "?", "{") and (self.peek() != "{" or self._braces_ahead()):
            raise self.fail("a quantifier cannot follow a quantifier")
        if atom[0] in ("bol", "eol"):
            raise self.fail("nothing to repeat", start)
        if (hi is None or hi > 1) and _nullable(atom):
            # re gives such loops an empty last pass with its own capture rules; nothing an id needs
            raise self.fail("a repeated part that can match nothing (such as (a*)*) is not supported", start)
        return ("rep", atom, lo, hi, greedy)

    def _braces_ahead(self) -> bool:
        saved = self.pos
        try:
            return self.braces() is not None
        except PatternError:
            return True
        finally:
            self.pos = saved

    def braces(self) -> tuple[int, int | None] | None:
        """``{m}``, ``{m,}`` or ``{m,n}``; None (a literal brace) for anything else, as ``re`` does."""
        end = self.text.find("}", self.pos)
        if end < 0:
            return None
        body = self.text[self.pos + 1 : end]
        lo_text, comma, hi_text = body.partition(",")
        if not lo_text.isdigit() or (hi_text and not hi_text.isdigit()):
            return None
        lo = int(lo_text)
        hi = (int(hi_text) if hi_text else None) if comma else lo
        if lo > MAX_REPEAT or (hi is not None and hi > MAX_REPEAT):
            raise self.fail(f"a count in {{}} may be at most {MAX_REPEAT}")
        if hi is not None and hi < lo:
            raise self.fail("the counts in {} are in the wrong order")
        self.pos = end + 1
        return lo, hi

    def atom(self) -> tuple:
        ch = self.text[self.pos]
        if ch in "*+?":
            raise self.fail("nothing to repeat")
        if ch == "(":
            return self.group()
        if ch == "[":
            return ("char", self.char_class())
        if ch == "\\":
            return ("char", self.escape(in_class=False))
        self.pos += 1
        if ch == ".":
            return ("char", lambda c: c != "\n")
        if ch == "^":
            return ("bol",)
        if ch == "$":
            return ("eol",)
        return ("char", ch.__eq__)

    def group(self) -> tuple:
        start = self.pos
        self.pos += 1
        index: int | None
        if self.text.startswith("?:", self.pos):
            self.pos += 2
            index = None
        elif self.text.startswith("?P<", self.pos):
            close = self.text.find(">", self.pos)
            name = self.text[self.pos + 3 : close] if close > 0 else ""
            if not name.isidentifier():
                raise self.fail("a group name must be a word, as in (?P<group>...)")
            if name in self.names:
                raise self.fail(f"the group name {name!r} is used twice")
            self.groups += 1
            index = self.groups
            self.names[name] = index
            self.pos = close + 1
        elif self.peek() == "?":
            raise self.fail("look-arounds, back-references and inline flags are not supported")
        else:
            self.groups += 1
            index = self.groups
        inner = self.alternation()
        if self.peek() != ")":
            raise self.fail("missing ')'", start)
        self.pos += 1
        return ("group", index, inner) if index is not None else inner

    def escape(self, *, in_class: bool) -> Pred:
        self.pos += 1
        if self.pos >= len(self.text):
            raise self.fail("the pattern ends with a lone backslash", self.pos - 1)
        ch = self.text[self.pos]
        self.pos += 1
        if ch in _CLASSES:
            return _CLASSES[ch]
        if ch in _CONTROL:
            return _CONTROL[ch].__eq__
        if ch.isalnum():
            raise self.fail(f"the escape \\{ch} is not supported", self.pos - 2)
        return ch.__eq__

    def char_class(self) -> Pred:
        start = self.pos
        self.pos += 1
        negate = self.peek() == "^"
        if negate:
            self.pos += 1
        parts: list[Pred] = []
        ranges: list[tuple[str, str]] = []
        first = True
        while True:
            ch = self.peek()
            if ch is None:
                raise self.fail("missing ']'", start)
            if ch == "]" and not first:
                self.pos += 1
                break
            first = False
            if ch == "\\":
                pred = self.escape(in_class=True)
                parts.append(pred)
                continue
            self.pos += 1
            if self.peek() == "-" and self.pos + 1 < len(self.text) and self.text[self.pos + 1] != "]":
                hi = self.text[self.pos + 1]
                if hi == "\\":
                    raise self.fail("a range cannot end in an escape")
                if hi < ch:
                    raise self.fail(f"the range {ch}-{hi} is in the wrong order")
                self.pos += 2
                ranges.append((ch, hi))
            else:
                ranges.append((ch, ch))
        frozen = tuple(ranges)
        preds = tuple(parts)

        def member(c: str) -> bool:
            return any(lo <= c <= hi for lo, hi in frozen) or any(p(c) for p in preds)

        return (lambda c: not member(c)) if negate else member


def _nullable(node: tuple) -> bool:
    kind = node[0]
    if kind == "char":
        return False
    if kind in ("bol", "eol"):
        return True
    if kind == "cat":
        return all(_nullable(n) for n in node[1])
    if kind == "alt":
        return any(_nullable(n) for n in node[1])
    if kind == "group":
        return _nullable(node[2])
    return node[2] == 0 or _nullable(node[1])  # rep


# ----------------------------------------------------------------------------------- compiling
# Instructions: ("char", pred) ("split", a, b) (a first) ("jmp", a) ("save", slot) ("bol",)
# ("eol",) ("match",)

def _emit(node: tuple, prog: list[list]) -> None:
    kind = node[0]
    if len(prog) > MAX_PROGRAM:
        raise GrowthcoreInputError(f"the pattern is too large once its counts are expanded (over {MAX_PROGRAM} steps)")
    if kind == "char":
        prog.append(["char", node[1]])
    elif kind in ("bol", "eol"):
        prog.append([kind])
    elif kind == "cat":
        for item in node[1]:
            _emit(item, prog)
    elif kind == "group":
        prog.append(["save", 2 * node[1]])
        _emit(node[2], prog)
        prog.append(["save", 2 * node[1] + 1])
    elif kind == "alt":
        jumps = []
        branches = node[1]
        for i, branch in enumerate(branches):
            if i < len(branches) - 1:
                split = len(prog)
                prog.append(["split", split + 1, None])
                _emit(branch, prog)
                jumps.append(len(prog))
                prog.append(["jmp", None])
                prog[split][2] = len(prog)
            else:
                _emit(branch, prog)
        for j in jumps:
            prog[j][1] = len(prog)
    elif kind == "rep":
        _, inner, lo, hi, greedy = node
        for _ in range(lo):
            _emit(inner, prog)
        if hi is None:
            split = len(prog)
            prog.append(["split", None, None])
            _emit(inner, prog)
            prog.append(["jmp", split])
            body, out = split + 1, len(prog)
            prog[split][1:] = [body, out] if greedy else [out, body]
        else:
            splits = []
            for _ in range(hi - lo):
                split = len(prog)
                prog.append(["split", None, None])
                splits.append(split)
                _emit(inner, prog)
            out = len(prog)
            for split in splits:
                prog[split][1:] = [split + 1, out] if greedy else [out, split + 1]


@dataclass(frozen=True)
class Match:
    """Where the match lies and the spans of its groups (None for a group that took no part)."""

    text: str
    spans: tuple[int | None, ...]

    def group(self, index: int = 0) -> str | None:
        a, b = self.spans[2 * index], self.spans[2 * index + 1]
        return None if a is None or b is None else self.text[a:b]


@dataclass(frozen=True)
class SafePattern:
    """A compiled pattern: ``search`` finds the leftmost match as ``re.search`` would."""

    pattern: str
    groups: int
    groupindex: dict[str, int]
    program: tuple[tuple, ...]

    def search(self, text: str) -> Match | None:
        prog = self.program
        slots = 2 * (self.groups + 1)
        n = len(text)
        empty: tuple[int | None, ...] = (None,) * slots
        current: list[tuple[int, tuple]] = []
        matched: tuple | None = None
        for pos in range(n + 1):
            if matched is None:
                current.append((0, empty[:0] + (pos,) + empty[1:]))  # a new start, lowest priority
            ch = text[pos] if pos < n else None
            following: list[tuple[int, tuple]] = []
            seen = bytearray(len(prog))
            for pc0, caps0 in current:
                stack = [(pc0, caps0)]
                while stack:
                    pc, caps = stack.pop()
                    if seen[pc]:
                        continue
                    seen[pc] = 1
                    op = prog[pc]
                    kind = op[0]
                    if kind == "jmp":
                        stack.append((op[1], caps))
                    elif kind == "split":
                        stack.append((op[2], caps))  # popped after the first branch's whole closure
                        stack.append((op[1], caps))
                    elif kind == "save":
                        slot = op[1]
                        stack.append((pc + 1, caps[:slot] + (pos,) + caps[slot + 1 :]))
                    elif kind == "bol":
                        if pos == 0:
                            stack.append((pc + 1, caps))
                    elif kind == "eol":
                        if pos == n or (pos == n - 1 and text[-1] == "\n"):
                            stack.append((pc + 1, caps))
                    elif kind == "match":
                        matched = caps[:1] + (pos,) + caps[2:]
                        stack.clear()
                        break  # threads of lower priority are cut
                    elif ch is not None and op[1](ch):
                        following.append((pc + 1, caps))
                else:
                    continue
                break
            current = following
            if not current:
                if matched is not None:
                    break
        return None if matched is None else Match(text, matched)


def compile_pattern(pattern: str, *, max_length: int = MAX_PATTERN) -> SafePattern:
    """Parse and compile ``pattern``; PatternError (naming the position) outside the subset."""
    if len(pattern) > max_length:
        raise GrowthcoreInputError(f"the pattern is {len(pattern)} characters, over the limit of {max_length}")
    parser = _Parser(pattern)
    tree = parser.parse()
    prog: list[list] = []
    _emit(tree, prog)
    prog.append(["match"])
    return SafePattern(pattern, parser.groups, dict(parser.names), tuple(tuple(op) for op in prog))
