"""Delimited text: finding the delimiter and reading the cells with their row numbers."""

from __future__ import annotations

import csv
import io
from collections import Counter

from growthcore.errors import ImportFailure
from growthcore.io.table import Table

#: Delimiters tried, in the order that wins a tie (a semicolon file with decimal commas also
#: splits evenly on commas, so the comma comes last).
DELIMITERS = ("\t", ";", ",", "|")
SAMPLE_CHARS = 200_000
DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", "|": "vertical bar"}


def _rows(text: str, delimiter: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, quotechar='"'))


def detect_delimiter(text: str) -> str | None:
    """The delimiter that splits most lines into the same number (two or more) of fields."""
    sample = text[:SAMPLE_CHARS]
    cut = sample.rfind("\n")
    if len(text) > SAMPLE_CHARS and cut > 0:
        sample = sample[:cut]
    best: tuple[float, int] | None = None
    choice: str | None = None
    for rank, delim in enumerate(DELIMITERS):
        try:
            rows = [r for r in _rows(sample, delim) if any(c.strip() for c in r)]
        except csv.Error:
            continue
        counts = Counter(len(r) for r in rows if len(r) > 1)
        if not counts:
            continue
        hits = max(counts.values())
        score = (round(hits / len(rows), 9), -rank)
        if best is None or score > best:
            best, choice = score, delim
    return choice


def read_text_table(text: str, filename: str, encoding: str) -> Table:
    """Cells of a delimited text file; row numbers count every line as a spreadsheet would."""
    delimiter = detect_delimiter(text)
    notes: list[str] = []
    if delimiter is None:
        notes.append("no delimiter found: every line is one cell")
        delimiter_used = ","
    else:
        delimiter_used = delimiter
    try:
        rows = _rows(text, delimiter_used)
    except csv.Error as exc:
        raise ImportFailure(f"{filename}: the text cannot be split into cells ({exc})") from None
    cells: list[list[object]] = [[(c.strip() or None) for c in r] for r in rows]
    return Table(
        rows=cells,
        row_numbers=list(range(1, len(cells) + 1)),
        format="csv",
        encoding=encoding,
        delimiter=delimiter,
        notes=notes,
    )
