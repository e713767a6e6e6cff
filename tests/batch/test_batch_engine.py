"""Batch fits: per-series results against single-series fits, malformed series, groups, summaries."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from growthcore.batch import (
    fit_batch,
    from_series,
    group_summary,
    groups_from_pattern,
    parse_well,
    plate_format,
    rows,
    well_name,
)
from growthcore.batch.problems import first_curve_start
from growthcore.batch.summary import summarise
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.fit.starts import curve_starts
from growthcore.models.catalogue import get_form


def invented_plate(n: int, *, points: int = 40, seed: int = 11, noise: float = 0.03) -> list[Series]:
    """Invented logistic growth with well-to-well variation and multiplicative noise."""
    rng = np.random.default_rng(seed)
    t = np.arange(points) * 0.5
    out = []
    for i in range(n):
        k, r, p0 = rng.uniform(0.6, 1.5), rng.uniform(0.3, 0.8), rng.uniform(0.01, 0.04)
        p = k / (1 + (k / p0 - 1) * np.exp(-r * t)) * (1 + noise * rng.standard_normal(points))
        out.append(Series(t, p, name=well_name(i // 12, i % 12)))
    return out


def assert_same_fit(batched, single) -> None:
    """Values agree to 1e-4 of their standard error; SEs, SSE and AICc to 1e-4 relative."""
    assert batched.status == single.status == "converged"
    for a, b in zip(batched.parameters, single.parameters, strict=True):
        assert a.name == b.name
        scale = b.se if b.se else abs(b.value) * 1e-6 + 1e-12
        assert abs(a.value - b.value) <= 1e-4 * scale, (a.name, a.value, b.value, b.se)
        if b.se is not None:
            assert a.se == pytest.approx(b.se, rel=1e-4)
    assert batched.metrics.sse == pytest.approx(single.metrics.sse, rel=1e-8, abs=1e-14)
    assert batched.metrics.aicc == pytest.approx(single.metrics.aicc, rel=1e-6)
    assert batched.diagnostics.durbin_watson == pytest.approx(single.diagnostics.durbin_watson, rel=1e-4)


@pytest.mark.parametrize("model,error", [
    ("logistic-curve", "additive"), ("gompertz-curve", "log"), ("richards-curve", "additive"),
    ("logistic", "additive"), ("ricker", "log"), ("beverton-holt", "additive"),
])
def test_vectorised_fits_equal_single_series_fits(model: str, error: str) -> None:
    # reference: growthcore.fit.fit (scipy.optimize.least_squares, trf) run on each series alone
    plate = invented_plate(8)
    batch = fit_batch(plate, [model], error=error, workers=1)
    assert {f.path for f in batch.fits} == {"vectorised"}
    for s, f in zip(plate, batch.fits, strict=True):
        assert_same_fit(f.result, fit(s, model, error=error, profile=False))


def test_vectorised_curve_fits_keep_the_time_origin_of_late_starting_series() -> None:
    # reference: growthcore.fit.fit, whose curves take p0 at the first observed time
    plate = [Series(s.t + 1990.0, s.p, name=s.name) for s in invented_plate(4)]
    batch = fit_batch(plate, ["logistic-curve"], workers=1)
    assert {f.path for f in batch.fits} == {"vectorised"}
    for s, f in zip(plate, batch.fits, strict=True):
        single = fit(s, "logistic-curve", profile=False)
        assert_same_fit(f.result, single)
        assert f.result.predict(s.t[:3]) == pytest.approx(single.predict(s.t[:3]), rel=1e-6)


def test_first_start_matches_the_start_list() -> None:
    # identity: the first start computed alone equals the first of curve_starts
    s = invented_plate(1)[0]
    for model in ("logistic-curve", "gompertz-curve", "richards-curve", "monomolecular-curve", "exponential-curve"):
        form = get_form(model)
        assert first_curve_start(form, s.t, s.p) == curve_starts(form, s.t, s.p)[0]


def test_series_the_vectorised_path_rejects_fall_back_to_the_single_fit() -> None:
    # a series the first start cannot follow (exponential data under a monomolecular curve) still
    # gets the single-series answer, never a worse one
    t = np.arange(20.0)
    plate = [Series(t, 0.05 * np.exp(0.25 * t) * (1 + 0.01 * np.cos(t)), name="A1"), *invented_plate(3, points=20)[1:]]
    batch = fit_batch(plate, ["monomolecular-curve"], workers=1)
    assert "single" in {f.path for f in batch.fits}
    for s, f in zip(plate, batch.fits, strict=True):
        single = fit(s, "monomolecular-curve", profile=False)
        assert f.result.status == single.status
        if single.success:
            assert f.result.metrics.sse <= single.metrics.sse * (1 + 1e-6)


def test_malformed_series_are_reported_and_the_batch_completes() -> None:
    t = np.arange(12.0)
    good = invented_plate(2, points=12)
    with_nan = Series(t, np.where(t == 4, np.nan, good[0].p), name="B1")
    zero = Series(t, np.where(t == 0, 0.0, good[1].p), name="B2")
    short = Series(t[:3], good[0].p[:3], name="B3")
    tiny = Series(t[:2], good[0].p[:2], name="B4")
    batch = fit_batch([*good, with_nan, zero, short, tiny], ["logistic-curve", "gompertz-curve"], workers=1)
    by = {(f.series, f.result.model): f.result for f in batch.fits}
    assert by[("B1", "logistic-curve")].success and by[("B1", "logistic-curve")].metrics.n == 11
    assert by[("B2", "logistic-curve")].success
    assert not by[("B2", "gompertz-curve")].success and "p > 0" in by[("B2", "gompertz-curve")].message
    assert "3 usable points for 3 free constants" in by[("B3", "logistic-curve")].message
    assert "only 2 usable points" in by[("B4", "gompertz-curve")].message
    header, body = rows(batch)
    assert len(body) == 6 * 2 and {"series", "status", "message", "K", "K_se", "aicc"} <= set(header)
    assert sum(r["status"] == "failed" for r in body) == 5


def test_unknown_model_is_an_input_error_before_any_work() -> None:
    with pytest.raises(GrowthcoreInputError, match="unknown model form"):
        fit_batch(invented_plate(1), ["logistc"], workers=1)


def test_increments_method_runs_per_series() -> None:
    plate = invented_plate(3)
    batch = fit_batch(plate, ["logistic"], method="increments", workers=1)
    for s, f in zip(plate, batch.fits, strict=True):
        assert f.path == "single"
        assert f.result.values == pytest.approx(fit(s, "logistic", method="increments", profile=False).values)


def test_results_do_not_depend_on_workers_or_chunks() -> None:
    plate = invented_plate(10)
    one = fit_batch(plate, ["logistic-curve", "logistic"], workers=1, chunk_size=4)
    two = fit_batch(plate, ["logistic-curve", "logistic"], workers=2, chunk_size=4)
    assert [f.result.values for f in one.fits] == [f.result.values for f in two.fits]


def test_groups_from_pattern() -> None:
    names = ["ctrl_rep1", "ctrl_rep2", "drug_rep1", "blank"]
    mapping, notes = groups_from_pattern(names, r"^(.*)_rep\d+$")
    assert mapping == {"ctrl_rep1": "ctrl", "ctrl_rep2": "ctrl", "drug_rep1": "drug"}
    assert "blank" in notes[0]
    named, _ = groups_from_pattern(["A1", "A2", "B1"], r"(?P<group>[A-H])\d+")
    assert named == {"A1": "A", "A2": "A", "B1": "B"}
    with pytest.raises(GrowthcoreInputError, match="not a valid regular expression"):
        groups_from_pattern(names, "(")


def test_plate_wells() -> None:
    assert parse_well("A1") == (0, 0) and parse_well("h12") == (7, 11) and parse_well("P24") == (15, 23)
    assert parse_well("B07") == (1, 6) and parse_well("Q1") is None and parse_well("A25") is None
    assert plate_format(["A1", "H12"]) == (8, 12)
    assert plate_format(["A1", "I3"]) == (16, 24)
    assert plate_format(["A1", "ctrl"]) is None


def test_summarise_against_scipy_t_interval() -> None:
    # reference: scipy.stats.t.interval for the mean of a sample (handbook t interval)
    x = np.array([0.91, 1.02, 0.97, 1.10, 0.88])
    mean, sd, se, ci = summarise(x)
    ref = sps.t.interval(0.95, x.size - 1, loc=x.mean(), scale=sps.sem(x))
    assert mean == pytest.approx(x.mean()) and sd == pytest.approx(np.std(x, ddof=1))
    assert se == pytest.approx(sps.sem(x)) and ci == pytest.approx(ref)
    assert summarise(np.array([1.0]))[1:] == (None, None, None)


def test_group_summary_against_statsmodels() -> None:
    # reference: statsmodels DescrStatsW.tconfint_mean on the per-replicate estimates
    from statsmodels.stats.weightstats import DescrStatsW

    plate = invented_plate(6)
    data = from_series(plate, pattern=r"^([A-Z])")
    batch = fit_batch(data, ["logistic-curve"], workers=1)
    table = {(s.group, s.parameter): s for s in group_summary(batch)}
    ks = [f.result.values["K"] for f in batch.fits if f.group == "A"]
    entry = table[("A", "K")]
    assert entry.n == 6 and entry.mean == pytest.approx(np.mean(ks))
    assert entry.ci95 == pytest.approx(DescrStatsW(np.array(ks)).tconfint_mean(0.05))
    assert not any(math.isnan(v) for v in entry.ci95)
