"""Options of ``growthcore fit`` for figures, tables and reports written beside the record."""

from __future__ import annotations

import argparse
from typing import Any, Sequence

from growthcore.data import Series
from growthcore.fit import FitResult


def add_options(p: argparse.ArgumentParser) -> None:
    """Add this module's options to the ``fit`` parser."""


def apply(args: argparse.Namespace, series: Series, fits: Sequence[FitResult], record: dict[str, Any]) -> None:
    """Add to ``record`` (and write files) after the fits are made."""
