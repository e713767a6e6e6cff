"""Reading fit records back: checks, the series and fit requests they hold, and recomputation.

A record is refused, with a message that says what is wrong, when it is not JSON (or is cut
short), is not a growthcore fit record, has a format version this package does not know, fails its
integrity hash, or breaks the shipped JSON Schema.
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from growthcore import __version__
from growthcore.budget import BudgetExceeded
from growthcore.compare import compare, comparison_notes
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import FitResult, fit
from growthcore.io.report import ImportReport
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.record import FORMAT, DataSource, build_record, integrity_problem, seal
from growthcore.schemas import available_versions, record_errors

#: Records larger than this are refused before parsing; every input the import accepts makes a
#: smaller record (see growthcore.limits).
MAX_RECORD_BYTES = DEFAULT_LIMITS.max_record_bytes
#: Relative tolerance for "the same number" when a record is recomputed. Optimiser stopping rules
#: (not round-off alone) set how closely a refit can repeat, so this is looser than machine epsilon.
RTOL = 1e-6
#: Fit members that describe the fit rather than hold numbers to repeat.
_TEXT_KEYS = frozenset({"message", "notes", "equation", "description", "unit", "warnings"})
#: How a fit reached its optimum, not what the optimum is: not compared (older records lack them).
_HOW_KEYS = frozenset({"solver", "nfev"})
#: Members written by the steps after the fit (growthcore.workflow); a plain refit does not
#: remake them.
LATER_KEYS = frozenset({"dynamics", "forecast", "forecast_notes", "bootstrap", "derived_intervals", "ci95_bootstrap"})


class RecordError(GrowthcoreInputError):
    """A fit record that cannot be used; ``problems`` lists each thing found wrong."""

    def __init__(self, name: str, problems: Sequence[str]) -> None:
        self.name = name
        self.problems = tuple(problems)
        more = len(self.problems) - 1
        head = f"{name}: {self.problems[0]}" + (f" (and {more} more problem{'s' if more > 1 else ''})" if more else "")
        rest = "" if not more else "\n" + "\n".join(f"  - {p}" for p in self.problems[1:])
        super().__init__(head + rest)

    def __reduce__(self) -> tuple[Any, ...]:
        # rebuilt from its own arguments when it crosses a process boundary (a worker reads the record)
        return (type(self), (self.name, self.problems))


def _no_constants(token: str) -> float:
    raise ValueError(f"{token} is not a JSON number")


def _unclosed(text: str) -> bool:
    """True when the text ends inside a string or with brackets still open: a cut-off file."""
    depth, in_string, escaped = 0, False, False
    for ch in text:
        if in_string:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                in_string = False
        elif ch == '"':
            in_string = True
        elif ch in "{[":
            depth += 1
        elif ch in "}]":
            depth -= 1
    return in_string or depth > 0


def parse_record(text: str | bytes, *, name: str = "record") -> dict[str, Any]:
    """Parse and check a record; raise :class:`RecordError` naming what is wrong.

    Checks, in order: UTF-8 text, JSON (a cut-off file is named as such), the format name, a
    known format version, the integrity hash and the schema of that version.
    """
    if isinstance(text, bytes):
        try:
            text = text.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise RecordError(name, [f"is not UTF-8 text (byte {exc.start}): a fit record is a JSON file"]) from None
    if not text.strip():
        raise RecordError(name, ["is empty"])
    try:
        record = json.loads(text, parse_constant=_no_constants)
    except json.JSONDecodeError as exc:
        cut = exc.pos >= len(text.rstrip()) or _unclosed(text)
        what = "is cut short (the JSON ends early; was the file truncated?)" if cut else "is not valid JSON"
        raise RecordError(name, [f"{what}: {exc.msg} at line {exc.lineno}, column {exc.colno}"]) from None
    except (ValueError, RecursionError) as exc:
        raise RecordError(name, [f"is not valid JSON: {exc}"]) from None
    check_record(record, name=name)
    return record


def check_record(record: Any, *, name: str = "record") -> None:
    """Raise :class:`RecordError` unless ``record`` (parsed JSON) is a sound record of a known version."""
    if not isinstance(record, dict):
        raise RecordError(name, [f"holds a JSON {type(record).__name__}, not an object: not a growthcore fit record"])
    if record.get("format") != FORMAT:
        raise RecordError(
            name, [f"is not a growthcore fit record (format is {record.get('format')!r}, expected {FORMAT!r})"])
    version = record.get("format_version")
    known = available_versions()
    if isinstance(version, bool) or not isinstance(version, int) or version not in known:
        newer = isinstance(version, int) and not isinstance(version, bool) and version > max(known)
        hint = f"; it was written by a newer growthcore than {__version__}" if newer else ""
        raise RecordError(name, [f"has format version {version!r}, which growthcore {__version__} cannot read "
                                 f"(it reads version {', '.join(map(str, known))}){hint}"])
    problems = []
    tampered = integrity_problem(record)
    if tampered:
        problems.append(tampered)
    problems.extend(record_errors(record, version))
    if problems:
        raise RecordError(name, problems)


def load_record(path: str | os.PathLike[str]) -> dict[str, Any]:
    """Read and check the record file at ``path``."""
    name = os.fspath(path)
    try:
        size = os.path.getsize(path)
        if size > MAX_RECORD_BYTES:
            raise RecordError(name, [f"is {size} bytes; records over {MAX_RECORD_BYTES} bytes are refused"])
        with open(path, "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise RecordError(name, [f"cannot be read: {exc.strerror or exc}"]) from None
    return parse_record(raw, name=name)


@dataclass(frozen=True)
class Reopened:
    """What a record holds, as engine objects: the series, its source and each fit's arguments."""

    record: Mapping[str, Any]
    series: Series
    source: DataSource
    import_report: ImportReport | None
    settings: Mapping[str, Any]
    requests: tuple[Mapping[str, Any], ...]


