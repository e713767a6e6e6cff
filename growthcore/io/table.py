"""The grid of cells that every reader produces, with the row numbers the user sees."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

#: Most trimmed text cells remembered per table.
MAX_PADDED = 10_000


def padded_cells(rows: Sequence[Sequence[object]]) -> set[tuple[int, int]]:
    """(row index, column) of text cells (not numbers) that had spaces around them, which trimming
    takes away, up to MAX_PADDED."""
    found: set[tuple[int, int]] = set()
    for i, r in enumerate(rows):
        for j, c in enumerate(r):
            if not isinstance(c, str):
                continue
            s = c.strip()
            if len(s) != len(c) and s and not (s[0].isdigit() or s[0] in "+-."):
                found.add((i, j))
                if len(found) >= MAX_PADDED:
                    return found
    return found


@dataclass
class Table:
    """Cells row by row, each row with its 1-based row number in the source.

    ``formula_at(row, col)`` gives the formula behind a blank workbook cell, when it has one
    (a formula whose result was never saved), so that the report can say so. ``padded`` holds
    (row index, column) of text cells whose surrounding spaces were trimmed (the first
    ``MAX_PADDED``), so that ids and conditions which differ only by them can be named when they are merged.
    """

    rows: list[list[object]]
    row_numbers: list[int]
    format: str
    encoding: str | None = None
    delimiter: str | None = None
    sheet: str | None = None
    notes: list[str] = field(default_factory=list)
    formula_at: Callable[[int, int], str | None] | None = None
    padded: set[tuple[int, int]] = field(default_factory=set)

    @property
    def width(self) -> int:
        return max((len(r) for r in self.rows), default=0)
