"""Bootstrap by residual resampling: coverage on simulated data, chunking, failures, every form.

Coverage: for data simulated from known constants, a 95% interval should contain the true value in
about 95% of repetitions (the definition of a confidence interval). With 200 seeded repetitions the
binomial standard error is √(0.95·0.05/200) ≈ 1.5%; we accept 0.89..0.99 (about 4 standard errors
wide), because percentile intervals from 200 resamples are known to run slightly narrow (Efron &
Tibshirani 1993, ch. 13 — common practice, quoted from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models.catalogue import get_form
from growthcore.uncertainty import BootstrapResult, bootstrap, bootstrap_chunks, derived_intervals
from growthcore.uncertainty.refit import refit_problem

TRUE = {"r": 0.6, "K": 100.0}
LOGISTIC = get_form("logistic")


def simulated(seed: int, *, n: int = 30, sd: float = 3.0, p0: float = 5.0, r: float = 0.6) -> Series:
    """Observation error on the deterministic path: the error model of the trajectory method."""
    rng = np.random.default_rng(seed)
    path = iterate(LOGISTIC, p0, {"r": r, "K": 100.0}, n - 1)
    return Series(np.arange(float(n)), path + rng.normal(0.0, sd, n))


def simulated_steps(seed: int, *, n: int = 30, sd: float = 3.0, p0: float = 5.0, r: float = 0.6) -> Series:
    """Error on every step, p_{n+1} = f(p_n) + e_n: the error model of the increments method."""
    rng = np.random.default_rng(seed)
    p = np.empty(n)
    p[0] = p0
    for i in range(1, n):
        p[i] = float(LOGISTIC.next_state(np.array(p[i - 1]), {"r": r, "K": 100.0})) + rng.normal(0.0, sd)
    return Series(np.arange(float(n)), p)


@pytest.mark.parametrize("method", ["trajectory", "increments"])
def test_coverage_of_percentile_intervals(method: str) -> None:
    """Each method on data with the error model it assumes (fixed-design residual resampling)."""
    hits = {"r": 0, "K": 0}
    reps = 200
    for rep in range(reps):
        s = simulated(1000 + rep) if method == "trajectory" else simulated_steps(1000 + rep, p0=10.0, sd=2.0)
        res = fit(s, "logistic", method=method, profile=False)
        assert res.success
        boot = bootstrap(res, series=s, resamples=200, seed=rep)
        for name in hits:
            lo, hi = boot.interval(name)
            hits[name] += lo <= TRUE[name] <= hi
    for name, count in hits.items():
        assert 0.89 <= count / reps <= 0.99, (name, count / reps)


def test_chunks_give_the_same_refits_as_one_run() -> None:
    s = simulated(1)
    res = fit(s, "logistic")
    whole = bootstrap(res, resamples=300, seed=5)
    parts = list(bootstrap_chunks(res, resamples=300, seed=5, chunk=70))
    assert [p.done for p in parts] == [70, 140, 210, 280, 300]
    assert parts[-1].complete and not parts[0].complete and parts[0].status == "partial"
    np.testing.assert_array_equal(parts[-1].samples, whole.samples)
    # a chunk run on its own and merged
    first = bootstrap(res, resamples=300, seed=5, stop=100)
    rest = bootstrap(res, resamples=300, seed=5, start=100)
    np.testing.assert_array_equal(first.merge(rest).samples, whole.samples)


def test_round_trip_through_plain_data() -> None:
    s = simulated(2)
    res = fit(s, "ricker")
    boot = bootstrap(res, resamples=50, seed=1)
    back = BootstrapResult.from_dict(boot.to_dict())
    np.testing.assert_array_equal(back.samples, boot.samples)
    assert back.intervals() == boot.intervals()


def test_seed_matters_and_repeats() -> None:
    res = fit(simulated(3), "logistic")
    a, b, c = (bootstrap(res, resamples=100, seed=s) for s in (1, 1, 2))
    np.testing.assert_array_equal(a.samples, b.samples)
    assert not np.array_equal(a.samples, c.samples)


def test_close_to_t_intervals_on_a_well_behaved_fit() -> None:
    # for a nearly linear problem with Gaussian errors, bootstrap and Jacobian intervals agree
    # (asymptotic theory; the 25% tolerance is ours)
    res = fit(simulated(4, n=50, sd=2.0), "logistic")
    boot = bootstrap(res, resamples=1000, seed=9)
    for p in res.parameters:
        lo, hi = boot.interval(p.name)
        assert p.ci95 is not None
        assert (hi - lo) == pytest.approx(p.ci95[1] - p.ci95[0], rel=0.25)


MODELS = ["geometric", "logistic", "beverton-holt", "ricker", "gompertz", "theta-logistic", "logistic+c",
          "logistic-curve", "gompertz-curve", "richards-curve", "monomolecular-curve"]


@pytest.mark.parametrize("model", MODELS)
@pytest.mark.parametrize("method", ["trajectory", "increments"])
@pytest.mark.parametrize("error", ["additive", "log"])
def test_every_form_and_method_resamples(model: str, method: str, error: str) -> None:
    s = simulated(7, n=25, sd=1.5, r=0.5)
    res = fit(s, model, method=method, error=error, profile=False)
    if model.endswith("-curve") and method == "increments":
        assert not res.success
        boot = bootstrap(res, resamples=30)
        assert boot.status == "failed" and boot.done == 0 and "did not converge" in boot.message
        return
    assert res.success, res.message
    boot = bootstrap(res, series=s, resamples=100, seed=3)
    assert boot.done == 100
    assert boot.ok.sum() >= 80, boot.summary()
    free = [p.name for p in res.parameters if not p.fixed]
    assert list(boot.names) == free
    for p in res.parameters:
        if p.fixed:
            continue
        ci = boot.interval(p.name)
        assert ci is not None and ci[0] <= ci[1]


def test_increments_needs_its_series() -> None:
    from growthcore.errors import GrowthcoreInputError

    res = fit(simulated(8), "logistic", method="increments")
    with pytest.raises(GrowthcoreInputError, match="series"):
        bootstrap(res, resamples=10)


def test_a_negative_seed_is_an_input_error() -> None:
    # numpy's generators take seeds of 0 and more; a negative one is a bad argument, named as such
    from growthcore.errors import GrowthcoreInputError

    series = simulated(8)
    res = fit(series, "logistic", method="trajectory")
    for seed in (-1, 1.5, True):
        with pytest.raises(GrowthcoreInputError, match="`seed` must be a whole number 0 or larger"):
            bootstrap(res, series=series, resamples=10, seed=seed)  # type: ignore[arg-type]
    assert bootstrap(res, series=series, resamples=10, seed=np.int64(3)).done == 10


def test_failed_refits_are_counted_not_raised() -> None:
    # a form that cannot follow the data: refits overflow for some resamples, yet nothing raises
    rng = np.random.default_rng(0)
    t = np.arange(12.0)
    s = Series(t, 50 + 40 * np.sin(t) + rng.normal(0, 1, 12))
    res = fit(s, "ricker", profile=False)
    boot = bootstrap(res, resamples=200, seed=1) if res.success else bootstrap(res, resamples=200)
    assert boot.done in (0, 200)
    assert boot.failed + int(boot.ok.sum()) == boot.done
    if boot.failed:
        assert "did not converge" in boot.message


def test_derived_intervals_contain_the_estimates() -> None:
    s = simulated(5, n=40, sd=2.0)
    for model in ("logistic", "logistic-curve"):
        res = fit(s, model)
        boot = bootstrap(res, resamples=300, seed=2)
        out = derived_intervals(res, boot, levels=[50.0], fractions=[0.5, 0.9], max_draws=120)
        for name in ("doubling_time", "lag_time", "time_to_level_50", "time_to_90pct_K"):
            row = out[name]
            assert row["ci95"] is not None, name
            assert row["ci95"][0] <= row["value"] <= row["ci95"][1], (model, name, row)
        # a logistic curve's inflection lies at K/2 (identity), so the two times agree; the discrete
        # form's path only approximately (within one step)
        tol = 1e-3 if model == "logistic-curve" else 1.0
        assert out["time_to_50pct_K"]["value"] == pytest.approx(out["inflection_time"]["value"], abs=tol)
        assert math.isfinite(out["doubling_time"]["value"])


def test_refit_problem_reproduces_the_fit() -> None:
    # the rebuilt residual function gives back the fit's own predictions at the estimate (identity)
    s = simulated(6)
    for model, method in (("logistic", "trajectory"), ("ricker", "increments"), ("gompertz-curve", "trajectory")):
        res = fit(s, model, method=method)
        problem = refit_problem(res, s)
        values = {**problem.fixed, **{n: problem.estimate[i][None, None] for i, n in enumerate(problem.names)}}
        np.testing.assert_allclose(problem.predict(values)[:, 0, 0], res.predicted, rtol=1e-10)