def series_from_record(record: Mapping[str, Any], *, name: str = "record") -> Series:
    """The series of a checked record: points, units, columns, exclusions with their reasons."""
    data = record["data"]
    points = data["points"]
    if len(points) > DEFAULT_LIMITS.max_points:
        raise RecordError(name, [f"data.points holds {len(points):,} points, over the limit of "
                                 f"{DEFAULT_LIMITS.max_points:,} points: refused"])
    t = np.array([float(pt["t"]) for pt in points])
    p = np.array([math.nan if pt["p"] is None else float(pt["p"]) for pt in points])
    excluded = {i: str(pt["reason"]) or "left out" for i, pt in enumerate(points)
                if not pt["used"] and pt["p"] is not None}
    rows = tuple(int(pt["row"]) for pt in points) if all("row" in pt for pt in points) else None
    try:
        series = Series(t, p, name=str(data.get("name", "series")), time_unit=data["time"]["unit"],
                        value_unit=data["value"]["unit"], time_column=data["time"]["column"],
                        value_column=data["value"]["column"], excluded=excluded, rows=rows)
    except GrowthcoreInputError as exc:
        raise RecordError(name, [f"data.points: {exc}"]) from None
    for i, pt in enumerate(points):
        if bool(series.used[i]) != bool(pt["used"]):
            raise RecordError(name, [f"data.points[{i}]: marked used but its value is missing"])
    return series


def reopen(record: Mapping[str, Any], *, name: str = "record") -> Reopened:
    """Engine objects from a checked record (see :func:`parse_record`)."""
    series = series_from_record(record, name=name)
    data = record["data"]
    report = data.get("import_report")
    try:
        import_report = ImportReport.from_dict(report) if report is not None else None
    except (KeyError, TypeError, ValueError) as exc:
        raise RecordError(name, [f"data.import_report cannot be read: {exc}"]) from None
    source = DataSource(str(data["source"]), str(data["sha256"]), report, dict(data.get("extra", {})))
    if len(record["fits"]) > DEFAULT_LIMITS.max_fits:
        raise RecordError(name, [f"holds {len(record['fits'])} fits, over the limit of {DEFAULT_LIMITS.max_fits} "
                                 "fits in one record: refused"])
    requests = tuple(dict(f["request"]) for f in record["fits"])
    return Reopened(record, series, source, import_report, dict(record.get("settings", {})), requests)


def refit(series: Series, request: Mapping[str, Any]) -> FitResult:
    """Repeat one fit from its request; an argument the engine refuses gives a failed result."""
    from growthcore.fit.result import failed

    try:
        return fit(series, request["model"], method=request["method"], error=request["error"],
                   capacity=request.get("capacity"), fixed=request.get("fixed") or None,
                   start=request.get("start") or None, terms=tuple(request.get("terms", ())),
                   profile=bool(request.get("profile", True)), time_origin=request.get("time_origin"))
    except BudgetExceeded:
        raise  # out of time is not a refusal of this fit
    except GrowthcoreInputError as exc:
        return failed(str(request["model"]), str(request["method"]), str(request["error"]), str(exc))


def rebuild(reopened: Reopened, fits: Sequence[FitResult]) -> dict[str, Any]:
    """A new sealed record of ``fits`` on the reopened data, with the comparison table."""
    record = build_record(reopened.series, fits, source=reopened.source, settings=reopened.settings,
                          requests=list(reopened.requests))
    record["comparison"] = {"rows": [r.to_dict() for r in compare(fits)], "notes": comparison_notes(fits)}
    return seal(record)


