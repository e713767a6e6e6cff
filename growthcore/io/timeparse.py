"""Time cells: plain numbers, elapsed clock times, calendar dates and date-times.

Clock times (``0:15:00``, ``36:00:00``, ``1:02:30:00`` as days:h:m:s) are durations since the
start of a run and keep their value. Dates and date-times become the elapsed time since the
earliest observation. Date-times with a UTC offset are converted exactly; date-times without one
are taken as written on the local clock (the report says so, because across a daylight-saving
change such an elapsed time is off by the shift).
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

from growthcore.io.numbers import NumberFormat, is_missing, parse_number, plain_number_column

#: Seconds in each time unit the import can convert to; ``yr`` is the Julian year of 365.25 d.
UNIT_SECONDS: dict[str, float] = {
    "s": 1.0,
    "min": 60.0,
    "h": 3600.0,
    "d": 86400.0,
    "wk": 604800.0,
    "yr": 365.25 * 86400.0,
}

_UNIT_ALIASES: dict[str, str] = {
    "s": "s", "sec": "s", "secs": "s", "second": "s", "seconds": "s",
    "min": "min", "mins": "min", "minute": "min", "minutes": "min", "m": "min",
    "h": "h", "hr": "h", "hrs": "h", "hour": "h", "hours": "h",
    "d": "d", "day": "d", "days": "d",
    "wk": "wk", "week": "wk", "weeks": "wk",
    "yr": "yr", "yrs": "yr", "y": "yr", "a": "yr", "year": "yr", "years": "yr",
}

_DURATION_PREFIX = re.compile(r"(?P<days>\d+)\s*(?:days?,?\s*|d\s+|\.)")
_DMY = re.compile(
    r"(?P<a>\d{1,2})(?P<sep>[./-])(?P<b>\d{1,2})(?P=sep)(?P<y>\d{4})"
    r"(?:[ T]+(?P<H>\d{1,2}):(?P<M>\d{2})(?::(?P<S>\d{2}(?:\.\d+)?))?)?"
)
_YMD_SLASH = re.compile(
    r"(?P<y>\d{4})/(?P<m>\d{1,2})/(?P<d>\d{1,2})"
    r"(?:[ T]+(?P<H>\d{1,2}):(?P<M>\d{2})(?::(?P<S>\d{2}(?:\.\d+)?))?)?"
)
_ISO_START = re.compile(r"\d{4}-\d{2}-\d{2}")
# Spreadsheet programs store durations of a day or more in an h:mm:ss cell as a date in the
# 1899/1900 epoch; such a date in a column of clock times is read back as a duration.
_EXCEL_EPOCH = dt.datetime(1899, 12, 30)


def canonical_unit(text: str) -> str | None:
    """The canonical time unit for ``text`` (``hours`` -> ``h``), or None if it is not one."""
    return _UNIT_ALIASES.get(text.strip().lower().rstrip("."))


@dataclass(frozen=True)
class TimeCell:
    """One parsed time cell: ``kind`` is number, duration, date, naive or aware."""

    kind: str
    number: float = 0.0
    moment: dt.datetime | None = None


def parse_duration(text: str) -> float | None:
    """Seconds in an elapsed clock time such as ``0:15:00``, ``36:00:00`` or ``1:02:30:00``."""
    s = text.strip()
    sign = 1.0
    if s[:1] in "+-" and s[:1]:
        sign = -1.0 if s[0] == "-" else 1.0
        s = s[1:].strip()
    days = 0
    m = _DURATION_PREFIX.match(s)
    if m and ":" in s[m.end():]:
        days = int(m.group("days"))
        s = s[m.end():]
    parts = s.split(":")
    if len(parts) == 4 and not days:
        if not parts[0].isdigit():
            return None
        days = int(parts[0])
        parts = parts[1:]
    if len(parts) not in (2, 3):
        return None
    if not all(p.isdigit() for p in parts[:-1]):
        return None
    last = parts[-1].replace(",", ".")
    if not re.fullmatch(r"\d{1,2}(?:\.\d+)?", last):
        return None
    hours = int(parts[0])
    if len(parts) == 2:
        minutes, seconds = float(last), 0.0
    else:
        minutes, seconds = int(parts[1]), float(last)
        if len(parts[1]) != 2:
            return None
    if minutes >= 60 or seconds >= 60 or (days and hours >= 24):
        return None
    return sign * (days * 86400.0 + hours * 3600.0 + minutes * 60.0 + seconds)


def _datetime_from_match(m: re.Match[str], y: int, mo: int, d: int) -> dt.datetime | None:
    hour = int(m.group("H") or 0)
    minute = int(m.group("M") or 0)
    second = float(m.group("S") or 0.0)
    try:
        return dt.datetime(y, mo, d, hour, minute) + dt.timedelta(seconds=second)
    except ValueError:
        return None


def parse_calendar(text: str, day_first: bool = True) -> TimeCell | None:
    """A date or date-time in ISO 8601, ``dd.mm.yyyy``, ``dd/mm/yyyy`` (or month first) form."""
    s = text.strip()
    if _ISO_START.match(s):
        iso = s[:-1] + "+00:00" if s.endswith(("Z", "z")) else s
        try:
            value = dt.datetime.fromisoformat(iso)
        except ValueError:
            return None
        if value.tzinfo is not None:
            return TimeCell("aware", moment=value)
        is_date = len(s) == 10
        return TimeCell("date" if is_date else "naive", moment=value)
    m = _YMD_SLASH.fullmatch(s)
    if m:
        moment = _datetime_from_match(m, int(m.group("y")), int(m.group("m")), int(m.group("d")))
        if moment is None:
            return None
        return TimeCell("naive" if m.group("H") else "date", moment=moment)
    m = _DMY.fullmatch(s)
    if m:
        a, b = int(m.group("a")), int(m.group("b"))
        day, month = (a, b) if day_first else (b, a)
        moment = _datetime_from_match(m, int(m.group("y")), month, day)
        if moment is None:
            return None
        return TimeCell("naive" if m.group("H") else "date", moment=moment)
    return None


def slash_date_order(texts: Sequence[str]) -> bool | None:
    """True for day-first, False for month-first, None when no cell decides (``05/06/2024``)."""
    for s in texts:
        m = _DMY.fullmatch(s.strip())
        if m:
            a, b = int(m.group("a")), int(m.group("b"))
            if a > 12 >= b:
                return True
            if b > 12 >= a:
                return False
    return None


def parse_time_cell(value: object, fmt: NumberFormat, day_first: bool = True) -> TimeCell | str | None:
    """A TimeCell, None for a blank, or a string saying why the cell is not a time."""
    if value is None:
        return None
    if isinstance(value, bool):
        return f"not a time: {value!r}"
    if isinstance(value, (int, float)):
        x = float(value)
        if x != x or abs(x) == float("inf"):
            return "not a finite number"
        return TimeCell("number", number=x)
    if isinstance(value, dt.datetime):
        return TimeCell("aware" if value.tzinfo else "naive", moment=value)
    if isinstance(value, dt.date):
        return TimeCell("date", moment=dt.datetime(value.year, value.month, value.day))
    if isinstance(value, dt.time):
        of_day = value.hour * 3600 + value.minute * 60 + value.second + value.microsecond / 1e6
        return TimeCell("duration", number=float(of_day))
    if isinstance(value, dt.timedelta):
        return TimeCell("duration", number=value.total_seconds())
    text = str(value).strip()
    if is_missing(text):
        return None
    number = parse_number(text, fmt)
    if number is not None:
        return TimeCell("number", number=number)
    seconds = parse_duration(text)
    if seconds is not None:
        return TimeCell("duration", number=seconds)
    cal = parse_calendar(text, day_first)
    if cal is not None:
        return cal
    return f"not a number, clock time or date: {text!r}"


@dataclass
class TimeColumn:
    """A time column turned into elapsed numbers: ``values[i]`` is None where ``reasons[i]`` says why."""

    values: list[float | None]
    reasons: list[str]
    unit: str
    kind: str
    notes: list[str] = field(default_factory=list)


_KIND_WORDS = {
    "number": "numbers",
    "duration": "clock times",
    "calendar": "dates",
}


def midnight_wraps(times: Sequence[float], day: float) -> list[int] | None:
    """Positions where clock times of day pass midnight, or None when the times are not such a run.

    Times of day (all within [0, day)) that fall at some rows and rise everywhere else are read as
    passing midnight there when adding a day at each fall makes them increase with steps no longer
    than three times the usual one; shuffled rows almost never fit that pattern.
    """
    if len(times) < 3 or not all(0.0 <= v < day for v in times):
        return None
    falls = [i for i in range(1, len(times)) if times[i] < times[i - 1]]
    rises = [times[i] - times[i - 1] for i in range(1, len(times)) if times[i] > times[i - 1]]
    if not falls or not rises:
        return None
    usual = sorted(rises)[len(rises) // 2]
    for i in falls:
        step = times[i] + day - times[i - 1]
        if not 0.0 < step <= 3.0 * usual:
            return None
    return falls


def convert_time_column(
    cells: Sequence[object],
    fmt: NumberFormat,
    *,
    column: str,
    header_unit: str | None,
    time_unit: str | None,
) -> TimeColumn:
    """Parse a whole time column and express it in one unit.

    The column's kind is the one most of its cells have (numbers, clock times or dates); a cell
    of another kind is left out with a reason rather than guessed at.
    """
    notes: list[str] = []
    quick = plain_number_column(cells) if fmt.decimal == "." else None
    if quick is not None:  # the common case, a column of plain numbers: no cell needs the rules below
        unit, factor = _numeric_unit(header_unit, time_unit, column, notes)
        return TimeColumn([v * factor for v in quick], [""] * len(quick), unit, "number", notes)
    texts = [c for c in cells if isinstance(c, str)]
    order = slash_date_order(texts)
    day_first = True if order is None else order
    parsed = [parse_time_cell(c, fmt, day_first) for c in cells]
    if order is None and any(isinstance(p, TimeCell) and p.kind in ("date", "naive") for p in parsed) and any(
        _DMY.fullmatch(t.strip()) for t in texts
    ):
        notes.append(
            f"dates in column {column!r} could be day/month or month/day: read as day/month/year"
        )
    counts = {"number": 0, "duration": 0, "calendar": 0}
    for p in parsed:
        if isinstance(p, TimeCell):
            counts["calendar" if p.kind in ("date", "naive", "aware") else p.kind] += 1
    kind = max(counts, key=lambda k: counts[k])
    # Durations of a day or more can come back from a workbook as dates near the 1900 epoch.
    if counts["duration"] and counts["calendar"]:
        fixed: list[TimeCell | str | None] = []
        for p in parsed:
            if isinstance(p, TimeCell) and p.kind == "naive" and p.moment is not None and p.moment.year < 1901:
                fixed.append(TimeCell("duration", number=(p.moment - _EXCEL_EPOCH).total_seconds()))
            else:
                fixed.append(p)
        parsed = fixed
        counts = {"number": 0, "duration": 0, "calendar": 0}
        for p in parsed:
            if isinstance(p, TimeCell):
                counts["calendar" if p.kind in ("date", "naive", "aware") else p.kind] += 1
        kind = max(counts, key=lambda k: counts[k])

    values: list[float | None] = []
    reasons: list[str] = []
    if kind == "number":
        unit, factor = _numeric_unit(header_unit, time_unit, column, notes)
        for p in parsed:
            _take(p, "number", lambda c: c.number * factor, values, reasons, kind)
        return TimeColumn(values, reasons, unit, kind, notes)
    if kind == "duration":
        unit = time_unit or "h"
        scale = UNIT_SECONDS[unit]
        notes.append(
            f"column {column!r} holds elapsed clock times (h:mm:ss, or d:h:mm:ss), "
            f"read as durations since the start of the run, in {unit}"
        )
        for p in parsed:
            _take(p, "duration", lambda c: c.number / scale, values, reasons, kind)
        return TimeColumn(values, reasons, unit, kind, notes)

    aware = [p for p in parsed if isinstance(p, TimeCell) and p.kind == "aware"]
    naive = [p for p in parsed if isinstance(p, TimeCell) and p.kind in ("naive", "date")]
    use_aware = len(aware) >= len(naive) and bool(aware)
    wanted = ("aware",) if use_aware else ("naive", "date")
    moments = [p.moment for p in parsed if isinstance(p, TimeCell) and p.kind in wanted and p.moment]
    has_clock = any(m.time() != dt.time(0) for m in moments) if not use_aware else True
    unit = time_unit or ("h" if has_clock else "d")
    scale = UNIT_SECONDS[unit]
    origin = min(moments, key=_instant) if moments else None
    for p in parsed:
        if isinstance(p, TimeCell) and p.kind in wanted and p.moment is not None and origin is not None:
            values.append((_instant(p.moment) - _instant(origin)) / scale)
            reasons.append("")
        elif isinstance(p, TimeCell) and p.kind in ("aware", "naive", "date"):
            values.append(None)
            reasons.append(
                "date-time without a UTC offset in a column where the others have one"
                if use_aware
                else "date-time with a UTC offset in a column where the others have none"
            )
        else:
            _take(p, "calendar", lambda c: 0.0, values, reasons, "calendar")
    if origin is not None:
        notes.append(
            f"column {column!r} holds {'date-times' if has_clock else 'dates'}: elapsed time in {unit} "
            f"from the first observation ({origin.isoformat(sep=' ')})"
        )
        if use_aware:
            notes.append("date-times carry UTC offsets: elapsed times are exact across clock changes")
        elif has_clock:
            notes.append(
                "date-times have no UTC offset: taken as written on the local clock; across a "
                "daylight-saving change the elapsed time is off by the shift (write offsets such as "
                "2024-03-31T03:00+02:00 to make it exact)"
            )
        if unit == "yr":
            notes.append("one year is taken as 365.25 days")
    return TimeColumn(values, reasons, unit, "calendar", notes)


def _instant(moment: dt.datetime) -> float:
    if moment.tzinfo is not None:
        return moment.timestamp()
    # Naive moments are local clock readings: difference them as written, with no zone applied.
    return (moment - dt.datetime(1970, 1, 1)).total_seconds()


def _take(
    p: TimeCell | str | None,
    kind: str,
    convert: Callable[[TimeCell], float],
    values: list[float | None],
    reasons: list[str],
    column_kind: str,
) -> None:
    if p is None:
        values.append(None)
        reasons.append("blank time")
    elif isinstance(p, str):
        values.append(None)
        reasons.append(p)
    elif (p.kind if p.kind in ("number", "duration") else "calendar") == kind:
        values.append(float(convert(p)))
        reasons.append("")
    else:
        found = _KIND_WORDS["calendar" if p.kind in ("date", "naive", "aware") else p.kind]
        values.append(None)
        reasons.append(f"{found[:-1]} in a column of {_KIND_WORDS[column_kind]}")


def _numeric_unit(
    header_unit: str | None, time_unit: str | None, column: str, notes: list[str]
) -> tuple[str, float]:
    """Unit and conversion factor for a column of plain numbers."""
    known = canonical_unit(header_unit) if header_unit else None
    if time_unit is None:
        if known:
            return known, 1.0
        if header_unit:
            notes.append(f"time unit {header_unit!r} from the header of column {column!r} kept as written")
            return header_unit, 1.0
        notes.append(
            f"column {column!r} gives no time unit: times are plain numbers (a time unit can be chosen for them)"
        )
        return "", 1.0
    if known and known != time_unit:
        factor = UNIT_SECONDS[known] / UNIT_SECONDS[time_unit]
        notes.append(f"times converted from {known} (header of column {column!r}) to {time_unit}")
        return time_unit, factor
    if header_unit and not known:
        notes.append(
            f"time unit {header_unit!r} in the header of column {column!r} is not a clock unit: "
            f"numbers taken as {time_unit} as asked"
        )
    elif not header_unit:
        notes.append(f"times in column {column!r} taken as {time_unit} as asked")
    return time_unit, 1.0
