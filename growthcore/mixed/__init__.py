"""Nonlinear mixed-effects fits over replicate series: population constants plus random deviations.

``fit_population`` fits one model over many series; ``likelihood_ratio_test`` compares two nested fits.
"""

from growthcore.mixed.fit import ALGORITHMS, fit_population
from growthcore.mixed.lrtest import LikelihoodRatioTest, likelihood_ratio_test
from growthcore.mixed.result import Estimate, PopulationFit, SeriesEffects

__all__ = ["fit_population", "likelihood_ratio_test", "LikelihoodRatioTest", "PopulationFit", "SeriesEffects",
           "Estimate", "ALGORITHMS"]
