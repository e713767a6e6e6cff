"""The model section: forms, custom rate terms, method, error model and the capacity estimate K."""

from __future__ import annotations

from dash import dcc, html

from growthcore.models import catalogue

from .. import ids

DEFAULT_FORMS = ("logistic", "gompertz", "ricker", "beverton-holt")
METHOD_OPTIONS = (
    ("increments", "Increments: regress the change per step"),
    ("trajectory", "Trajectory: least squares on the whole path"),
    ("both", "Both, side by side"),
)
K_MODES = (
    ("fitted", "fitted by every form (with a profile interval)"),
    ("held", "hold K at my estimate in every fit (live; kept when you switch series)"),
)


def form_options() -> list[dict[str, object]]:
    out: list[dict[str, object]] = []
    for form in catalogue():
        out.append({"label": html.Span([html.Span(form.title, className="form-title"),
                                        html.Span(form.equation, className="form-eq")]), "value": form.id})
    out.append({"label": html.Span([html.Span("Custom rate terms", className="form-title"),
                                    html.Span("Δp = b1·g1 + b2·g2 + …", className="form-eq")]), "value": "custom"})
    return out


def model_section() -> html.Section:
    return html.Section([
        html.H2("Model", className="section-title"),
        html.Fieldset([
            html.Legend("Forms to fit and compare"),
            dcc.Checklist(id=ids.FORMS, options=form_options(), value=list(DEFAULT_FORMS), className="forms",
                          inputClassName="check", labelClassName="check-label"),
            dcc.Checklist(id=ids.CONSTANT, options=[{"label": "also fit each difference form with a constant "
                                                              "term c (immigration or harvest)", "value": "c"}],
                          value=[], className="forms", inputClassName="check", labelClassName="check-label"),
        ], className="fieldset"),
        html.Label("Custom rate terms g(p; K), one per line", htmlFor=ids.TERMS, className="field-label"),
        dcc.Textarea(id=ids.TERMS, value="p*(1 - p/K)", rows=2, className="terms", spellCheck=False,
                     placeholder="e.g. p*(1 - p/K)"),
        html.Div(id=ids.TERMS_MESSAGE, className="terms-message", role="status", **{"aria-live": "polite"}),
        html.Fieldset([
            html.Legend("Method"),
            dcc.RadioItems(id=ids.METHOD, options=[{"label": t, "value": v} for v, t in METHOD_OPTIONS],
                           value="increments", inputClassName="check", labelClassName="check-label"),
        ], className="fieldset"),
        html.Fieldset([
            html.Legend("Error model of the trajectory method"),
            dcc.RadioItems(id=ids.ERROR, options=[
                {"label": "additive (constant spread)", "value": "additive"},
                {"label": "log (spread grows with p)", "value": "log"}],
                value="additive", inputClassName="check", labelClassName="check-label", inline=True),
        ], className="fieldset"),
        html.Fieldset([
            html.Legend("Capacity estimate K"),
            html.Div([
                html.Label("K =", htmlFor=ids.K_INPUT, className="k-label"),
                dcc.Input(id=ids.K_INPUT, type="number", debounce=True, min=0, step="any", className="k-input"),
                html.Span(id=ids.K_NOTE, className="k-unit"),
                html.Button("From a fit", id=ids.K_FROM_FIT, n_clicks=0, className="button button-small",
                            type="button", title="K of the first chosen form that has one, fitted freely by "
                                                 "the increments method"),
            ], className="k-row"),
            dcc.Slider(id=ids.K_SLIDER, min=0, max=10, step=None, value=None, updatemode="mouseup",
                       tooltip={"always_visible": False, "placement": "bottom"}, marks=None,
                       className="k-slider"),
            dcc.RadioItems(id=ids.K_MODE, options=[{"label": t, "value": v} for v, t in K_MODES], value="fitted",
                           inputClassName="check", labelClassName="check-label"),
            html.P(id=ids.LIVE_NOTE, className="hint"),
        ], className="fieldset"),
    ], className="section", **{"aria-label": "Model"})
