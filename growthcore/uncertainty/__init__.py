"""Uncertainty of a fit: bootstrap by residual resampling, intervals for derived quantities, forecasts."""

from __future__ import annotations

from growthcore.uncertainty.bootstrap import (
                                              DEFAULT_RESAMPLES,
                                              DEFAULT_SEED,
                                              BootstrapResult,
                                              bootstrap,
                                              bootstrap_chunks,
)
from growthcore.uncertainty.caution import FORECAST_CAUTION
from growthcore.uncertainty.derived_ci import derived_intervals
from growthcore.uncertainty.forecast import Forecast, forecast

__all__ = ["bootstrap", "bootstrap_chunks", "BootstrapResult", "DEFAULT_RESAMPLES", "DEFAULT_SEED",
           "derived_intervals", "forecast", "Forecast", "FORECAST_CAUTION"]
