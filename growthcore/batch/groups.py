"""Replicate groups: from a condition column of the file, or from a pattern on the series ids."""

from __future__ import annotations

from typing import Mapping, Sequence

from growthcore.batch.pattern import MAX_PATTERN, compile_pattern
from growthcore.errors import GrowthcoreInputError, ImportFailure
from growthcore.io.headers import find_header, make_columns
from growthcore.io.layout import choose_layout, find_column, profile_columns
from growthcore.io.numbers import NumberFormat, detect_number_format, is_missing, thousands_separator
from growthcore.io.sniff import decode_text, detect_format
from growthcore.io.table import Table
from growthcore.io.textsheet import read_text_table
from growthcore.io.xlsxsheet import read_xlsx_table


def groups_from_pattern(names: Sequence[str], pattern: str, *,
                        max_length: int = MAX_PATTERN) -> tuple[dict[str, str], tuple[str, ...]]:
    """Group label of each series id from a regular expression searched in the id.

    The label is the named group ``group`` when the pattern has one, else the first group, else
    the whole match: ``^(.*)_rep\\d+$`` puts ``ctrl_rep1`` and ``ctrl_rep2`` in group ``ctrl``.
    Ids the pattern does not match are in no group; the notes name them. The pattern language is
    the safe subset of :mod:`growthcore.batch.pattern`, matched in time linear in each id.
    """
    rx = compile_pattern(pattern, max_length=max_length)
    out: dict[str, str] = {}
    missed: list[str] = []
    for name in names:
        m = rx.search(name)
        if m is None:
            missed.append(name)
            continue
        if "group" in rx.groupindex:
            label = m.group(rx.groupindex["group"])
        elif rx.groups:
            label = m.group(1)
        else:
            label = m.group(0)
        if label is None or label == "":
            missed.append(name)
        else:
            out[name] = label
    notes = ()
    if missed:
        shown = ", ".join(missed[:10]) + (" ..." if len(missed) > 10 else "")
        notes = (f"{len(missed)} series do not match --pattern {pattern!r} and are in no group: {shown}",)
    return out, notes


def _table(data: bytes, filename: str, sheet: str | None) -> Table:
    if detect_format(data, filename) == "xlsx":
        return read_xlsx_table(data, filename, sheet, max_unpacked=max(10 * len(data), 50_000_000))
    text, encoding, _ = decode_text(data, filename)
    return read_text_table(text, filename, encoding)


def groups_from_column(
    data: bytes,
    filename: str,
    column: str,
    *,
    sheet: str | None = None,
    time: str | None = None,
    value: str | None = None,
    series: str | None = None,
) -> tuple[dict[str, str], tuple[str, ...]]:
    """Group label of each series id from a condition column of a long-layout file.

    The series column is the one the import chooses with the same options. A series whose rows
    name two different conditions is an error that names the rows.
    """
    table = _table(data, filename, sheet)
    strings = [c for r in table.rows[:5000] for c in r if isinstance(c, str)]
    fmt = detect_number_format(strings, table.delimiter if table.format == "csv" else None)
    fmt = NumberFormat(fmt.decimal, thousands_separator(strings, fmt))
    guess = find_header(table.rows, fmt)
    if guess is None:
        raise ImportFailure(f"{filename}: no header row found, so no condition column {column!r}")
    columns, _ = make_columns(table.rows, guess, table.width)
    start = guess.data_start
    rows = [r for r in table.rows[start:] if any(c is not None for c in r)]
    numbers = [table.row_numbers[i] for i in range(start, len(table.rows)) if any(c is not None for c in table.rows[i])]
    cond = find_column(columns, column, "groups", filename)
    layout = choose_layout(profile_columns(columns, rows, fmt), filename, time=time, value=value, series=series)
    if layout.series is None:
        raise GrowthcoreInputError(
            f"{filename}: --groups needs a long layout with a series column; this file has one column per "
            "series (wide layout): group the columns with --pattern instead")
    if layout.series.index == cond.index:
        raise GrowthcoreInputError(
            f"{filename}: column {cond.label!r} is read as the series ids; name the column of series ids "
            "with --series so that it can serve as the condition")
    out: dict[str, str] = {}
    first_row: dict[str, int] = {}
    for row, number in zip(rows, numbers):
        sid = row[layout.series.index] if layout.series.index < len(row) else None
        label = row[cond.index] if cond.index < len(row) else None
        if sid is None or label is None or is_missing(str(label)):
            continue
        key = _text(sid)
        text = _text(label)
        if key in out and out[key] != text:
            raise GrowthcoreInputError(
                f"{filename}: series {key!r} has condition {out[key]!r} at row {first_row[key]} and "
                f"{text!r} at row {number} (column {cond.label!r}); a series must have one condition")
        if key not in out:
            out[key], first_row[key] = text, number
    return out, ()


def _text(cell: object) -> str:
    """A cell as the import names series (same rule), so that ids match."""
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    if hasattr(cell, "isoformat"):
        return cell.isoformat()  # type: ignore[union-attr]
    return str(cell).strip()


def members(groups: Mapping[str, str], names: Sequence[str]) -> dict[str, list[str]]:
    """Series ids per group label, in the order of ``names``."""
    out: dict[str, list[str]] = {}
    for n in names:
        if n in groups:
            out.setdefault(groups[n], []).append(n)
    return out
