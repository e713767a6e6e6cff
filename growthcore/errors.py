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


class ChoiceNotFound(ImportFailure):
    """A column or sheet asked for is not in the file; ``choice`` says which option named it
    (``time``, ``values``, ``series`` or ``sheet``), so that a caller can drop that choice and read again."""

    def __init__(self, message: str, choice: str) -> None:
        super().__init__(message)
        self.choice = choice

    def __reduce__(self) -> tuple[type, tuple[str, str]]:  # crosses to and from worker processes
        return (type(self), (str(self), self.choice))


class PlanError(GrowthcoreInputError):
    """A choice of an analysis plan out of range. ``settings`` are the names of the choices the message
    speaks of (as a record's settings name them); ``template`` holds ``{0}``, ``{1}``, … where they stand,
    so that the command line can say the same in its option names (see :meth:`named`)."""

    def __init__(self, template: str, *settings: str) -> None:
        self.template = template
        self.settings = settings
        super().__init__(template.format(*settings))

    def named(self, names: dict[str, str]) -> str:
        """The message with each setting called by its name in ``names`` (setting → name)."""
        return self.template.format(*(names.get(s, s) for s in self.settings))

    def __reduce__(self) -> tuple[type, tuple[str, ...]]:  # crosses to and from worker processes
        return (type(self), (self.template, *self.settings))
