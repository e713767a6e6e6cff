"""Which column is the time, which name the series, which hold conditions and which hold values."""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

from growthcore.errors import ChoiceNotFound, ImportFailure
from growthcore.io.headers import Column, cell_kind
from growthcore.io.numbers import NumberFormat
from growthcore.io.report import ColumnRole
from growthcore.io.roles import (
    Codes,
    Grouping,
    best_grouping,
    constant_within,
    encode,
    grouping,
    is_row_number,
    row_number_header,
    whole_numbers,
)

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
    raise ChoiceNotFound(f"{filename}: no column {wanted!r} for the {role}; the columns are {names}", role)


@dataclass(frozen=True)
class Layout:
    """The chosen roles; ``layout`` is ``long`` (one value column, with or without ids) or ``wide``.

    ``measurements`` lists every column that varies within the series (the values among them);
    ``conditions`` and ``covariates`` stay constant within every series; ``empty`` holds no value.
    """

    time: Column
    values: tuple[Column, ...]
    ids: tuple[Column, ...]
    layout: str
    notes: tuple[str, ...]
    conditions: tuple[Column, ...] = ()
    covariates: tuple[Column, ...] = ()
    measurements: tuple[Column, ...] = ()
    empty: tuple[Column, ...] = ()
    roles: tuple[ColumnRole, ...] = ()


def _named_ids(columns: Sequence[Column], wanted: str | Sequence[str], filename: str) -> tuple[Column, ...]:
    names = [w.strip() for w in wanted.split(",")] if isinstance(wanted, str) else list(wanted)
    try:
        return tuple(find_column(columns, w, "series", filename) for w in names if w)
    except ImportFailure:
        if isinstance(wanted, str) and "," in wanted:  # a header that itself holds a comma
            return (find_column(columns, wanted, "series", filename),)
        raise


