"""Every series of the shown file, read with the same choices, as plain data for the tab."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from dash.exceptions import PreventUpdate

from growthcore.batch import plate_format
from growthcore.data import Series
from growthcore.io import load_bytes
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits
from growthcore.numbers import finite_or_none

from ...heavy import direct
from ...state import check_points
from ..data import DEFAULT_MAX_BYTES, decode_source, reader_for, value_columns


def series_to_plain(s: Series) -> dict[str, Any]:
    return {
        "name": s.name, "t": [finite_or_none(v) for v in s.t], "p": [finite_or_none(v) for v in s.p],
        "excluded": {str(k): v for k, v in s.excluded.items()}, "rows": list(s.rows) if s.rows is not None else None,
        "time_unit": s.time_unit, "value_unit": s.value_unit, "time_column": s.time_column,
        "value_column": s.value_column,
    }


def series_from_plain(d: Mapping[str, Any], limits: Limits | None = None) -> Series:
    check_points(len(d["t"]), d.get("name"), limits)
    return Series(
        t=np.asarray(d["t"], dtype=float), p=np.asarray([math.nan if v is None else v for v in d["p"]], dtype=float),
        name=d["name"], time_unit=d.get("time_unit", ""), value_unit=d.get("value_unit", ""),
        time_column=d.get("time_column", "t"), value_column=d.get("value_column", "p"),
        excluded={int(k): str(v) for k, v in (d.get("excluded") or {}).items()},
        rows=tuple(d["rows"]) if d.get("rows") else None,
    )


def _mapping(choices: Mapping[str, Any]) -> dict[str, Any]:
    """The import options of the choices the shown series was read with (see ``import_source``)."""
    return {"time": choices.get("time") or None, "value": value_columns(choices.get("value")),
            "series": choices.get("series_column") or None,
            "time_unit": choices.get("time_unit") or None, "sheet": choices.get("sheet") or None,
            "replicates": choices.get("replicates") or "all"}


def batch_key(data: Mapping[str, Any], mapping: Mapping[str, Any]) -> str:
    """The file and the import choices: the same key means the same series, whichever is shown."""
    return f"{data.get('sha256')}|" + "|".join(f"{k}={mapping[k]}" for k in sorted(mapping))


def read_all_series(source: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                    previous: Mapping[str, Any] | None, *, limits: Limits | None = None,
                    run: Any = direct) -> dict[str, Any] | None:
    """Every series of the shown file, read with the same choices, as plain data; None for one series.

    The file is read (as a heavy job, through ``run``) under the server's ``limits``. Raises
    PreventUpdate when ``previous`` already holds these series (a pick within the same file).
    """
    if not source or not data or len(data.get("series_names", [])) < 2:
        if previous is None:
            raise PreventUpdate
        return None
    mapping = _mapping(data.get("choices") or {})
    key = batch_key(data, mapping)
    if previous and previous.get("key") == key:
        raise PreventUpdate
    limits = limits or dataclasses.replace(DEFAULT_LIMITS, max_bytes=DEFAULT_MAX_BYTES)
    return {"key": key, "source": data.get("source", ""), "mapping": mapping,
            **reader_for(source, run)("reading every series", plain_series, source, mapping, limits)}


def plain_series(source: Mapping[str, Any], mapping: Mapping[str, Any], limits: Limits) -> dict[str, Any]:
    """Every series of ``source`` as plain data (the heavy part of :func:`read_all_series`)."""
    imported = load_bytes(decode_source(source, limits.max_bytes), source.get("filename") or "upload",
                          max_bytes=limits.max_bytes, limits=limits, **mapping)
    names = [s.name for s in imported.series]
    fmt = plate_format(names)
    first = imported.series[0]
    report = imported.report
    return {"names": names, "series": [series_to_plain(s) for s in imported.series],
            "plate": list(fmt) if fmt else None, "time_unit": first.time_unit, "value_unit": first.value_unit,
            "report": report.to_dict(),
            "conditions": list(report.columns_with("condition") + report.columns_with("covariate"))}