@dataclass(frozen=True)
class Difference:
    """One number that came out differently on recomputation."""

    where: str
    stored: Any
    recomputed: Any

    def __str__(self) -> str:
        return f"{self.where}: stored {_show(self.stored)}, recomputed {_show(self.recomputed)}"


def _show(v: Any) -> str:
    return f"{v:.10g}" if isinstance(v, float) else json.dumps(v) if not isinstance(v, str) else v


@dataclass(frozen=True)
class Recomputation:
    """The outcome of repeating every fit of a record."""

    fits: tuple[FitResult, ...]
    record: dict[str, Any]
    differences: tuple[Difference, ...]
    not_recomputed: tuple[str, ...] = field(default_factory=tuple)

    @property
    def reproduced(self) -> bool:
        return not self.differences


def _close(a: float, b: float, atol: float, rtol: float) -> bool:
    return abs(a - b) <= atol + rtol * max(abs(a), abs(b))


def differences(stored: Any, new: Any, where: str = "", *, atol: float = 0.0, rtol: float = RTOL,
                limit: int = 50, skip: frozenset[str] = frozenset()) -> list[Difference]:
    """Numbers, flags and shapes that differ between two record parts (text is not compared)."""
    out: list[Difference] = []

    def walk(a: Any, b: Any, at: str) -> None:
        if len(out) >= limit:
            return
        if isinstance(a, Mapping) and isinstance(b, Mapping):
            for key in a:
                if key in _TEXT_KEYS or key in _HOW_KEYS or key in skip:
                    continue
                if key not in b:
                    out.append(Difference(f"{at}.{key}", a[key], "(absent)"))
                else:
                    walk(a[key], b[key], f"{at}.{key}")
            for key in b:
                if key not in a and key not in _TEXT_KEYS and key not in _HOW_KEYS and key not in skip:
                    out.append(Difference(f"{at}.{key}", "(absent)", b[key]))
        elif isinstance(a, list) and isinstance(b, list):
            if len(a) != len(b):
                out.append(Difference(f"{at} (length)", len(a), len(b)))
                return
            for i, (x, y) in enumerate(zip(a, b, strict=True)):
                walk(x, y, f"{at}[{i}]")
        elif isinstance(a, bool) or isinstance(b, bool) or isinstance(a, str) or isinstance(b, str):
            if a != b:
                out.append(Difference(at, a, b))
        elif isinstance(a, (int, float)) and isinstance(b, (int, float)):
            if not _close(float(a), float(b), atol, rtol):
                out.append(Difference(at, a, b))
        elif a != b:
            out.append(Difference(at, a, b))

    walk(stored, new, where)
    return out


def recompute(record: Mapping[str, Any], *, name: str = "record", rtol: float = RTOL,
              extend: Callable[[Series, Sequence[FitResult], dict[str, Any]], None] | None = None) -> Recomputation:
    """Repeat every fit of a checked record and list what differs beyond ``rtol``.

    ``extend(series, fits, record)`` remakes the members added after fitting (dynamics, bootstrap,
    forecasts) in the new record; without it those members are listed as not recomputed. Absolute
    differences below ``1e-9`` × the largest observed value also count as equal, so that residuals
    near zero are not judged by their relative change.
    """
    reopened = reopen(record, name=name)
    fits = tuple(refit(reopened.series, r) for r in reopened.requests)
    new = rebuild(reopened, fits)
    if extend is not None:
        extend(reopened.series, fits, new)
        seal(new)
    skip = frozenset() if extend is not None else LATER_KEYS
    finite = reopened.series.p[np.isfinite(reopened.series.p)]
    atol = 1e-9 * (float(np.max(np.abs(finite))) if finite.size else 1.0)
    found: list[Difference] = []
    later: list[str] = []
    for i, (old_fit, new_fit) in enumerate(zip(record["fits"], new["fits"], strict=True)):
        label = f"fits[{i}] {old_fit['model']} ({old_fit['method']}, {old_fit['error']})"
        old_core = {k: v for k, v in old_fit.items() if k != "request"}
        new_core = {k: v for k, v in new_fit.items() if k != "request"}
        found.extend(differences(old_core, new_core, label, atol=atol, rtol=rtol, skip=skip))
        later.extend(f"{label}.{k}" for k in sorted(skip & set(old_fit)))
    if "comparison" in record:
        found.extend(differences(record["comparison"], new["comparison"], "comparison",
                                 atol=atol, rtol=rtol, skip=skip))
    return Recomputation(fits, new, tuple(found), tuple(later))


def fit_from_dict(d: Mapping[str, Any]) -> FitResult:
    """The fit result a record's fit entry describes, without fitting again (see FitResult.from_dict)."""
    return FitResult.from_dict(d)


def fits_from_record(record: Mapping[str, Any]) -> list[FitResult]:
    """Every fit of a checked record as a result object (no fitting)."""
    return [fit_from_dict(d) for d in record["fits"]]
