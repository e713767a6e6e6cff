"""Numbers as people type them: decimal point or comma, optional thousands separators."""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np

#: Cell texts that mean "no value here"; they are reported as blanks, not as bad numbers.
MISSING_MARKS = frozenset(
    {"", "na", "n/a", "nan", "null", "none", "-", "--", "\u2014", "#n/a", "missing", "nd", "n.d."}
)

_EXP = r"(?:[eE][+-]?\d+)?"
_PLAIN = {
    ".": re.compile(rf"[+-]?(?:\d+(?:\.\d*)?|\.\d+){_EXP}"),
    ",": re.compile(rf"[+-]?(?:\d+(?:,\d*)?|,\d+){_EXP}"),
}
# Grouped digits must use one separator throughout and groups of exactly three digits.
_GROUPED = {
    ".": re.compile(r"[+-]?\d{1,3}(?P<sep>[,'\u00a0\u202f ])\d{3}(?:(?P=sep)\d{3})*(?:\.\d*)?"),
    ",": re.compile(r"[+-]?\d{1,3}(?P<sep>[.'\u00a0\u202f ])\d{3}(?:(?P=sep)\d{3})*(?:,\d*)?"),
}
_STRONG_COMMA = re.compile(r"[+-]?\d*,\d+(?:[eE][+-]?\d+)?|[+-]?\d{1,3}(?:[.'\u00a0\u202f ]\d{3})+,\d*")
_STRONG_POINT = re.compile(r"[+-]?\d*\.\d+(?:[eE][+-]?\d+)?|[+-]?\d{1,3}(?:[,'\u00a0\u202f ]\d{3})+\.\d*")
_AMBIGUOUS_COMMA = re.compile(r"[+-]?\d{1,3}(?:,\d{3})+")
_AMBIGUOUS_POINT = re.compile(r"[+-]?\d{1,3}(?:\.\d{3})+")


_DIGIT_START = frozenset("0123456789.")


@dataclass(frozen=True)
class NumberFormat:
    """The decimal mark of a file and whether grouped thousands were seen (for the report)."""

    decimal: str = "."
    thousands: str | None = None


def is_missing(text: str) -> bool:
    """True when a cell's text is empty or a common missing-value mark such as ``NA``."""
    return text.strip().lower() in MISSING_MARKS


def parse_plain_number(text: str) -> float | None:
    """``text`` as a finite number with a decimal point and no grouping, else None (then the full rules apply).

    float() alone would also take "1_0", "inf", "nan" or non-ASCII digits, hence the checks around it.
    """
    s = text.strip()
    if not s or len(s) > 64 or not s.isascii() or "_" in s or not (s[-1].isdigit() or s[-1] == "."):
        return None
    if s.lstrip("+-")[:1] not in _DIGIT_START:
        return None
    try:
        x = float(s)
    except ValueError:
        return None
    return x if abs(x) != float("inf") else None


_PLAIN_CHARS = frozenset("0123456789.+-eE")


def plain_number_column(cells: Sequence[object]) -> list[float] | None:
    """Every cell as a float when all are plain numbers written as text, else None.

    The common case of a clean column in one numpy conversion instead of the per-cell rules. With
    only digits, signs, points and exponents in the text, float() accepts exactly what
    :func:`parse_plain_number` accepts; any other cell (blank, missing mark, grouping, a word, an
    overflow) sends the whole column back to the per-cell rules, which name each problem.
    """
    if not cells:
        return None
    kinds = set(map(type, cells))
    if kinds <= {float, int}:  # a workbook's saved numbers
        numbers = np.array(cells, dtype=float)
        return numbers.tolist() if np.isfinite(numbers).all() else None
    if kinds != {str}:
        return None
    texts: list[str] = cells  # type: ignore[assignment]
    if max(map(len, texts)) > 64 or not set("".join(texts)) <= _PLAIN_CHARS:
        return None
    try:
        values = np.array(texts, dtype=float)
    except ValueError:
        return None
    if not np.isfinite(values).all():
        return None
    return values.tolist()


def parse_number(text: str, fmt: NumberFormat) -> float | None:
    """The number written in ``text`` under ``fmt``, or None when it is not a plain finite number."""
    s = text.strip()
    if not s or len(s) > 64:
        return None
    dec = fmt.decimal
    if dec == ".":
        quick = parse_plain_number(s)
        if quick is not None:
            return quick
    if _PLAIN[dec].fullmatch(s):
        return _finite(s.replace(",", ".") if dec == "," else s)
    m = _GROUPED[dec].fullmatch(s)
    if m:
        body = s.replace(m.group("sep"), "")
        return _finite(body.replace(",", ".") if dec == "," else body)
    return None


def _finite(s: str) -> float | None:
    try:
        x = float(s)
    except ValueError:
        return None
    return x if x == x and abs(x) != float("inf") else None


def detect_number_format(texts: Iterable[str], delimiter: str | None) -> NumberFormat:
    """Decide the decimal mark from the cells' own evidence.

    ``1,25`` or ``1.234,5`` count for a comma, ``1.25`` or ``1,234.5`` for a point. Cells such as
    ``1,250`` are ambiguous; they tip the balance to a comma only in files not delimited by commas
    and only when nothing else decides (``1.250`` alone keeps the point, the more common reading).
    """
    cells = [s for s in (raw.strip() for raw in texts) if s and len(s) <= 64]
    comma = point = ambiguous = 0
    for s in cells:
        if "," not in s:  # without a comma a cell can only be point evidence: counted below if needed
            continue
        if _AMBIGUOUS_COMMA.fullmatch(s):
            ambiguous += 1
        elif _STRONG_COMMA.fullmatch(s):
            comma += 1
        elif _STRONG_POINT.fullmatch(s):
            point += 1
    plain = (s for s in cells if "," not in s and not _AMBIGUOUS_POINT.fullmatch(s) and _STRONG_POINT.fullmatch(s))
    if comma:
        point += sum(1 for _ in plain)
    elif not point and next(plain, None) is not None:
        point = 1  # one is enough to keep the point: no comma evidence to weigh it against
    if comma > point or (comma == point == 0 and ambiguous and delimiter not in (",", None)):
        decimal = ","
    else:
        decimal = "."
    return NumberFormat(decimal=decimal, thousands=None)


def thousands_separator(texts: Iterable[str], fmt: NumberFormat) -> str | None:
    """The thousands separator used by the first grouped number, if any cell has one."""
    for raw in texts:
        s = raw.strip()
        if _PLAIN[fmt.decimal].fullmatch(s):
            continue
        m = _GROUPED[fmt.decimal].fullmatch(s)
        if m:
            return m.group("sep")
    return None
