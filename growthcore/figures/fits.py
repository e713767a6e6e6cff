"""A series and its fits as plotly figures, for scripts and notebooks: the dashboard's own panels,
drawn by the same builders (see :func:`growthcore.figures.trajectory.trajectory_figure` and
:mod:`growthcore.figures.residuals`)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from growthcore.data import Series
from growthcore.figures.common import Figure
from growthcore.figures.plain import fit_to_store, quantity_name
from growthcore.figures.residuals import observed_predicted_figure, residual_fitted_figure, residual_time_figure
from growthcore.figures.trajectory import trajectory_figure
from growthcore.fit.result import FitResult
from growthcore.numbers import finite_list

#: The panels :func:`fit_figures` draws, in the dashboard's order.
FIT_PANELS = ("trajectory", "residuals", "residuals-fitted", "observed-predicted")


def fit_figure_dicts(series: Series, fits: Sequence[FitResult], *, capacity: float | None = None,
                     scale: str | None = None, path_from: str = "none",
                     models: Sequence[str] | None = None) -> dict[str, Figure]:
    """The four fit panels as plain figure dicts: observations with every fit, residuals against time and
    against fitted values, observed against predicted. ``capacity`` draws a K line; ``scale`` 'log' puts
    the state axes on a log scale; ``path_from`` ('none', 'first', 'last') iterates increments fits' maps;
    ``models`` is the order that gives each form its colour (the fits' own order when None)."""
    rows = list(series.rows) if series.rows else None
    plain = {"t": series.t.tolist(), "p": finite_list(series.p), "rows": rows}
    labels: dict[str, Any] = {"quantity": quantity_name(series.value_column, series.value_unit),
                              "value_unit": series.value_unit, "time_unit": series.time_unit, "rows": rows,
                              "uirevision": None, "h": None}
    stored = [fit_to_store(f, series) for f in fits]
    models = list(models or dict.fromkeys(f.model for f in fits)) or None
    return {
        "trajectory": trajectory_figure(plain, [bool(u) for u in series.used], stored, capacity, labels,
                                        models=models, scale=scale, path_from=path_from, editable=False),
        "residuals": residual_time_figure(stored, labels, models=models),
        "residuals-fitted": residual_fitted_figure(stored, labels, models=models, scale=scale),
        "observed-predicted": observed_predicted_figure(stored, labels, models=models, scale=scale),
    }


def fit_figures(series: Series, fits: Sequence[FitResult], *, capacity: float | None = None,
                scale: str | None = None, path_from: str = "none") -> dict[str, Any]:
    """:func:`fit_figure_dicts` as ``plotly.graph_objects.Figure`` objects (a notebook shows each by itself)."""
    import plotly.graph_objects as go  # validation costs time: only for callers who want figure objects

    return {name: go.Figure(fig) for name, fig in fit_figure_dicts(series, fits, capacity=capacity, scale=scale,
                                                                   path_from=path_from).items()}
