"""Panel 6: the comparison table of every chosen form, sortable, with the best by AICc marked."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from dash import html

from .. import ids

#: Sortable columns: key in a comparison row, header text, and what the header's tooltip says.
COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("n", "n", "points in the fit"),
    ("sse", "SSE", "sum of squared residuals on the fitted scale"),
    ("rmse", "RMSE", "root mean squared residual"),
    ("r2", "R² (states)", "centered R² of the states"),
    ("r2_uncentered", "uncentered R² (Δp)", "uncentered R² of the regression of the change per step (increments fits)"),
    ("aicc", "AICc", "small-sample Akaike criterion"),
    ("delta_aicc", "ΔAICc", "AICc minus the lowest AICc among comparable fits"),
    ("weight", "Akaike weight", "relative support among comparable fits"),
    ("bic", "BIC", "Bayesian information criterion"),
)
TEXT_COLUMNS = ("model", "status", "systematic_misfit")


def fmt(x: float | None, digits: int = 4) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "–"
    if isinstance(x, int):
        return str(x)
    return f"{x:.{digits}g}"


def parameter_lines(params: Mapping[str, Mapping[str, Any]], profile: Sequence[float | None] | None,
                    boot: Mapping[str, Sequence[float] | None] | None = None) -> list[Any]:
    out: list[Any] = []
    for name, p in params.items():
        value = fmt(p.get("value"))
        if p.get("fixed"):
            parts = [f"{name} = {value}", "(held)"]
        elif p.get("ci95") and None not in p["ci95"]:
            lo, hi = p["ci95"]
            parts = [f"{name} = {value}", f"[{fmt(lo)},", f"{fmt(hi)}]"]
        else:
            parts = [f"{name} = {value}", "[no interval]"]
        if p.get("at_bound"):
            parts.append("at bound")
        # a narrow table breaks a line between the value and its interval, never inside either
        pieces: list[Any] = []
        for piece in parts:
            pieces += [" ", html.Span(piece, className="nowrap")] if pieces else [html.Span(piece, className="nowrap")]
        out.append(html.Div(pieces, className="param"))
        if boot and not p.get("fixed") and boot.get(name):
            out.append(html.Div(f"{name} bootstrap [{fmt(boot[name][0])}, {fmt(boot[name][1])}]",
                                className="param param-profile"))
        if name == "K" and profile and not p.get("fixed"):
            lo, hi = profile[0], profile[1]
            text = f"K profile interval, F-calibrated cut [{fmt(lo)}, {fmt(hi) if hi is not None else 'open'}]"
            if len(profile) == 4:
                text += (f"; chi-square likelihood-ratio cut [{fmt(profile[2])}, "
                         f"{fmt(profile[3]) if profile[3] is not None else 'open'}]")
            out.append(html.Div(text, className="param param-profile"))
    return out


def cell(row: Mapping[str, Any], key: str) -> html.Td:
    """One number of the table; a "–" carries the reason it is missing (shown on hover and read aloud)."""
    value = row.get(key)
    digits = 3 if key == "weight" else 5 if key in ("aicc", "bic", "sse") else 4
    reason = (row.get("missing") or {}).get(key)
    if value is None and row.get("status") == "converged":
        reason = reason or ("ΔAICc and weights need a finite AICc in a group of comparable fits"
                            if key in ("delta_aicc", "weight") else "not defined for this fit")
    if value is None and reason:
        return html.Td(html.Abbr("–", title=reason), className="num", **{"aria-label": reason})
    return html.Td(fmt(value, digits), className="num")


def sort_rows(rows: Sequence[Mapping[str, Any]], sort: Mapping[str, Any] | None) -> list[Mapping[str, Any]]:
    """Rows ordered by the chosen column; missing values always last. No sort keeps the engine's order."""
    if not sort or not sort.get("column"):
        return list(rows)
    key = sort["column"]
    descending = bool(sort.get("descending"))
    present = [r for r in rows if r.get(key) is not None]
    missing = [r for r in rows if r.get(key) is None]
    present.sort(key=lambda r: (str(r[key]) if key in TEXT_COLUMNS else float(r[key])), reverse=descending)
    return [*present, *missing]


def _header(key: str, text: str, tip: str, sort: Mapping[str, Any] | None) -> html.Th:
    active = bool(sort and sort.get("column") == key)
    arrow = ("▼" if sort.get("descending") else "▲") if active and sort else "↕"
    state = ("descending" if sort.get("descending") else "ascending") if active and sort else "none"
    return html.Th(
        html.Button([text, html.Span(arrow, className="sort-arrow", **{"aria-hidden": "true"})],
                    id={"type": ids.SORT_BUTTON, "column": key}, className="sort-button", title=f"{tip}; sort",
                    n_clicks=0),
        scope="col", **{"aria-sort": state},
    )


def comparison_table(rows: Sequence[Mapping[str, Any]], fits: Sequence[Mapping[str, Any]],
                     sort: Mapping[str, Any] | None = None,
                     boot: Mapping[tuple, Mapping[str, Any]] | None = None) -> html.Table | html.P:
    """The table itself; ``rows`` are :func:`growthcore.compare.compare` rows as dicts."""
    if not rows:
        return html.P("No fits yet: pick at least one form.", className="muted")
    by_key = {(f["model"], f["method"], f["error"]): f for f in fits}
    head = html.Tr([
        html.Th("", scope="col", className="col-best"),
        _header("model", "Form (method)", "form and fitting method", sort),
        html.Th("Constants  [95% interval]", scope="col"),
        *[_header(k, t, tip, sort) for k, t, tip in COLUMNS],
        _header("systematic_misfit", "Misfit", "runs test and Durbin–Watson on the residuals", sort),
        html.Th("Status and warnings", scope="col"),
    ])
    body = []
    for r in sort_rows(rows, sort):
        f = by_key.get((r["model"], r["method"], r["error"]), {})
        label = f.get("label") or f"{r['model']} ({r['method']})"
        converged = r["status"] == "converged"
        misfit = r.get("systematic_misfit")
        notes = [html.Div(r["message"], className="status-message")] if not converged else []
        notes += [html.Div(w, className="warning") for w in r.get("warnings", [])]
        body.append(html.Tr([
            html.Td([html.Span("★ best AICc", className="best-badge"),
                     html.Div(f"among {r.get('group')}", className="best-group")] if r.get("best") else "",
                    className="col-best"),
            html.Th(label, scope="row", className="col-form"),
            html.Td(parameter_lines(r.get("parameters", {}), f.get("profile_interval"),
                                    (boot or {}).get((r["model"], r["method"], r["error"]))) if converged else "–"),
            *[cell(r, k) for k, _, _ in COLUMNS],
            html.Td("systematic" if misfit else "none" if misfit is False else "–",
                    className="misfit-yes" if misfit else ""),
            html.Td([html.Div("converged" if converged else "failed",
                              className="status-ok" if converged else "status-failed"), *notes], className="col-notes"),
        ], className="row-best" if r.get("best") else ("row-failed" if not converged else "")))
    return html.Table([html.Thead(head), html.Tbody(body)], className="comparison")
