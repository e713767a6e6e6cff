"""The import report: what was read, what was left out and why, and every assumption made."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from growthcore.data import Series

_DELIMITER_WORDS = {"\t": "tab", ";": "semicolon", ",": "comma", "|": "vertical bar"}


@dataclass(frozen=True)
class LeftOut:
    """A cell or point that is not in any series, with its row as the user sees it."""

    row: int | None
    column: str
    value: str
    reason: str

    def to_dict(self) -> dict[str, Any]:
        return {"row": self.row, "column": self.column, "value": self.value, "reason": self.reason}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> LeftOut:
        return cls(d.get("row"), str(d["column"]), str(d["value"]), str(d["reason"]))


@dataclass(frozen=True)
class ColumnRole:
    """What one column was taken for, and why: time, id, condition, covariate, value, measurement
    (another value column to choose), row-number, unused or empty."""

    column: str
    role: str
    reason: str

    def to_dict(self) -> dict[str, str]:
        return {"column": self.column, "role": self.role, "reason": self.reason}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> ColumnRole:
        return cls(str(d["column"]), str(d["role"]), str(d["reason"]))


#: How repeated times within a series (replicates) are read: every point, their mean, or the first.
REPLICATE_RULES = ("all", "mean", "first")


@dataclass(frozen=True)
class SeriesSummary:
    """What one series is made of; ``nonpositive`` lists (row, t, value) of points with p <= 0."""

    name: str
    time_column: str
    time_unit: str
    value_column: str
    value_unit: str
    points_used: int
    nonpositive: tuple[tuple[int, float, float], ...] = ()
    averaged: tuple[tuple[int, float, int], ...] = ()
    conditions: tuple[tuple[str, str], ...] = ()  # (column, value) of conditions and covariates
    replicate_times: int = 0  # times with more than one point, as read
    replicate_points: int = 0  # points at those times, as read
    step: Mapping[str, Any] | None = None  # the regular step found, its tolerance and precision

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "time": {"column": self.time_column, "unit": self.time_unit},
            "value": {"column": self.value_column, "unit": self.value_unit},
            "points_used": self.points_used,
            "nonpositive": [{"row": r, "t": t, "value": v} for r, t, v in self.nonpositive],
            "averaged": [{"row": r, "t": t, "count": n} for r, t, n in self.averaged],
            "conditions": {c: v for c, v in self.conditions},
            "replicates": {"times": self.replicate_times, "points": self.replicate_points},
            "step": dict(self.step) if self.step is not None else None,
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> SeriesSummary:
        return cls(
            name=str(d["name"]),
            time_column=str(d["time"]["column"]),
            time_unit=str(d["time"]["unit"]),
            value_column=str(d["value"]["column"]),
            value_unit=str(d["value"]["unit"]),
            points_used=int(d["points_used"]),
            nonpositive=tuple((int(x["row"]), float(x["t"]), float(x["value"])) for x in d.get("nonpositive", [])),
            averaged=tuple((int(x["row"]), float(x["t"]), int(x["count"])) for x in d.get("averaged", [])),
            conditions=tuple((str(c), str(v)) for c, v in dict(d.get("conditions") or {}).items()),
            replicate_times=int(dict(d.get("replicates") or {}).get("times", 0)),
            replicate_points=int(dict(d.get("replicates") or {}).get("points", 0)),
            step=d.get("step"),
        )


@dataclass(frozen=True)
class ImportReport:
    """Everything the import decided and found, for the terminal, the app and the fit record."""

    source: str
    sha256: str
    size_bytes: int
    format: str
    encoding: str | None
    delimiter: str | None
    decimal: str
    thousands: str | None
    sheet: str | None
    header_row: int | None
    layout: str
    rows_read: int
    series: tuple[SeriesSummary, ...]
    left_out: tuple[LeftOut, ...]
    notes: tuple[str, ...]
    columns: tuple[str, ...] = ()  # every column of the table, in file order, as labelled
    not_read: tuple[tuple[str, str], ...] = ()  # (series, reason) for series found but not read
    roles: tuple[ColumnRole, ...] = ()  # what every column was taken for, and why
    replicates: str = "all"  # the rule for repeated times within a series (REPLICATE_RULES)

    def columns_with(self, role: str) -> tuple[str, ...]:
        """The columns taken for ``role`` (``id``, ``condition``, ``value``...), in file order."""
        return tuple(r.column for r in self.roles if r.role == role)

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready data; the keys are part of the fit record's format."""
        return {
            "source": self.source,
            "sha256": self.sha256,
            "size_bytes": self.size_bytes,
            "format": self.format,
            "encoding": self.encoding,
            "delimiter": self.delimiter,
            "decimal": self.decimal,
            "thousands": self.thousands,
            "sheet": self.sheet,
            "header_row": self.header_row,
            "layout": self.layout,
            "rows_read": self.rows_read,
            "series": [s.to_dict() for s in self.series],
            "left_out": [x.to_dict() for x in self.left_out],
            "notes": list(self.notes),
            "columns": list(self.columns),
            "not_read": [{"series": name, "reason": why} for name, why in self.not_read],
            "roles": [r.to_dict() for r in self.roles],
            "taken": {role: list(self.columns_with(role))
                      for role in ("time", "id", "condition", "covariate", "value")},
            "replicates": self.replicates,
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> ImportReport:
        """The report back from ``to_dict()`` output (for instance from a fit record)."""
        return cls(
            source=str(d["source"]),
            sha256=str(d["sha256"]),
            size_bytes=int(d.get("size_bytes", 0)),
            format=str(d.get("format", "")),
            encoding=d.get("encoding"),
            delimiter=d.get("delimiter"),
            decimal=str(d.get("decimal", ".")),
            thousands=d.get("thousands"),
            sheet=d.get("sheet"),
            header_row=d.get("header_row"),
            layout=str(d["layout"]),
            rows_read=int(d["rows_read"]),
            series=tuple(SeriesSummary.from_dict(s) for s in d["series"]),
            left_out=tuple(LeftOut.from_dict(x) for x in d["left_out"]),
            notes=tuple(str(n) for n in d["notes"]),
            columns=tuple(str(c) for c in d.get("columns", [])),
            not_read=tuple((str(x["series"]), str(x["reason"])) for x in d.get("not_read", [])),
            roles=tuple(ColumnRole.from_dict(x) for x in d.get("roles", [])),
            replicates=str(d.get("replicates", "all")),
        )

    def to_text(self, max_left_out: int = 50) -> str:
        """A readable report; at most ``max_left_out`` left-out cells are listed one by one."""
        lines = [f"Import report for {self.source}"]
        size = f"{self.size_bytes / 1000:.1f} kB" if self.size_bytes >= 1000 else f"{self.size_bytes} bytes"
        lines.append(f"  file        {self.format.upper()}, {size}, sha256 {self.sha256[:16]}...")
        if self.format == "xlsx":
            lines.append(f"  sheet       {self.sheet}")
        else:
            delim = _DELIMITER_WORDS.get(self.delimiter or "", "none (one column)")
            lines.append(f"  encoding    {self.encoding}")
            lines.append(f"  delimiter   {delim}")
        thousands = f", thousands separator {self.thousands!r}" if self.thousands else ""
        lines.append(f"  decimal     {self.decimal!r}{thousands}")
        header_row = self.header_row if self.header_row is not None else "none (columns named by position)"
        lines.append(f"  header row  {header_row}")
        lines.append(f"  layout      {self.layout}")
        lines.append(f"  rows read   {self.rows_read}")
        if self.roles:
            lines.append(f"Columns ({len(self.roles)}):")
            width = max(len(repr(r.column)) for r in self.roles)
            for r in self.roles:
                lines.append(f"  {r.column!r:<{width}}  {r.role:<11}  {r.reason}")
        elif self.columns:
            lines.append(f"Columns ({len(self.columns)}): " + ", ".join(repr(c) for c in self.columns))
        lines.append(f"Series ({len(self.series)}):")
        for s in self.series:
            tu = f" [{s.time_unit}]" if s.time_unit else " [no unit]"
            vu = f" [{s.value_unit}]" if s.value_unit else ""
            lines.append(
                f"  {s.name}: time {s.time_column!r}{tu}, value {s.value_column!r}{vu}, "
                f"{s.points_used} points used"
            )
            if s.nonpositive:
                rows = ", ".join(str(r) for r, _, _ in s.nonpositive[:10])
                more = " ..." if len(s.nonpositive) > 10 else ""
                lines.append(f"    {len(s.nonpositive)} value(s) <= 0 (rows {rows}{more}): terms with ln need p > 0")
            if s.conditions:
                lines.append("    " + ", ".join(f"{c} = {v}" for c, v in s.conditions))
            if s.replicate_times:
                rule = {"all": "every point kept", "mean": "averaged into one point each",
                        "first": "the first point kept at each"}[
                    self.replicates if self.replicates in REPLICATE_RULES else "all"]
                lines.append(f"    replicates: {s.replicate_points} points at {s.replicate_times} time(s), {rule}")
        for name, why in self.not_read:
            lines.append(f"  {name}: not read ({why})")
        lines.append(f"Left out ({len(self.left_out)}):")
        if not self.left_out:
            lines.append("  nothing")
        for x in self.left_out[:max_left_out]:
            where = f"row {x.row}" if x.row is not None else "row ?"
            lines.append(f"  {where}, column {x.column!r}: {x.value!r}: {x.reason}")
        if len(self.left_out) > max_left_out:
            lines.append(f"  ... and {len(self.left_out) - max_left_out} more (see the JSON report)")
        lines.append(f"Notes ({len(self.notes)}):")
        for n in self.notes:
            lines.append(f"  - {n}")
        return "\n".join(lines)


@dataclass(frozen=True)
class ImportResult:
    """The series read from one file, and the report of how they were read."""

    series: tuple[Series, ...]
    report: ImportReport = field(repr=False)
