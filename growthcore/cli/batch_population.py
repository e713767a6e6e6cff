"""``growthcore batch --random``: the mixed-effects fit over all series of the file, and its tests."""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import Any

from growthcore.batch.dataset import BatchData
from growthcore.errors import GrowthcoreInputError
from growthcore.limits import DEFAULT, refuse
from growthcore.mixed import PopulationFit, fit_population, likelihood_ratio_test
from growthcore.mixed.design import COVARIANCES, ESTIMATIONS


def population_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("population (mixed-effects) fit, JSON output")
    g.add_argument("--random", metavar="K[,r]",
                   help="fit one mixed-effects model over all series with a random deviation per series on these "
                        "constants; writes a 'population' object")
    g.add_argument("--estimation", choices=ESTIMATIONS, default="ML", help="ML (default) or REML")
    g.add_argument("--covariance", choices=COVARIANCES, default="diagonal",
                   help="independent (diagonal, default) or correlated (full) random deviations")
    g.add_argument("--hold", metavar="NAME=VALUE[,...]", help="constants held at a value for every series")
    g.add_argument("--shift", metavar="NAME[,...]",
                   help="constants shifted by condition (needs --groups or --pattern); each shift gets a "
                        "likelihood-ratio test")


def _names(text: str | None) -> list[str]:
    return [n.strip() for n in (text or "").split(",") if n.strip()]


def _held(text: str | None) -> dict[str, float]:
    out: dict[str, float] = {}
    for item in _names(text):
        name, sep, value = item.partition("=")
        try:
            out[name.strip()] = float(value)
        except ValueError:
            sep = ""
        if not sep:
            raise GrowthcoreInputError(f"--hold takes NAME=VALUE pairs such as r=0.5; got {item!r}")
    return out


def population_section(args: argparse.Namespace, data: BatchData, models: Sequence[str]) -> dict[str, Any]:
    """The ``population`` object: the fit's to_dict() plus likelihood-ratio tests of each dropped term."""
    if len(models) != 1:
        raise GrowthcoreInputError(f"--random fits one form; got --model {','.join(models)}")
    random, shifted, held = _names(args.random), _names(args.shift), _held(args.hold)
    if shifted and not data.groups:
        raise GrowthcoreInputError("--shift needs conditions: give --groups COL or --pattern REGEX")
    cells = len(data.series) * max((len(s) for s in data.series), default=0)
    if cells > DEFAULT.max_population_cells:
        raise refuse("series x longest series", cells, DEFAULT.max_population_cells, name="--random")
    groups = [data.group_of(s.name) or "none" for s in data.series] if data.groups else None
    common = dict(covariance=args.covariance, estimation=args.estimation, error=args.error, held=held, groups=groups)
    fitted = fit_population(data.series, models[0], random=random, shifted=shifted, **common)
    out = fitted.to_dict()
    tests = []
    if fitted.success:
        for name in random if len(random) > 1 else ():
            reduced = fit_population(data.series, models[0], random=[n for n in random if n != name],
                                     shifted=shifted, **common)
            tests.append(_test(reduced, fitted))
        for name in shifted:
            if args.estimation == "REML":
                continue  # REML likelihoods of different fixed effects do not compare (said in the notes)
            reduced = fit_population(data.series, models[0], random=random,
                                     shifted=[n for n in shifted if n != name], **common)
            tests.append(_test(reduced, fitted))
        if shifted and args.estimation == "REML":
            out["notes"].append("shifts by condition are tested under ML only: refit with --estimation ML")
    out["tests"] = tests
    return out


def _test(reduced: PopulationFit, full: PopulationFit) -> dict[str, Any]:
    return likelihood_ratio_test(reduced, full).to_dict()
