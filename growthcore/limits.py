"""The limits on work that a file, a record or a request may ask for, in one place.

The command line and the server read the same defaults; the server keeps its own copy in its
configuration and checks every request against it, whatever the browser tab sends.

The defaults are chosen so that whatever passes them makes a record under the record size limit:
each fit of a record lists a residual per point (about 170 bytes of indented JSON), so a record
of ``max_fits`` fits of a ``max_points`` series, with an import report whose lists are capped,
stays under ``max_record_bytes`` (tests/test_limits.py measures the bytes per point and fit).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from growthcore.errors import GrowthcoreInputError


@dataclass(frozen=True)
class Limits:
    """Upper bounds checked before the work they bound starts."""

    #: bytes of one input file
    max_bytes: int = 20_000_000
    #: cells of one sheet (a blank line counts as one cell: each row costs work)
    max_cells: int = 2_000_000
    #: columns of one sheet
    max_columns: int = 4_096
    #: points of one series
    max_points: int = 20_000
    #: series of one file
    max_series: int = 5_000
    #: bootstrap resamples of one run
    max_resamples: int = 10_000
    #: forecast steps past the last observation
    max_forecast_steps: int = 10_000
    #: characters of a grouping pattern
    max_pattern: int = 200
    #: fits in one record (forms x methods; every form of the app, with and without +c, by both
    #: methods, is 36)
    max_fits: int = 40
    #: bytes of a fit record
    max_record_bytes: int = 160 * 1024 * 1024
    #: series x points of the longest series in one mixed-effects fit (its arrays are padded to that)
    max_population_cells: int = 1_000_000


DEFAULT = Limits()


def refuse(what: str, given: int, limit: int, *, name: str = "", unit: str = "") -> GrowthcoreInputError:
    """The error for a request over a limit; the message names the limit and the value given."""
    head = f"{name}: " if name else ""
    tail = f" {unit}" if unit else ""
    return GrowthcoreInputError(f"{head}{what} is {given:,}{tail}, over the limit of {limit:,}{tail}: refused")


def check_count(value: object, limit: int, what: str, *, name: str = "", minimum: int = 1) -> int:
    """``value`` as a whole number from ``minimum`` to ``limit``; GrowthcoreInputError otherwise."""
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        x = math.nan
    if not math.isfinite(x) or x != int(x):
        raise GrowthcoreInputError(f"{name + ': ' if name else ''}{what} must be a whole number; got {value!r}")
    n = int(x)
    if n < minimum:
        raise GrowthcoreInputError(f"{name + ': ' if name else ''}{what} must be at least {minimum}; got {n}")
    if n > limit:
        raise refuse(what, n, limit, name=name)
    return n
