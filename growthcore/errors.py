"""The one exception family for bad input. Fits never raise: they report a status."""

from __future__ import annotations


class GrowthcoreInputError(ValueError):
    """Input that cannot be used, with a message that says what was expected and what was given."""


class ExpressionError(GrowthcoreInputError):
    """A user-written rate term outside the grammar; ``position`` is the 0-based offending column."""

    def __init__(self, message: str, text: str, position: int) -> None:
        pointer = text + "\n" + " " * position + "^"
        super().__init__(f"{message} at character {position + 1}:\n{pointer}")
        self.reason = message
        self.text = text
        self.position = position


class ImportFailure(GrowthcoreInputError):
    """Nothing usable could be read from a file; the message names file, row and column."""
