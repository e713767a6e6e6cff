"""Which column is time, which hold values, and whether a column names the series."""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Sequence

from growthcore.errors import ImportFailure
from growthcore.io.headers import Column, cell_kind
from growthcore.io.numbers import NumberFormat

_TIME_WORDS = re.compile(
    r"^(t|time|times|elapsed|elapsed time|date|datetime|date time|date/time|timestamp|"
    r"hour|hours|day|days|minute|minutes|min|year|years|yr|week|weeks|age|clock|"
    r"sampling time|sample time|time point|timepoint|run time|runtime|"
    r"zeit|datum|tag|tage|temps|date et heure|jour|jours|tiempo|fecha|tempo|tijd)$",
    re.IGNORECASE,
)
_SERIES_WORDS = re.compile(
    r"^(series|well|wells|sample|sample id|replicate|rep|id|group|site|strain|culture|reactor|"
    r"population|plot|label|name|flask|vessel|tank|subject|unit|island|treatment|condition)$",
    re.IGNORECASE,
)


@dataclass(frozen=True)
class ColumnProfile:
    """Counts of cell kinds in one column's data rows."""

    column: Column
    number: int
    time: int
    text: int
    blank: int
    distinct_text: int
    distinct: int

    @property
    def filled(self) -> int:
        return self.number + self.time + self.text

    @property
    def numeric(self) -> bool:
        return self.filled > 0 and self.number >= 0.5 * self.filled

    @property
    def timelike(self) -> bool:
        return self.filled > 0 and self.number + self.time >= 0.5 * self.filled


#: Data rows examined when guessing the columns' roles (every row is still read and checked).
PROFILE_ROWS = 2000


def profile_columns(
    columns: Sequence[Column], data: Sequence[Sequence[object]], fmt: NumberFormat
) -> list[ColumnProfile]:
    """Cell-kind counts per column, from the first ``PROFILE_ROWS`` data rows."""
    data = data[:PROFILE_ROWS]
    out = []
    for c in columns:
        counts = {"number": 0, "time": 0, "text": 0, "blank": 0}
        texts: set[str] = set()
        every: set[str] = set()
        for row in data:
            v = row[c.index] if c.index < len(row) else None
            k = cell_kind(v, fmt)
            counts[k] += 1
            if k == "text":
                texts.add(str(v).strip())
            if k != "blank":
                every.add(str(v).strip())
        out.append(
            ColumnProfile(c, counts["number"], counts["time"], counts["text"], counts["blank"], len(texts), len(every))
        )
    return out


def find_column(columns: Sequence[Column], wanted: str, role: str, filename: str) -> Column:
    """The column named ``wanted`` (header, name without unit, or 1-based position)."""
    key = " ".join(str(wanted).split()).lower()
    for match in (
        lambda c: c.header.lower() == key,
        lambda c: c.name.lower() == key,
    ):
        for c in columns:
            if match(c):
                return c
    if key.isdigit() and 1 <= int(key) <= len(columns):
        return columns[int(key) - 1]
    names = ", ".join(repr(c.label) for c in columns)
    raise ImportFailure(f"{filename}: no column {wanted!r} for the {role}; the columns are {names}")


@dataclass(frozen=True)
class Layout:
    """The chosen roles; ``layout`` is ``long`` or ``wide``."""

    time: Column
    values: tuple[Column, ...]
    series: Column | None
    layout: str
    notes: tuple[str, ...]


def choose_layout(
    profiles: Sequence[ColumnProfile],
    filename: str,
    *,
    time: str | None,
    value: str | Sequence[str] | None,
    series: str | None,
) -> Layout:
    """Guess (or take from the caller) the time, value and series columns."""
    columns = [p.column for p in profiles]
    by_index = {p.column.index: p for p in profiles}
    used = [p for p in profiles if p.filled]
    notes: list[str] = []

    if time is not None:
        time_col = find_column(columns, time, "time", filename)
    else:
        named = [p for p in used if _TIME_WORDS.match(p.column.name) and p.timelike]
        clocks = [p for p in used if p.time and p.time >= 0.5 * p.filled]
        numeric = [p for p in used if p.timelike]
        pick = (named or clocks or numeric or [None])[0]
        if pick is None:
            raise ImportFailure(
                f"{filename}: no column of numbers, clock times or dates found for the time"
            )
        time_col = pick.column
        how = "by its header" if named else "as the first column of clock times or dates" if clocks else "as the first numeric column"
        notes.append(f"time column {time_col.label!r} chosen {how}")

    series_col: Column | None = None
    if series is not None:
        series_col = find_column(columns, series, "series", filename)
    elif value is None or isinstance(value, str):
        for p in used:
            if p.column.index == time_col.index:
                continue
            # A named id column may hold numbers (replicate 1, 2, 3) but its values must repeat.
            by_name = bool(_SERIES_WORDS.match(p.column.name)) and p.distinct <= max(1, p.filled // 2)
            by_content = p.text >= 0.9 * p.filled and 1 <= p.distinct_text <= max(1, p.filled // 2)
            if by_name or by_content:
                series_col = p.column
                notes.append(
                    f"column {p.column.label!r} names the series ({p.distinct} distinct); "
                    "choose another with --series"
                )
                break

    taken = {time_col.index} | ({series_col.index} if series_col is not None else set())
    if value is not None:
        wanted = [value] if isinstance(value, str) else list(value)
        values = [find_column(columns, v, "values", filename) for v in wanted]
        for v in values:
            if v.index in taken:
                raise ImportFailure(f"{filename}: column {v.label!r} cannot be both the time (or series) and a value")
    else:
        values = [p.column for p in used if p.column.index not in taken and p.numeric]
        if not values:
            raise ImportFailure(
                f"{filename}: no numeric value column found besides the time column {time_col.label!r}"
            )
    if series_col is not None and len(values) > 1:
        notes.append(
            f"long layout with a series column: value column {values[0].label!r} used; "
            f"not used: {', '.join(repr(v.label) for v in values[1:])} (choose with --value)"
        )
        values = values[:1]
    chosen = {time_col.index} | {v.index for v in values} | ({series_col.index} if series_col else set())
    for p in used:
        if p.column.index not in chosen:
            kind = "text" if p.text >= p.filled / 2 else "numbers"
            notes.append(f"column {p.column.label!r} ({kind}) is not used")
    layout = "wide" if len(values) > 1 else "long"
    if layout == "wide":
        notes.append(
            f"wide layout: {len(values)} value columns read as separate series "
            "(choose one with --value)"
        )
    if not by_index[time_col.index].filled:
        raise ImportFailure(f"{filename}: the time column {time_col.label!r} is empty")
    return Layout(time_col, tuple(values), series_col, layout, tuple(notes))
