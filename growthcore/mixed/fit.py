"""The entry point of mixed-effects fits: starts from separate fits, estimation, and the result."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
from scipy.stats import norm
from scipy.stats import t as student_t

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.fit.result import FitResult
from growthcore.mixed.covariance import from_natural, natural_of, relative_cov, theta_of
from growthcore.mixed.design import MixedDesign, build_design
from growthcore.mixed.likelihood import linear_fit, linear_neg2ll
from growthcore.mixed.optimiser import LOG_SD_BOUNDS, lindstrom_bates, linearised, polish_laplace
from growthcore.mixed.optimiser import Estimate as Optimum
from growthcore.mixed.result import Estimate, PopulationFit, SeriesEffects, failed_population
from growthcore.models.base import ModelForm
from growthcore.models.catalogue import get_form

Array = np.ndarray
Z95 = float(norm.ppf(0.975))
ALGORITHMS = {
    "ML": "Lindstrom–Bates alternation (PNLS and LME steps), then the Laplace approximation of the "
          "marginal likelihood maximised over all parameters",
    "REML": "Lindstrom–Bates alternation (PNLS and LME steps) with the REML criterion of the LME step",
    "alternation": "Lindstrom–Bates alternation (PNLS and LME steps); log-likelihood of the final LME step",
}


def fit_population(
    series: Sequence[Series],
    model: str | ModelForm,
    *,
    random: Sequence[str] = ("K",),
    covariance: str = "diagonal",
    estimation: str = "ML",
    error: str = "additive",
    held: Mapping[str, float] | None = None,
    groups: Sequence[str] | None = None,
    shifted: Sequence[str] = (),
    start: Mapping[str, float] | None = None,
    refine: bool = True,
) -> PopulationFit:
    """Fit a nonlinear mixed-effects model of ``model`` over ``series`` (one series per replicate).

    Parameters
    ----------
    series : the replicates; excluded points are left out, series without data are skipped.
    model : a form id or object: a curve (``logistic-mid-curve``...) or a difference form, fitted by
        its trajectory on the common step grid with p0 (the state at each series' first time) as
        one more constant that may be random.
    random : constants with a random deviation per series.
    covariance : ``diagonal`` (independent deviations) or ``full`` (correlated).
    estimation : ``ML`` or ``REML``.
    error : ``additive`` or ``log`` (Gaussian on ln p).
    held : constants held at given values for every series.
    groups : a condition label per series; ``shifted`` constants get one shift per condition after the first.
    start : starting population values; by default the medians of separate fits.
    refine : under ML, maximise the Laplace approximation after the alternation (exact when the random
        effects enter the curve linearly); False stops at the alternation's fixpoint.

    Returns
    -------
    PopulationFit whose ``status`` is ``converged`` or ``failed`` with a message. Only choices outside
    their options raise ``GrowthcoreInputError``.
    """
    form = get_form(model) if isinstance(model, str) else model
    design = build_design(series, form, random=random, covariance=covariance, estimation=estimation,
                          error=error, held=held, groups=groups, shifted=shifted)
    by_name = {s.name: s for s in series}
    separate = [fit(by_name[n], form, error=error, fixed=dict(design.held), profile=False,
                    time_origin=design.origin) for n in design.names]
    try:
        with np.errstate(all="ignore"):
            start_values = _starts(design, separate, start)
            if isinstance(start_values, str):
                return _failed(design, start_values)
            beta0, theta0 = start_values
            polish = design.estimation == "ML" and refine
            # the Laplace refinement finishes the job under ML: the alternation need only come close
            found = lindstrom_bates(design, beta0, theta0, tol=1e-5 if polish else 1e-9)
            if polish and math.isfinite(found.neg2ll):
                found = polish_laplace(design, found)
            algorithm = ALGORITHMS[design.estimation if refine or design.estimation == "REML" else "alternation"]
            if not found.converged:
                return _failed(design, found.message + "; try holding a constant fixed or fewer random effects")
            return _result(design, found, separate, algorithm)
    except (np.linalg.LinAlgError, FloatingPointError, OverflowError, ZeroDivisionError, ValueError) as exc:
        if isinstance(exc, GrowthcoreInputError):
            raise
        return _failed(design, f"numerical failure: {exc}")


def _failed(design: MixedDesign, message: str) -> PopulationFit:
    return failed_population(design.form.id, message, estimation=design.estimation, error=design.error,
                             algorithm=ALGORITHMS[design.estimation], random=design.random,
                             covariance=design.covariance, shifted=design.shifted, held=dict(design.held),
                             conditions=design.conditions)


def _starts(design: MixedDesign, separate: Sequence[FitResult], start: Mapping[str, float] | None
            ) -> tuple[Array, Array] | str:
    """β from the medians of the separate fits (shifts from the condition medians), D from their spread."""
    ok = [(r, g) for r, g in zip(separate, design.groups, strict=True) if r.success]
    given = dict(start or {})
    if not ok and not all(n in given for n in design.free):
        return ("no series could be fitted on its own to start from; give starting values "
                f"for {', '.join(design.free)}")
    values = {n: np.array([r.values[n] for r, _ in ok]) for n in design.free}
    base_group = design.conditions[0]
    beta = np.zeros(len(design.beta_names))
    for j, name in enumerate(design.beta_names):
        if ":" in name:
            const, group = name.split(":", 1)
            inside = [r.values[const] for r, g in ok if g == group]
            base = [r.values[const] for r, g in ok if g == base_group]
            beta[j] = float(np.median(inside) - np.median(base)) if inside and base else 0.0
        elif name in given:
            beta[j] = float(given[name])
        else:
            base = [r.values[name] for r, g in ok if g == base_group] or list(values[name])
            beta[j] = float(np.median(base))
    resid = [r.metrics.residual_sd for r, _ in ok if r.metrics is not None and math.isfinite(r.metrics.residual_sd)]
    sigma = float(np.median(resid)) if resid else max(float(np.std(design.y[design.mask > 0])), 1e-8)
    sigma = max(sigma, 1e-8)
    sds = []
    for name in design.random:
        spread = float(np.std(values[name])) if name in values and values[name].size > 1 else 0.0
        level = abs(float(beta[design.beta_names.index(name)]))
        sds.append(max(spread, 0.05 * level, 1e-6 * sigma))
    D = np.diag(np.square(np.array(sds) / sigma))
    theta = np.clip(theta_of(D, design.covariance), LOG_SD_BOUNDS[0] + 1.0, LOG_SD_BOUNDS[1] - 1.0)
    return beta, theta


def _result(design: MixedDesign, found: Optimum, separate: Sequence[FitResult], algorithm: str) -> PopulationFit:
    q = len(design.random)
    sigma2 = found.sigma2
    sigma = math.sqrt(sigma2)
    D = relative_cov(found.theta, q, design.covariance)
    psi = D * sigma2
    wk = linearised(design, found.beta, found.b)
    lin = linear_fit(wk, D, design.n_obs, design.estimation)
    notes: list[str] = []
    fixed: dict[str, Estimate] = {}
    cov_beta = sigma2 * np.linalg.inv(lin.xvx) if lin is not None else None
    for j, name in enumerate(design.beta_names):
        value = float(found.beta[j])
        se = math.sqrt(cov_beta[j, j]) if cov_beta is not None and cov_beta[j, j] > 0 else None
        df = fixed_df(design, name)
        half_t = float(student_t.ppf(0.975, df)) * se if se is not None else None
        fixed[name] = Estimate(value, se, (value - half_t, value + half_t) if half_t is not None else None, df)
    natural = natural_of(psi, sigma, design.covariance)
    half = _interval_halfwidths(design, wk, natural)
    sd = np.sqrt(np.diag(psi))
    # an SD below 1e-4 of the residual SD cannot be told from zero (the lower bound is e^-12)
    at_zero = found.theta[:q] <= math.log(1e-4)
    random_sd: dict[str, Estimate] = {}
    for j, name in enumerate(design.random):
        ci = None if half is None or at_zero[j] else (math.exp(natural[j] - half[j]), math.exp(natural[j] + half[j]))
        random_sd[name] = Estimate(float(sd[j]) if not at_zero[j] else 0.0, None, ci)
        if at_zero[j]:
            notes.append(f"the SD of {name} between series is zero at the optimum: the data show no variation of "
                         f"{name} beyond the residual noise; a model without its random effect fits as well")
    correlations: dict[str, Estimate] = {}
    if design.covariance == "full" and q > 1:
        rows, cols = np.tril_indices(q, -1)
        for c, (a, b) in enumerate(zip(rows, cols, strict=True)):
            z = natural[q + c]
            ci = None if half is None else (math.tanh(z - half[q + c]), math.tanh(z + half[q + c]))
            correlations[f"{design.random[b]},{design.random[a]}"] = Estimate(math.tanh(z), None, ci)
    resid_ci = None if half is None else (math.exp(natural[-1] - half[-1]), math.exp(natural[-1] + half[-1]))
    if half is None:
        notes.append("the likelihood is not curved at the optimum in every variance direction: "
                     "no intervals for the SDs")
    loglik = -0.5 * found.neg2ll
    n_eff = design.n_obs - (len(design.beta_names) if design.estimation == "REML" else 0)
    k = design.n_params
    effects = _series_effects(design, found, separate)
    if design.estimation == "REML":
        notes.append("REML log-likelihoods compare only models with the same fixed effects")
    return PopulationFit(
        model=design.form.id, status="converged", message=found.message, estimation=design.estimation,
        error=design.error, algorithm=algorithm, random=design.random,
        covariance=design.covariance, shifted=design.shifted, held=dict(design.held), conditions=design.conditions,
        time_origin=design.origin, fixed=fixed,
        fixed_cov=tuple(tuple(float(v) for v in row) for row in cov_beta) if cov_beta is not None else (),
        random_sd=random_sd, correlations=correlations,
        residual_sd=Estimate(sigma, None, resid_ci), loglik=loglik, aic=-2.0 * loglik + 2.0 * k,
        bic=-2.0 * loglik + math.log(n_eff) * k, n_obs=design.n_obs, n_params=k, iterations=found.iterations,
        series=effects, notes=tuple(notes))


def fixed_df(design: MixedDesign, name: str) -> int:
    """Degrees of freedom of a fixed effect's t interval, by containment (as nlme does).

    A constant with a random deviation per series is estimated between series: its DF is the number
    of series less the fixed effects of that constant. Others are estimated within series: the
    points less every fixed effect and every series' random coefficients.
    """
    constant = name.split(":", 1)[0]
    if constant in design.random:
        own = sum(1 for n in design.beta_names if n.split(":", 1)[0] == constant)
        return max(design.n_series - own, 1)
    return max(design.n_obs - len(design.beta_names) - design.n_series * len(design.random), 1)


def _interval_halfwidths(design: MixedDesign, wk: object, natural: Array) -> Array | None:
    """1.96 × SE of the natural variance coordinates from the curvature of −2ℓ of the LME step."""
    q = len(design.random)

    def f(x: Array) -> float:
        psi, sigma = from_natural(x, q, design.covariance)
        return linear_neg2ll(wk, psi, sigma, design.n_obs, design.estimation)  # type: ignore[arg-type]

    n = natural.size
    hess = np.zeros((n, n))
    step = 1e-3  # central differences of −2ℓ: smaller steps drown in its rounding near |ρ| → 1
    f0 = f(natural)
    for i in range(n):
        for j in range(i, n):
            ei, ej = np.eye(n)[i] * step, np.eye(n)[j] * step
            if i == j:
                hess[i, i] = (f(natural + ei) - 2 * f0 + f(natural - ei)) / step**2
            else:
                hess[i, j] = hess[j, i] = (f(natural + ei + ej) - f(natural + ei - ej)
                                           - f(natural - ei + ej) + f(natural - ei - ej)) / (4 * step**2)
    if not np.all(np.isfinite(hess)):
        return None
    try:
        cov = 2.0 * np.linalg.inv(hess)  # −2ℓ: the information is half its Hessian
    except np.linalg.LinAlgError:
        return None
    var = np.diag(cov)
    if np.any(var <= 0):
        return None
    return Z95 * np.sqrt(var)


def _series_effects(design: MixedDesign, found: Optimum, separate: Sequence[FitResult]) -> tuple[SeriesEffects, ...]:
    phi = design.constants(found.beta, found.b)
    phi_pop = design.constants(found.beta, np.zeros_like(found.b))
    h_series, _ = design.evaluate(phi)
    h_pop, _ = design.evaluate(phi_pop)
    out = []
    for i, name in enumerate(design.names):
        n = int(design.counts[i])
        sep = separate[i]
        out.append(SeriesEffects(
            name=name, group=design.groups[i],
            constants={**{c: float(phi[i, j]) for j, c in enumerate(design.free)}, **design.held},
            deviations={c: float(found.b[i, j]) for j, c in enumerate(design.random)},
            separate={c: float(v) for c, v in sep.values.items()} if sep.success else None,
            t=tuple(float(v) + design.origin for v in design.t[i, :n]),
            residual_population=tuple(float(v) for v in (design.y[i, :n] - h_pop[i, :n])),
            residual_series=tuple(float(v) for v in (design.y[i, :n] - h_series[i, :n])),
        ))
    return tuple(out)
