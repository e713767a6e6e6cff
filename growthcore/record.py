"""The versioned JSON fit record: data inline, settings, fits, and the software that made it.

Notes
-----
Integrity: ``record["integrity"]["value"]`` is the SHA-256 (hex) of the canonical JSON text of the
record with the ``integrity`` member removed. Canonical JSON here means: every number written as
a float (so ``3`` and ``3.0`` hash alike, whichever program re-saved the file), keys sorted, no
whitespace (separators ``,`` and ``:``), non-ASCII characters kept and encoded as UTF-8, NaN and
infinities refused. The hash shows that a record was changed after it was written (by hand or by
a damaged copy); it is not a signature: anyone can recompute it.

A record is sealed by :func:`build_record`; code that adds members afterwards (the comparison
table, dynamics, forecasts) must call :func:`seal` again before the record is written.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
import platform
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from importlib import metadata
from typing import Any

from growthcore import __version__
from growthcore.data import Series
from growthcore.fit.result import FitResult

FORMAT = "growthcore.fit-record"
FORMAT_VERSION = 2
HASH_ALGORITHM = "sha256"
#: How the integrity hash is computed; the name is stored in the record.
CANONICAL_FORM = "json-sorted-compact-floats"
_DEPENDENCIES = ("numpy", "scipy", "pandas", "openpyxl", "dash", "plotly", "kaleido")


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
    deps: dict[str, str | None] = {}
    for name in _DEPENDENCIES:
        try:
            deps[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            deps[name] = None
    return {"name": "growthcore", "version": __version__, "python": platform.python_version(), "dependencies": deps}


def data_section(series: Series, source: DataSource) -> dict[str, Any]:
    points = series.to_points()
    if series.rows is not None:
        for point, row in zip(points, series.rows, strict=True):
            point["row"] = int(row)
    out: dict[str, Any] = {
        "source": source.source,
        "sha256": source.sha256,
        "name": series.name,
        "time": {"column": series.time_column, "unit": series.time_unit},
        "value": {"column": series.value_column, "unit": series.value_unit},
        "step": series.step().message,
        "points": points,
    }
    if source.import_report is not None:
        out["import_report"] = dict(source.import_report)
    if source.extra:
        out["extra"] = dict(source.extra)
    return out


def fit_request(result: FitResult, settings: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The arguments of :func:`growthcore.fit.fit` that reproduce ``result`` on the same series.

    The fixed constants come from the fit itself; ``capacity`` (a fixed K estimate), the requested
    error model and whether K is profiled come from the run-wide ``settings`` when the fit has
    none of its own (a failed fit records no settings).
    """
    run = dict(settings or {})
    own = result.settings
    fixed = {str(k): float(v) for k, v in dict(own.fixed or {}).items()}
    capacity = run.get("capacity")
    if capacity is not None and fixed.get("K") == float(capacity):
        fixed.pop("K")
    error = run.get("error", result.error) if result.method == "trajectory" else result.error
    request: dict[str, Any] = {
        "model": result.model,
        "method": result.method,
        "error": error if error in ("additive", "log") else result.error,
        "capacity": None if capacity is None else float(capacity),
        "fixed": fixed,
        "start": {str(k): float(v) for k, v in dict(own.start or {}).items()},
        "terms": _terms(result, run),
        "profile": bool(run.get("profile", result.profile is not None)),
        "time_origin": own.time_origin,
    }
    return request


def _terms(result: FitResult, run: Mapping[str, Any]) -> list[str]:
    if result.model != "custom":
        return []
    return list(result.terms) or [str(t) for t in run.get("terms", [])]


def build_record(
    series: Series,
    fits: Sequence[FitResult],
    *,
    source: DataSource | None = None,
    settings: Mapping[str, Any] | None = None,
    created: _dt.datetime | None = None,
    requests: Sequence[Mapping[str, Any]] | None = None,
) -> dict[str, Any]:
    """The sealed record for one series and its fits, ready for ``json.dump``.

    ``requests`` gives, per fit, the arguments that made it (see :func:`fit_request`); by default
    they are read from the fits and ``settings``. Members added later need :func:`seal` again.
    """
    stamp = (created or _dt.datetime.now(_dt.timezone.utc)).isoformat(timespec="seconds")
    if requests is not None and len(requests) != len(fits):
        raise ValueError(f"`requests` must give one entry per fit; got {len(requests)} for {len(fits)} fits")
    fit_dicts = []
    for i, f in enumerate(fits):
        d = f.to_dict()
        d["request"] = dict(requests[i]) if requests is not None else fit_request(f, settings)
        fit_dicts.append(d)
    record = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "software": software_versions(),
        "created": stamp,
        "settings": dict(settings or {}),
        "data": data_section(series, source or DataSource()),
        "fits": fit_dicts,
    }
    return seal(record)


def _floats(obj: Any) -> Any:
    if isinstance(obj, bool) or obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, (int, float)):
        x = float(obj)
        if not math.isfinite(x):
            raise ValueError(f"a record holds only finite numbers; found {obj!r}")
        return x
    if isinstance(obj, Mapping):
        return {str(k): _floats(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_floats(v) for v in obj]
    raise TypeError(f"a record holds only JSON values; found {type(obj).__name__}")


def canonical_json(obj: Any) -> bytes:
    """The canonical UTF-8 JSON text that the integrity hash is computed on (see module notes)."""
    return json.dumps(_floats(obj), sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False).encode("utf-8")


def content_hash(record: Mapping[str, Any]) -> str:
    """SHA-256 of the canonical JSON of ``record`` without its ``integrity`` member."""
    body = {k: v for k, v in record.items() if k != "integrity"}
    return hashlib.sha256(canonical_json(body)).hexdigest()


def seal(record: dict[str, Any]) -> dict[str, Any]:
    """Set ``record["integrity"]`` from the current content (in place) and return the record."""
    record.pop("integrity", None)
    record["integrity"] = {"algorithm": HASH_ALGORITHM, "canonical": CANONICAL_FORM, "value": content_hash(record)}
    return record


def integrity_problem(record: Mapping[str, Any]) -> str | None:
    """None when the stored hash matches the content, else a sentence saying what is wrong."""
    info = record.get("integrity")
    if not isinstance(info, Mapping):
        return "the record has no integrity hash (member 'integrity' is missing)"
    if info.get("algorithm") != HASH_ALGORITHM or info.get("canonical") != CANONICAL_FORM:
        return (f"unknown integrity method {info.get('algorithm')!r}/{info.get('canonical')!r}; "
                f"expected {HASH_ALGORITHM!r}/{CANONICAL_FORM!r}")
    try:
        actual = content_hash(record)
    except (TypeError, ValueError) as exc:
        return f"the record content cannot be hashed: {exc}"
    if info.get("value") != actual:
        return (f"integrity hash mismatch: the record was changed after it was written "
                f"(stored {str(info.get('value'))[:12]}..., content gives {actual[:12]}...)")
    return None
