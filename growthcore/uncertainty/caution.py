"""The caution that goes with every forecast and derived time; the app and the README show this text."""

from __future__ import annotations

FORECAST_CAUTION = (
    "Forecasts from a fitted growth law are unreliable outside the observed range of times and states. "
    "For food safety and shelf life, pathogen growth, harvest quotas or public health decisions, use "
    "validated methods and defer to local regulations and qualified professionals."
)
