"""A multi-series data set: the series of one file (long or wide layout) and their groups."""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from growthcore.batch.groups import condition_columns, groups_from_conditions, groups_from_pattern, members
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.io import ImportReport, load_bytes
from growthcore.io.loader import read_file


@dataclass(frozen=True)
class BatchData:
    """Series to fit together, each with an optional group label.

    ``not_read`` lists series the import left out (name, reason), so that a batch reports them
    instead of losing them.
    """

    series: tuple[Series, ...]
    groups: Mapping[str, str] = field(default_factory=dict)
    source: str = ""
    report: ImportReport | None = None
    not_read: tuple[tuple[str, str], ...] = ()
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        seen: set[str] = set()
        for s in self.series:
            if s.name in seen:
                raise GrowthcoreInputError(f"two series are named {s.name!r}: series ids in a batch must be unique")
            seen.add(s.name)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.series)

    def group_of(self, name: str) -> str | None:
        return self.groups.get(name)

    def members(self) -> dict[str, list[str]]:
        """Series ids per group, in file order."""
        return members(self.groups, self.names)

    def get(self, name: str) -> Series:
        for s in self.series:
            if s.name == name:
                return s
        raise GrowthcoreInputError(f"no series named {name!r}; the batch has {', '.join(self.names[:20])}")


def from_series(series: Sequence[Series], *, groups: Mapping[str, str] | None = None,
                pattern: str | None = None, source: str = "") -> BatchData:
    """A batch from series already in memory, grouped by a mapping or a pattern on the ids."""
    names = [s.name for s in series]
    notes: tuple[str, ...] = ()
    if pattern is not None:
        mapping, notes = groups_from_pattern(names, pattern)
    else:
        mapping = dict(groups or {})
    return BatchData(tuple(series), mapping, source, None, (), notes)


def load_batch(
    path: str | os.PathLike[str],
    *,
    sheet: str | None = None,
    time: str | None = None,
    value: str | Sequence[str] | None = None,
    series: str | Sequence[str] | None = None,
    time_unit: str | None = None,
    replicates: str = "all",
    groups: str | Sequence[str] | None = None,
    pattern: str | None = None,
) -> BatchData:
    """Every series of a file, grouped by condition columns (``groups``, one or more) or an id ``pattern``."""
    if groups is not None and pattern is not None:
        raise GrowthcoreInputError(
            "group the series either by condition columns or by a pattern on their names, not both")
    name, data = read_file(path)
    imported = load_bytes(data, name, sheet=sheet, time=time, value=value, series=series, time_unit=time_unit,
                          replicates=replicates)
    names = [s.name for s in imported.series]
    notes: list[str] = []
    mapping: dict[str, str] = {}
    if pattern is not None:
        mapping, extra = groups_from_pattern(names, pattern)
        notes.extend(extra)
    elif groups is not None:
        mapping, extra = groups_from_conditions(imported.report, groups)
        notes.extend(extra)
        loose = [n for n in names if n not in mapping]
        if loose:
            notes.append(f"{len(loose)} series have no value in {', '.join(map(repr, condition_columns(groups)))} "
                         "and are in no group: "
                         + ", ".join(loose[:10]) + (" ..." if len(loose) > 10 else ""))
    return BatchData(imported.series, mapping, name, imported.report, imported.report.not_read, tuple(notes))
