"""Delimited text: finding the delimiter and reading the cells with their row numbers."""

from __future__ import annotations

import csv
import io
import re
from collections import Counter

import numpy as np

from growthcore.errors import ImportFailure
from growthcore.io.table import Table, padded_cells
from growthcore.limits import DEFAULT, Limits

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


#: A quoted field (a doubled quote inside one splits it in two, which removes the same characters).
_QUOTED = re.compile(r'"[^"]*"')


def check_size(text: str, delimiter: str, filename: str, limits: Limits = DEFAULT) -> None:
    """Refuse text with more cells or columns than ``limits`` allows, before any cell is made.

    Counts delimiters and line ends outside quotes in one vectorised pass, so the cost is that
    of reading the bytes, however many fields a line holds. A blank line counts as one cell.
    """
    plain = _QUOTED.sub("", text) if '"' in text else text
    # bytes of a multi-byte UTF-8 character are all >= 0x80, so ASCII marks are found by byte value
    buf = np.frombuffer(plain.encode("utf-8", "surrogatepass"), dtype=np.uint8)
    newline = 10 if (buf == 10).any() or not (buf == 13).any() else 13  # old Mac files end lines in CR alone
    ends = np.flatnonzero(buf == newline)
    lines = ends.size + (1 if buf.size and buf[-1] != newline else 0)
    delims = np.flatnonzero(buf == ord(delimiter))
    cells = int(lines + delims.size)
    if cells > limits.max_cells:
        raise ImportFailure(
            f"{filename}: the file holds about {cells:,} cells, over the limit of {limits.max_cells:,} cells: refused "
            "(split the file or keep only the columns to fit)"
        )
    if delims.size:
        per_line = np.bincount(np.searchsorted(ends, delims), minlength=1)
        worst = int(per_line.argmax())
        width = int(per_line[worst]) + 1
        if width > limits.max_columns:
            raise ImportFailure(
                f"{filename}: row {worst + 1} holds {width:,} fields, over the limit of {limits.max_columns:,} "
                "columns: refused"
            )


def read_text_table(text: str, filename: str, encoding: str, limits: Limits = DEFAULT) -> Table:
    """Cells of a delimited text file; row numbers count every line as a spreadsheet would.

    Refuses (before reading any cell) a file over the cell or column limit of ``limits``.
    """
    delimiter = detect_delimiter(text)
    check_size(text, delimiter or ",", filename, limits)
    notes: list[str] = []
    if delimiter is None:
        notes.append("no delimiter found: every line is one cell")
        delimiter_used = ","
    else:
        delimiter_used = delimiter
    try:
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter_used, quotechar='"')
        raw = list(reader)
    except csv.Error as exc:
        raise ImportFailure(f"{filename}: the text cannot be split into cells ({exc})") from None
    cells: list[list[object]] = [[(c.strip() or None) for c in r] for r in raw]
    return Table(
        rows=cells,
        row_numbers=list(range(1, len(cells) + 1)),
        format="csv",
        encoding=encoding,
        delimiter=delimiter,
        notes=notes,
        padded=padded_cells(raw) if _SPACE_BY_CELL.search(text) else set(),
    )


#: A space or tab next to a delimiter or a line end: only then can a cell have been trimmed.
_SPACE_BY_CELL = re.compile(r"[ \t][,;|\t\r\n]|[,;|\n][ \t]|^[ \t]", re.MULTILINE)