def choose_layout(
    profiles: Sequence[ColumnProfile],
    rows: Sequence[Sequence[object]],
    fmt: NumberFormat,
    filename: str,
    *,
    time: str | None,
    value: str | Sequence[str] | None,
    series: str | Sequence[str] | None,
) -> Layout:
    """Guess (or take from the caller) the time, id, condition and value columns from the content."""
    columns = [p.column for p in profiles]
    used = [p for p in profiles if p.filled]
    n = len(rows)
    cache: dict[int, Codes] = {}

    def codes(c: Column) -> Codes:
        if c.index not in cache:
            cache[c.index] = encode(c, (r[c.index] if c.index < len(r) else None for r in rows))
        return cache[c.index]

    headed = any(c.header.strip() for c in columns)
    # the profile counts the first PROFILE_ROWS rows only; the codes check every row
    row_numbers = {p.column.index for p in used
                   if p.numeric and p.distinct == p.filled and not _TIME_WORDS.match(p.column.name)
                   and row_number_header(p.column, headed=headed) and is_row_number(codes(p.column), n, fmt)}
    given_ids = _named_ids(columns, series, filename) if series is not None else None

    def id_candidates(time_col: Column) -> list[Codes]:
        out = []
        for p in used:
            c = p.column
            if c.index == time_col.index or c.index in row_numbers or p.distinct < 2:
                continue
            text_like = p.text >= 0.9 * p.filled
            if not (text_like or (p.numeric and p.distinct <= max(1, p.filled // 2))):
                continue
            k = codes(c)
            if k.distinct < 2 or k.distinct > max(1, k.filled // 2):
                continue
            if text_like or whole_numbers(k, fmt):
                out.append((0 if _SERIES_WORDS.match(c.name) else 1 if text_like else 2, c.index, k))
        return [k for *_, k in sorted(out, key=lambda x: (x[0], x[1]))]

    def grouping_for(time_col: Column) -> Grouping:
        if given_ids is not None:
            return grouping(tuple(codes(c) for c in given_ids), codes(time_col), n)
        return best_grouping(codes(time_col), id_candidates(time_col), n, min_times=2)

    notes: list[str] = []
    if time is not None:
        time_col = find_column(columns, time, "time", filename)
        split = grouping_for(time_col)
        time_reason = "chosen"
    else:
        named = [p for p in used if _TIME_WORDS.match(p.column.name) and p.timelike]  # never row numbers
        clocks = [p for p in used if p.time and p.time >= 0.5 * p.filled]
        numeric = [p for p in used if p.timelike and p.column.index not in row_numbers]
        last_resort = [p for p in used if p.timelike]
        tiers = [(named, "its header names a time"), (clocks, "it holds clock times or dates"),
                 (numeric, "it is the numeric column that runs through each series"),
                 (last_resort, "it is the only numeric column")]
        tier, why = next(((t, w) for t, w in tiers if t), ([], ""))
        if not tier:
            raise ImportFailure(f"{filename}: no column of numbers, clock times or dates found for the time")
        best: tuple[tuple[float, ...], ColumnProfile, Grouping] | None = None
        for rank, p in enumerate(tier[:6]):
            g = grouping_for(p.column)
            score = (float(g.unique), g.median_times, -rank)
            if best is None or score > best[0]:
                best = (score, p, g)
            if rank == 0 and g.unique and not g.ids:
                break  # times that never repeat: a single series or a wide file
        assert best is not None
        time_col, split = best[1].column, best[2]
        time_reason = why + ("" if len(tier) == 1 or not split.ids else ", and each time occurs once within a series")
        notes.append(f"time column {time_col.label!r} chosen: {time_reason}")
    ids = given_ids if given_ids is not None else tuple(k.column for k in split.ids)
    id_reason = "chosen" if given_ids is not None else (
        f"its values repeat over the times; within each of its {split.series} series every time occurs once"
        if split.unique else
        f"its values repeat over the times ({split.series} series); times repeat within a series: replicates")
    if ids:
        label = " and ".join(repr(c.label) for c in ids)
        notes.append(f"{label} {'name' if len(ids) > 1 else 'names'} the series ({split.series} series); "
                     "another id column can be chosen")
    groups = split.groups
    taken = {time_col.index} | {c.index for c in ids}

    conditions: list[Column] = []
    covariates: list[Column] = []
    measurements: list[Column] = []
    unused: list[tuple[Column, str]] = []
    for p in used:
        c = p.column
        if c.index in taken or c.index in row_numbers:
            continue
        text_like = p.text >= p.filled / 2
        if ids and constant_within(codes(c), groups):
            (conditions if text_like or whole_numbers(codes(c), fmt) else covariates).append(c)
        elif not ids and text_like and codes(c).distinct == 1:
            conditions.append(c)
        elif p.numeric:
            measurements.append(c)
        else:
            unused.append((c, "text that varies within a series" if ids else "text"))

    if value is not None:
        wanted = [value] if isinstance(value, str) else list(value)
        values = [find_column(columns, v, "values", filename) for v in wanted]
        for v in values:
            if v.index in taken:
                raise ImportFailure(f"{filename}: column {v.label!r} cannot be both the time (or series) and a value")
    else:
        values = list(measurements)
        if not values:
            raise ImportFailure(
                f"{filename}: no numeric value column found besides the time column {time_col.label!r}"
                + (f" and the id column(s) {', '.join(repr(c.label) for c in ids)}" if ids else "")
            )
        if ids and len(values) > 1:
            notes.append(
                f"{len(values)} measurement columns ({', '.join(repr(v.label) for v in values)}): "
                f"{values[0].label!r} read; another can be chosen as the value column"
            )
            values = values[:1]
    chosen = {v.index for v in values}
    if conditions or covariates:
        kinds = [f"{c.label!r} (condition)" for c in conditions] + [f"{c.label!r} (covariate)" for c in covariates]
        notes.append(f"constant within each series: {', '.join(kinds)}")
    for c, why in unused:
        notes.append(f"column {c.label!r} ({why}) is not used")
    numbering = [columns[i] for i in sorted(row_numbers - chosen - {time_col.index})]
    for c in numbering:
        notes.append(f"column {c.label!r} numbers the rows and is not used")
    layout = "wide" if len(values) > 1 and not ids else "long"
    if layout == "wide":
        notes.append(f"wide layout: {len(values)} value columns read as separate series")
    if not next(p for p in profiles if p.column.index == time_col.index).filled:
        raise ImportFailure(f"{filename}: the time column {time_col.label!r} is empty")
    empty = tuple(p.column for p in profiles if not p.filled and p.column.index not in taken | chosen)

    placed: list[tuple[Column, str, str]] = [(time_col, "time", time_reason)]
    placed += [(c, "id", id_reason) for c in ids]
    placed += [(c, "condition", f"constant within every series ({codes(c).distinct} value(s))") for c in conditions]
    placed += [(c, "covariate", "a number constant within every series") for c in covariates]
    placed += [(v, "value", "chosen" if value is not None else
                "varies within the series" + (": the first such column" if ids and len(measurements) > 1 else ""))
               for v in values]
    placed += [(c, "measurement", "varies within the series; can be chosen as the value column")
               for c in measurements if c.index not in chosen]
    placed += [(c, "row-number", "whole numbers, once each: the rows' numbers") for c in numbering]
    placed += [(c, "unused", why) for c, why in unused]
    placed += [(c, "empty", "no values") for c in empty]
    roles = [ColumnRole(c.label, role, why) for c, role, why in sorted(placed, key=lambda x: x[0].index)]
    return Layout(time_col, tuple(values), tuple(ids), layout, tuple(notes), tuple(conditions), tuple(covariates),
                  tuple(measurements), empty, tuple(roles))
