"""growthcore: turn a quantity measured over time into a defensible growth model.

The public API, for scripts and notebooks::

    import growthcore as gc

    imported = gc.load("cultures.csv")           # series and the import report
    fits = [gc.fit_model(imported.series[0], m) for m in ("logistic", "gompertz")]
    print(fits[0].summary())                      # constants, goodness of fit, diagnostics, notes
    table = gc.comparison_frame(fits)             # a pandas DataFrame ranked by AICc
    figures = gc.fit_figures(imported.series[0], fits)  # the app's fit panels as plotly figures

    batch = gc.fit_batch(gc.load_batch("plate.csv", groups="Strain"), ["logistic-curve"])
    frame = gc.batch_frame(batch)

Names are loaded on first use, so that ``import growthcore`` stays quick. ``fit_model`` and
``compare_fits`` are :func:`growthcore.fit.fit` and :func:`growthcore.compare.compare` under names
that no subpackage of growthcore shadows.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__version__ = "0.1.0"

#: Public name -> (module, attribute).
_EXPORTS = {
    "Series": ("growthcore.data", "Series"),
    "load": ("growthcore.io", "load_file"),
    "load_bytes": ("growthcore.io", "load_bytes"),
    "ImportResult": ("growthcore.io", "ImportResult"),
    "fit_model": ("growthcore.fit", "fit"),
    "FitResult": ("growthcore.fit", "FitResult"),
    "compare_fits": ("growthcore.compare", "compare"),
    "comparison_frame": ("growthcore.frames", "comparison_frame"),
    "load_batch": ("growthcore.batch", "load_batch"),
    "fit_batch": ("growthcore.batch", "fit_batch"),
    "batch_frame": ("growthcore.frames", "batch_frame"),
    "fit_figures": ("growthcore.figures.fits", "fit_figures"),
    "catalogue": ("growthcore.models.catalogue", "catalogue"),
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        module, attribute = _EXPORTS[name]
        value = getattr(import_module(module), attribute)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'growthcore' has no attribute {name!r}")
