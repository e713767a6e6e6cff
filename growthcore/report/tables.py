"""Tables from a fit record: times, observations, predictions and residuals for each fitted form."""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import IO, Any

from growthcore.io.writer import csv_text, write_csv

#: What a fit's "predicted" column means, by method: the increments method predicts one step
#: ahead from the observed state, the trajectory method follows its own path from the start.
PREDICTION_KIND = {"increments": "one step ahead", "trajectory": "fitted path"}


def _with_unit(label: str, unit: str) -> str:
    return f"{label} ({unit})" if unit else label


def residual_table(record: Mapping[str, Any]) -> tuple[list[str], list[list[Any]]]:
    """Header and rows: one row per fitted point of each converged fit, in record order.

    Residuals are on the fit's error scale (the state for additive error, ln of the state for
    log error), as the fit minimised them; the column ``residual scale`` says which.
    """
    data = record["data"]
    header = [
        "series", "model", "method", "error model", "prediction",
        _with_unit("time", data["time"]["unit"]),
        _with_unit("observed", data["value"]["unit"]),
        _with_unit("predicted", data["value"]["unit"]),
        "residual", "residual scale",
    ]
    rows: list[list[Any]] = []
    name = data.get("name", "")
    for f in record["fits"]:
        if f["status"] != "converged":
            continue
        scale = "ln(state)" if f["error"] == "log" else "state"
        for r in f.get("residuals", []):
            rows.append([name, f["model"], f["method"], f["error"], PREDICTION_KIND.get(f["method"], f["method"]),
                         r["t"], r["observed"], r["predicted"], r["residual"], scale])
    return header, rows


def write_residual_csv(record: Mapping[str, Any], path_or_buffer: str | os.PathLike[str] | IO[str]) -> int:
    """Write :func:`residual_table` as formula-safe CSV; returns the number of data rows."""
    header, rows = residual_table(record)
    write_csv(path_or_buffer, header, rows)
    return len(rows)


def residual_csv_text(record: Mapping[str, Any]) -> str:
    """The same CSV as text (for downloads from the app)."""
    header, rows = residual_table(record)
    return csv_text(header, rows)
