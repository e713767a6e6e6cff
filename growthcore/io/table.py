"""The grid of cells that every reader produces, with the row numbers the user sees."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

#: Most trimmed text cells remembered per table.
MAX_PADDED = 10_000


@dataclass
class Table:
    """Cells row by row, each row with its 1-based row number in the source.

    ``formula_at(row, col)`` gives the formula behind a blank workbook cell, when it has one
    (a formula whose result was never saved), so that the report can say so. ``padded`` holds
    (row index, column) of text cells whose surrounding spaces were trimmed (the first
    ``MAX_PADDED``), so that ids which differ only by them can be named when they are merged.
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
