"""Times on the axis of a series as a reader expects them: a date or clock time where the axis is
one, a year on a calendar-year axis, and t = … otherwise; durations stay durations.

Derived times such as the inflection or the end of the lag phase are points on the time axis, not
spans: on a census in calendar years "lag 1943 yr" reads as a duration, "year 1943" does not.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Sequence

#: Seconds in each time unit the importer converts dates and clock times to.
UNIT_SECONDS = {"s": 1.0, "min": 60.0, "h": 3600.0, "d": 86400.0, "yr": 365.25 * 86400.0}
#: Derived quantities that are points on the time axis (the rest of the times are durations).
TIME_POINTS = ("inflection_time", "lag_time")
_ORIGIN = re.compile(r"holds (?:dates|date-times): elapsed time in (\w+) from the first observation \(([^)]+)\)")


def is_time_point(name: str) -> bool:
    """Whether a derived quantity (by its key) is a moment on the time axis rather than a duration."""
    return name in TIME_POINTS or name.startswith("time_to_")


def calendar_origin(notes: Sequence[str]) -> dt.datetime | None:
    """The moment elapsed times count from, when the import converted dates or date-times."""
    for note in notes:
        m = _ORIGIN.search(note)
        if m:
            try:
                return dt.datetime.fromisoformat(m.group(2))
            except ValueError:
                return None
    return None


def is_calendar_years(t: Sequence[float], unit: str) -> bool:
    """Plain numbers in years that are calendar years (a census from 1790 on), not elapsed years."""
    return unit == "yr" and len(t) > 0 and min(t) >= 1000.0


def time_point_text(t: float | None, unit: str, *, origin: dt.datetime | None = None,
                    calendar_years: bool = False) -> str:
    """A moment on the axis: a date-time from ``origin``, a year, or ``t = …`` in the axis unit."""
    if t is None or not math.isfinite(t):
        return "–"
    if origin is not None and unit in UNIT_SECONDS:
        try:
            moment = origin + dt.timedelta(seconds=t * UNIT_SECONDS[unit])
        except OverflowError:
            return f"t = {t:.4g} {unit} after {origin.isoformat(sep=' ')}"
        clock = origin.time() != dt.time(0) or unit in ("s", "min", "h")
        return moment.isoformat(sep=" ", timespec="minutes") if clock else moment.date().isoformat()
    if calendar_years:
        return f"year {t:.1f}"
    return f"t = {t:.4g} {unit}".rstrip()
