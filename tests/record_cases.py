"""Fit records made by this version in several situations, shared by the record and report tests.

The data are the invented demo files in sample_data/ (see sample_data/README.md) and small
invented tables written here.
"""

from __future__ import annotations

import json
from functools import cache
from pathlib import Path
from typing import Any

from growthcore.compare import compare, comparison_notes
from growthcore.data import Series
from growthcore.io import load_file
from growthcore.record import DataSource, build_record, seal
from growthcore.workflow import Plan, fit_plan

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_data"
FIXTURES = Path(__file__).resolve().parent / "fixtures"


def make_record(series: Series, models: list[str], methods: list[str], *, error: str = "additive",
                capacity: float | None = None, terms: list[str] | None = None, source: DataSource | None = None,
                profile: bool = True) -> dict[str, Any]:
    """The record ``growthcore fit`` writes (without the later uncertainty members), as parsed JSON."""
    terms = terms or []
    plan = Plan(models=tuple(models), method="both" if len(methods) > 1 else methods[0], error=error,
                capacity=capacity, terms=tuple(terms), profile=profile)
    fits = list(fit_plan(series, plan).results)
    settings = {"models": models, "methods": methods, "error": error, "capacity": capacity, "terms": terms,
                "profile": profile}
    record = build_record(series, fits, source=source, settings=settings)
    record["comparison"] = {"rows": [r.to_dict() for r in compare(fits)], "notes": comparison_notes(fits)}
    return json.loads(json.dumps(seal(record), allow_nan=False))


def _census() -> tuple[Series, DataSource]:
    imported = load_file(SAMPLES / "island_census.csv")
    report = imported.report.to_dict()
    return imported.series[0], DataSource(report["source"], report["sha256"], report)


@cache
def _cases() -> dict[str, str]:
    series, source = _census()
    with_exclusion = series.exclude(4, "count disturbed by a storm (field note)")
    algae = load_file(SAMPLES / "algae_photobioreactor.csv")
    a_report = algae.report.to_dict()
    a_source = DataSource(a_report["source"], a_report["sha256"], a_report)
    tiny = Series([0, 1, 2, 3], [1.0, 2.0, float("nan"), 5.0], name="=cmd|' /C calc'!A0", time_unit="d",
                  value_unit="cells/mL", time_column="day", value_column="count")
    cases = {
        "census-both-methods": make_record(with_exclusion, ["logistic", "ricker", "logistic-curve"],
                                           ["increments", "trajectory"], source=source),
        "algae-log-error-fixed-K": make_record(algae.series[0], ["logistic", "gompertz-curve"], ["trajectory"],
                                               error="log", capacity=4.2, source=a_source),
        "census-custom-terms": make_record(series, ["custom"], ["increments"], terms=["p", "p^2"],
                                           source=source, profile=False),
        "tiny-with-failure": make_record(tiny, ["logistic", "richards-curve"], ["trajectory"]),
    }
    return {k: json.dumps(v) for k, v in cases.items()}


def record_cases() -> dict[str, dict[str, Any]]:
    """Fresh copies of each case's record, by name."""
    return {k: json.loads(v) for k, v in _cases().items()}


def census_record() -> dict[str, Any]:
    return record_cases()["census-both-methods"]
