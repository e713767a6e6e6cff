"""What each column of a table is for: the time, series ids, conditions, measurements, row numbers.

A long file keeps one row per measurement: a time column, one or more id columns whose values
repeat over the times (a tree, a plot, a well), conditions and covariates that stay constant within a
series (variety, year, diet, a starting weight) and measurement columns that vary within it. A wide
file keeps one column per series. The roles are read from the content alone: the id columns are the
fewest columns within whose groups every time occurs once.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np

from growthcore.io.headers import Column
from growthcore.io.numbers import NumberFormat, is_missing, parse_number

#: Most candidate id columns tried together (pairs and triples only among the first few).
MAX_ID_COLUMNS = 3
MAX_COMBINED_CANDIDATES = 8
#: Share of rows whose time repeats within a series that still counts as one time per series.
REPEAT_SHARE = 0.02
#: Header words of a column that only numbers the rows (R's write.csv leaves it unnamed).
_ROW_NUMBER_NAMES = {"", "rownames", "row.names", "row", "rows", "row number", "rownumber", "unnamed: 0",
                     "index", "obs", "#", "no", "no.", "x"}


def cell_key(cell: object) -> str | None:
    """A cell as series ids and conditions compare it: trimmed text, whole numbers without ``.0``."""
    if cell is None:
        return None
    if isinstance(cell, float):
        if math.isnan(cell):
            return None
        return str(int(cell)) if cell.is_integer() else repr(cell)
    if hasattr(cell, "isoformat"):
        return str(cell.isoformat())
    text = str(cell).strip()
    return None if is_missing(text) else text


@dataclass(frozen=True)
class Codes:
    """One column as integer codes (-1 blank) with its distinct keys in order of first appearance."""

    column: Column
    codes: np.ndarray
    keys: tuple[str, ...]

    @property
    def filled(self) -> int:
        return int(np.count_nonzero(self.codes >= 0))

    @property
    def distinct(self) -> int:
        return len(self.keys)


def encode(column: Column, cells: Iterable[object]) -> Codes:
    seen: dict[str, int] = {}
    out = []
    for cell in cells:
        key = cell_key(cell)
        if key is None:
            out.append(-1)
        else:
            code = seen.get(key)
            if code is None:
                code = seen[key] = len(seen)
            out.append(code)
    return Codes(column, np.array(out, dtype=np.int64), tuple(seen))


def whole_numbers(codes: Codes, fmt: NumberFormat) -> bool:
    """Every distinct value is a whole number (ids such as tree 1, 2, 3; years)."""
    for key in codes.keys:
        x = parse_number(key, fmt)
        if x is None or not math.isfinite(x) or not float(x).is_integer():
            return False
    return bool(codes.keys)


def row_number_header(column: Column, *, headed: bool) -> bool:
    """A header such as ``rownames``, or none at all in a table whose other columns have headers
    (as R writes a table): the column may only number the rows."""
    header = column.header.strip().lower()
    return header in _ROW_NUMBER_NAMES and (bool(header) or headed)


def is_row_number(codes: Codes, rows: int, fmt: NumberFormat) -> bool:
    """Unique whole numbers in every row (checked once :func:`row_number_header` allows the column)."""
    return codes.filled == rows and codes.distinct == rows and rows >= 3 and whole_numbers(codes, fmt)


def group_codes(parts: Sequence[Codes], rows: int) -> np.ndarray:
    """One code per row for the combination of ``parts`` (-1 where any part is blank)."""
    if not parts:
        return np.zeros(rows, dtype=np.int64)
    combined = np.zeros(rows, dtype=np.int64)
    blank = np.zeros(rows, dtype=bool)
    for part in parts:
        combined = combined * (part.distinct + 1) + (part.codes + 1)
        blank |= part.codes < 0
        _, combined = np.unique(combined, return_inverse=True)  # keep the codes small
        combined = combined.astype(np.int64)
    return np.where(blank, -1, combined)


@dataclass(frozen=True)
class Grouping:
    """How well one choice of id columns splits the rows into series along one time column."""

    ids: tuple[Codes, ...]
    groups: np.ndarray
    repeats: float  # share of rows whose time occurs earlier in the same series
    median_times: float  # distinct times in the median series
    series: int

    @property
    def unique(self) -> bool:
        return self.repeats <= REPEAT_SHARE


def grouping(ids: tuple[Codes, ...], time: Codes, rows: int) -> Grouping:
    groups = group_codes(ids, rows)
    ok = (groups >= 0) & (time.codes >= 0)
    g, t = groups[ok], time.codes[ok]
    if g.size == 0:
        return Grouping(ids, groups, 1.0, 0.0, 0)
    pairs = np.unique(g * (time.distinct + 1) + t)
    repeats = 1.0 - pairs.size / g.size
    per_series = np.bincount(pairs // (time.distinct + 1))
    per_series = per_series[per_series > 0]
    return Grouping(ids, groups, float(repeats), float(np.median(per_series)), int(per_series.size))


def best_grouping(time: Codes, candidates: Sequence[Codes], rows: int, min_times: int) -> Grouping:
    """The fewest id columns within which each time occurs once; else the grouping with fewest repeats.

    Every series must keep at least ``min_times`` distinct times in the median, so that a column of
    measurements with repeated values is never taken for ids.
    """
    plain = grouping((), time, rows)
    if plain.unique:
        return plain
    best = plain
    pool = list(candidates)
    for size in range(1, MAX_ID_COLUMNS + 1):
        options = pool if size == 1 else pool[:MAX_COMBINED_CANDIDATES]
        found = [grouping(tuple(c), time, rows) for c in itertools.combinations(options, size)]
        found = [f for f in found if f.median_times >= min_times]
        unique = [f for f in found if f.unique]
        if unique:
            return max(unique, key=lambda f: (f.median_times, -f.series))
        for f in found:
            if f.repeats < best.repeats - 1e-12:
                best = f
    return best


def constant_within(codes: Codes, groups: np.ndarray) -> bool:
    """Whether a column holds at most one value within each group (blanks aside)."""
    ok = (codes.codes >= 0) & (groups >= 0)
    if not ok.any():
        return False
    pairs = np.unique(np.stack([groups[ok], codes.codes[ok]]), axis=1)
    return bool(np.unique(pairs[0]).size == pairs.shape[1])
