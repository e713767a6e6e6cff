"""The versioned JSON fit record: data inline, settings, fits, and the software that made it."""

from __future__ import annotations

import datetime as _dt
import hashlib
import platform
from dataclasses import dataclass, field
from importlib import metadata
from typing import Any, Mapping, Sequence

from growthcore import __version__
from growthcore.data import Series
from growthcore.fit.result import FitResult

FORMAT = "growthcore.fit-record"
FORMAT_VERSION = 1
_DEPENDENCIES = ("numpy", "scipy", "pandas", "openpyxl", "dash", "plotly")


@dataclass(frozen=True)
class DataSource:
    """Where the series came from: the file name, its SHA-256 and the import report, if any."""

    source: str = ""
    sha256: str = ""
    import_report: Mapping[str, Any] | None = None
    extra: Mapping[str, Any] = field(default_factory=dict)


def sha256_of(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def software_versions() -> dict[str, Any]:
    deps = {}
    for name in _DEPENDENCIES:
        try:
            deps[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            deps[name] = None
    return {"name": "growthcore", "version": __version__, "python": platform.python_version(), "dependencies": deps}


def data_section(series: Series, source: DataSource) -> dict[str, Any]:
    out: dict[str, Any] = {
        "source": source.source,
        "sha256": source.sha256,
        "name": series.name,
        "time": {"column": series.time_column, "unit": series.time_unit},
        "value": {"column": series.value_column, "unit": series.value_unit},
        "step": series.step().message,
        "points": series.to_points(),
    }
    if source.import_report is not None:
        out["import_report"] = dict(source.import_report)
    return out


def build_record(
    series: Series,
    fits: Sequence[FitResult],
    *,
    source: DataSource | None = None,
    settings: Mapping[str, Any] | None = None,
    created: _dt.datetime | None = None,
) -> dict[str, Any]:
    """The record for one series and its fits, ready for ``json.dump``."""
    stamp = (created or _dt.datetime.now(_dt.timezone.utc)).isoformat(timespec="seconds")
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "software": software_versions(),
        "created": stamp,
        "settings": dict(settings or {}),
        "data": data_section(series, source or DataSource()),
        "fits": [f.to_dict() for f in fits],
    }
