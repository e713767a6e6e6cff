"""The population panel: a mixed-effects fit over the series of the file, its table, curves, forest
plot and the likelihood-ratio test between the fitted structure and one the user picks.

Every number comes from :mod:`growthcore.mixed`; the fit runs in this request and its result is
kept in the tab (dcc.Store). The size limit is the server's own configuration.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from dash import Dash, Input, Output, State, html
from dash.exceptions import PreventUpdate

from growthcore.errors import GrowthcoreInputError
from growthcore.figures.population import forest_plot, population_curves
from growthcore.limits import DEFAULT, refuse
from growthcore.mixed import PopulationFit, fit_population, likelihood_ratio_test
from growthcore.mixed.curves import forest_rows, population_view
from growthcore.models import get_form

from .. import ids
from ..heavy import direct, runner_of
from .data import server_limits
from .series.read import series_from_plain

EMPTY = {"data": [], "layout": {}}


def _group_map(batch: Mapping[str, Any], groups: Mapping[str, Any] | None) -> dict[str, str]:
    if not groups or groups.get("key") != batch.get("key"):
        return {}
    return dict(groups.get("groups", {}))


def constant_choices(form_id: str | None, batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None,
                     current_random: Sequence[str] | None) -> tuple[Any, ...]:
    """Outputs: random options and value, shift options, LR random options, LR shift options."""
    if not form_id:
        raise PreventUpdate
    names = list(get_form(form_id).param_names)
    options = [{"label": n, "value": n} for n in names]
    random = [n for n in (current_random or []) if n in names] or (["K"] if "K" in names else names[:1])
    has_groups = bool(batch and _group_map(batch, groups))
    shift = options if has_groups else [{"label": n, "value": n, "disabled": True} for n in names]
    return options, random, shift, options, shift


def request_of(form_id: str, random: Sequence[str], covariance: str, estimation: str, shifted: Sequence[str],
               settings: Mapping[str, Any] | None) -> dict[str, Any]:
    return {"model": form_id, "random": list(random), "covariance": covariance, "estimation": estimation,
            "shifted": list(shifted), "error": (settings or {}).get("error", "additive")}


def fit_request(request: Mapping[str, Any], batch: Mapping[str, Any], groups: Mapping[str, Any] | None,
                *, limit: int = DEFAULT.max_population_cells, run: Any = direct) -> PopulationFit:
    """The mixed-effects fit the request asks for over every series of the batch store (a heavy job
    through ``run``), refused over ``limit`` series × points of the longest series."""
    series = [series_from_plain(d) for d in batch["series"]]
    cells = len(series) * max((len(s) for s in series), default=0)
    if cells > limit:
        raise refuse("series × points of the longest series", cells, limit, name="population fit")
    mapping = _group_map(batch, groups)
    labels = [mapping.get(s.name, "no group") for s in series] if mapping else None
    if request["shifted"] and not mapping:
        raise GrowthcoreInputError("a constant shifted by condition needs replicate groups: make them above")
    return run("the population fit", fit_population, series, request["model"], random=request["random"],
               covariance=request["covariance"], estimation=request["estimation"], error=request["error"],
               groups=labels, shifted=request["shifted"])


def run_population(n_clicks: int | None, batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None,
                   form_id: str, random: Sequence[str], covariance: str, estimation: str, shifted: Sequence[str],
                   settings: Mapping[str, Any] | None, *, limit: int = DEFAULT.max_population_cells,
                   run: Any = direct) -> tuple[Any, Any]:
    """Outputs: the population store and the status line."""
    if not n_clicks or not batch:
        raise PreventUpdate
    request = request_of(form_id, random or [], covariance, estimation, shifted or [], settings)
    try:
        fitted = fit_request(request, batch, groups, limit=limit, run=run)
    except GrowthcoreInputError as exc:
        return None, html.Span([html.Strong("Not fitted. "), str(exc).splitlines()[0]], className="batch-error")
    store = {"key": batch["key"], "request": request, "fit": fitted.to_dict()}
    if not fitted.success:
        return store, html.Span([html.Strong("The population fit failed. "), fitted.message], className="batch-error")
    return store, (f"{fitted.model}, {fitted.estimation}, random {', '.join(fitted.random)}: converged "
                   f"over {len(fitted.series)} series and {fitted.n_obs} points.")


def _fmt(x: float | None) -> str:
    return "–" if x is None or x != x else f"{x:.5g}"


def _ci(ci: Sequence[float] | None) -> str:
    return "–" if not ci or any(v is None or v != v for v in ci) else f"{ci[0]:.5g} to {ci[1]:.5g}"


def result_table(fit: PopulationFit) -> html.Div:
    """Fixed effects, random-effect SDs and correlations, residual SD, likelihood and criteria."""
    head = html.Tr([html.Th(h) for h in ("", "estimate", "SE", "95% interval")])
    rows = [html.Tr([html.Td(f"population {n}" if ":" not in n else f"shift of {n.replace(':', ' in ')}"),
                     html.Td(_fmt(e.value)), html.Td(_fmt(e.se)), html.Td(_ci(e.ci95))]) for n, e in fit.fixed.items()]
    rows += [html.Tr([html.Td(f"SD of {n} between series"), html.Td(_fmt(e.value)), html.Td("–"),
                      html.Td(_ci(e.ci95))]) for n, e in fit.random_sd.items()]
    rows += [html.Tr([html.Td(f"correlation {n}"), html.Td(_fmt(e.value)), html.Td("–"), html.Td(_ci(e.ci95))])
             for n, e in fit.correlations.items()]
    if fit.residual_sd is not None:
        rows.append(html.Tr([html.Td("residual SD"), html.Td(_fmt(fit.residual_sd.value)), html.Td("–"),
                             html.Td(_ci(fit.residual_sd.ci95))]))
    crit = (f"log-likelihood {_fmt(fit.loglik)} ({fit.estimation}), AIC {_fmt(fit.aic)}, BIC {_fmt(fit.bic)}, "
            f"{fit.n_params} parameters, {fit.n_obs} points")
    return html.Div([
        html.Table([html.Thead(head), html.Tbody(rows)], className="table population-table"),
        html.P(crit, className="hint"),
        html.P(f"Algorithm: {fit.algorithm}. {fit.message}.", className="hint"),
        *[html.P(n, className="hint") for n in fit.notes],
    ])


def render(store: Mapping[str, Any] | None, constant: str | None, batch: Mapping[str, Any] | None
           ) -> tuple[Any, Any, Any, Any, Any]:
    """Outputs: table, curves figure, forest figure, forest options and value."""
    if not store or not batch or store.get("key") != batch.get("key"):
        return None, EMPTY, EMPTY, [], None
    fitted = PopulationFit.from_dict(store["fit"])
    if not fitted.success:
        return None, EMPTY, EMPTY, [], None
    names = [n for n in fitted.series[0].constants] if fitted.series else []
    constant = constant if constant in names else (fitted.random[0] if fitted.random else names[0])
    observed = {}
    for d in batch["series"]:
        s = series_from_plain(d)
        observed[s.name] = (s.t, s.p)
    unit = batch.get("value_unit") or ""
    t_unit = batch.get("time_unit") or ""
    curves = population_curves(population_view(fitted, observed),
                               time_label=f"time ({t_unit})" if t_unit else "time",
                               value_label=f"value ({unit})" if unit else "value")
    forest = forest_plot(forest_rows(fitted, constant))
    return result_table(fitted), curves, forest, [{"label": n, "value": n} for n in names], constant


def lr_test(n_clicks: int | None, store: Mapping[str, Any] | None, batch: Mapping[str, Any] | None,
            groups: Mapping[str, Any] | None, random: Sequence[str] | None, shifted: Sequence[str] | None,
            *, limit: int = DEFAULT.max_population_cells, run: Any = direct) -> Any:
    """The likelihood-ratio test between the stored fit and the structure picked (refitted here)."""
    if not n_clicks:
        raise PreventUpdate
    if not store or not batch or store.get("key") != batch.get("key"):
        return html.Span("Fit the population first.", className="batch-error")
    first = PopulationFit.from_dict(store["fit"])
    if not first.success:
        return html.Span("The population fit failed: there is nothing to compare.", className="batch-error")
    other_request = {**store["request"], "random": list(random or []), "shifted": list(shifted or [])}
    if not other_request["random"]:
        return html.Span("Pick at least one random constant for the other model.", className="batch-error")
    try:
        other = fit_request(other_request, batch, groups, limit=limit, run=run)
    except GrowthcoreInputError as exc:
        return html.Span(str(exc).splitlines()[0], className="batch-error")
    if not other.success:
        return html.Span(f"The other model did not converge: {other.message}", className="batch-error")
    reduced, full = (other, first) if other.n_params < first.n_params else (first, other)
    test = likelihood_ratio_test(reduced, full)
    if test.status != "done":
        return html.Span(f"No test: {test.message}.", className="batch-error")
    return html.Div([
        html.Strong(f"{test.reduced} against {test.full}: "), test.message + ".",
        html.Div(f"log-likelihoods {reduced.loglik:.6g} and {full.loglik:.6g} ({full.estimation}).", className="hint"),
    ])


def register(app: Dash) -> None:
    heavy_run = runner_of(app)
    limit = server_limits(app).max_population_cells

    app.callback(
        Output(ids.POP_RANDOM, "options"), Output(ids.POP_RANDOM, "value"), Output(ids.POP_SHIFT, "options"),
        Output(ids.POP_LR_RANDOM, "options"), Output(ids.POP_LR_SHIFT, "options"),
        Input(ids.POP_FORM, "value"), Input(ids.BATCH_SERIES, "data"), Input(ids.BATCH_GROUPS, "data"),
        State(ids.POP_RANDOM, "value"),
    )(constant_choices)

    @app.callback(
        Output(ids.POP_STORE, "data"), Output(ids.POP_STATUS, "children"),
        Input(ids.POP_RUN, "n_clicks"),
        State(ids.BATCH_SERIES, "data"), State(ids.BATCH_GROUPS, "data"), State(ids.POP_FORM, "value"),
        State(ids.POP_RANDOM, "value"), State(ids.POP_COVARIANCE, "value"), State(ids.POP_ESTIMATION, "value"),
        State(ids.POP_SHIFT, "value"), State(ids.SETTINGS, "data"),
        running=[(Output(ids.POP_RUN, "disabled"), True, False)],
        prevent_initial_call=True,
    )
    def _fit(n, batch, groups, form_id, random, covariance, estimation, shifted, settings):
        return run_population(n, batch, groups, form_id, random, covariance, estimation, shifted, settings,
                              limit=limit, run=heavy_run)

    app.callback(
        Output(ids.POP_TABLE, "children"), Output(ids.POP_CURVES, "figure"), Output(ids.POP_FOREST, "figure"),
        Output(ids.POP_FOREST_CONSTANT, "options"), Output(ids.POP_FOREST_CONSTANT, "value"),
        Input(ids.POP_STORE, "data"), Input(ids.POP_FOREST_CONSTANT, "value"), State(ids.BATCH_SERIES, "data"),
    )(render)

    @app.callback(
        Output(ids.POP_LR_RESULT, "children"),
        Input(ids.POP_LR_RUN, "n_clicks"),
        State(ids.POP_STORE, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_GROUPS, "data"),
        State(ids.POP_LR_RANDOM, "value"), State(ids.POP_LR_SHIFT, "value"),
        running=[(Output(ids.POP_LR_RUN, "disabled"), True, False)],
        prevent_initial_call=True,
    )
    def _lr(n, store, batch, groups, random, shifted):
        return lr_test(n, store, batch, groups, random, shifted, limit=limit, run=heavy_run)
