"""After a run over every series: the table as CSV, per-group summaries and the F test between groups.

The numbers come from the engine (growthcore.batch.summary.summarise_groups for the group means and
their intervals, growthcore.batch.group_difference_test for the joint fits and the F test); this module
only gathers the stored fits and lays the answers out.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from dash import Dash, Input, Output, State, ctx, dcc, html, no_update
from dash.exceptions import PreventUpdate

from growthcore.batch import group_difference_test
from growthcore.batch.summary import summarise_groups
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.plain import fit_label_parts
from growthcore.io import csv_text
from growthcore.models.catalogue import get_form

from .. import ids
from ..heavy import bounded_of, direct
from .series.read import series_from_plain
from .series.run import merged_fits

LEAD = ("series", "group", "form", "status", "message")
LARGE_TEST = 96  # series above which the F test's reply points to the command line as well


def _groups_of(batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None) -> dict[str, str]:
    if not batch or not groups or groups.get("key") != batch.get("key"):
        return {}
    return dict(groups.get("groups", {}))


def table_csv(batch: Mapping[str, Any], labels: Sequence[str], merged: Mapping[str, Mapping[str, Any]],
              groups: Mapping[str, str]) -> str:
    """One row per series and fitted form: ids, status and message, then every constant and metric."""
    keys: list[str] = []
    for label in labels:
        for entry in merged.get(label, {}).values():
            keys.extend(k for k in entry.get("values", {}) if k not in keys)
    rows = []
    for label in labels:
        fits = merged.get(label, {})
        for name in batch["names"]:
            entry = fits.get(name)
            if entry is None:
                continue
            values = entry.get("values", {})
            rows.append([name, groups.get(name, ""), label, entry.get("status"), entry.get("message"),
                         *(values.get(k) for k in keys)])
    return csv_text([*LEAD, *keys], rows)


def constants_of(label: str | None) -> list[str]:
    """The constants of a fitted form's label (a curve's p0 among them)."""
    if not label:
        return []
    try:
        return list(get_form(fit_label_parts(label)[0]).param_names)
    except GrowthcoreInputError:
        return []


def testable(label: str | None) -> list[str]:
    """The constants the F test can compare between groups (p0 is each series' own in the joint fits)."""
    return [c for c in constants_of(label) if c != "p0"]


def summary_rows(label: str, merged: Mapping[str, Mapping[str, Any]], groups: Mapping[str, str],
                 order: Sequence[str]) -> list[dict[str, Any]]:
    """Per constant and group: converged fits, failed fits, mean, SD and the 95% interval of the mean."""
    fits = merged.get(label, {})
    labels = dict.fromkeys(groups[n] for n in order if n in groups)
    members = {g: [n for n in order if groups.get(n) == g] for g in labels}
    values = {n: (e.get("values", {}) if e.get("status") == "converged" else None) for n, e in fits.items()}
    constants = constants_of(label)
    summaries = summarise_groups(fit_label_parts(label)[0], constants, members, values)
    summaries.sort(key=lambda s: constants.index(s.parameter))  # constant by constant, groups in file order
    return [{"constant": s.parameter, "group": s.group, "n": s.n, "failed": s.n_failed, "mean": s.mean, "sd": s.sd,
             "ci": s.ci95} for s in summaries]


def _fmt(x: float | None) -> str:
    return "–" if x is None or not math.isfinite(x) else f"{x:.4g}"


def summary_view(label: str | None, merged: Mapping[str, Mapping[str, Any]], groups: Mapping[str, str],
                 order: Sequence[str]) -> Any:
    if not label or label not in merged:
        return ""
    if not groups:
        return html.P("Make replicate groups (in the series picker above) to see group means here.", className="hint")
    rows = summary_rows(label, merged, groups, order)
    head = html.Tr([html.Th(h) for h in ("constant", "group", "fits", "failed", "mean", "SD",
                                         "95% interval of the mean")])
    body = [html.Tr([html.Td(r["constant"]), html.Td(r["group"]), html.Td(str(r["n"])), html.Td(str(r["failed"])),
                     html.Td(_fmt(r["mean"])), html.Td(_fmt(r["sd"])),
                     html.Td(f"{_fmt(r['ci'][0])} to {_fmt(r['ci'][1])}" if r["ci"] else "–")]) for r in rows]
    return html.Div([
        html.H4(f"Group means of {label}"),
        html.Div(html.Table([html.Thead(head), html.Tbody(body)], className="group-table"), className="table-box"),
        html.P("Each converged fit counts as one replicate: mean ± t(0.975; n − 1)·SD/√n. Failed fits are left out "
               "and counted.", className="hint"),
    ])


def ftest_view(batch: Mapping[str, Any] | None, groups: Mapping[str, str], label: str | None,
               constant: str | None, merged: Mapping[str, Mapping[str, Any]], *, run: Any = direct) -> Any:
    """Joint fits with ``constant`` per group and shared, and the extra-sum-of-squares F test."""
    if not batch or not label or not constant:
        return html.Div("Choose a fitted form and a constant first.", className="message message-error")
    fits = merged.get(label, {})
    chosen = [n for n in batch["names"] if n in groups and fits.get(n, {}).get("status") == "converged"]
    left = [n for n in batch["names"] if n in groups and n not in chosen]
    if len(set(groups[n] for n in chosen)) < 2:
        return html.Div("The F test needs at least two groups with converged fits.", className="message message-error")
    by_name = {d["name"]: d for d in batch["series"]}
    series = [series_from_plain(by_name[n]) for n in chosen]
    model, error = fit_label_parts(label)
    try:
        test = run("the F test", group_difference_test, series, [groups[n] for n in chosen], model, constant,
                   error=error)
    except GrowthcoreInputError as exc:
        return html.Div(str(exc).splitlines()[0], className="message message-error")
    if test.status != "done" or test.full is None:
        return html.Div(["The F test could not be made: ", test.message], className="message message-error")
    estimates = [html.Li(f"{g}: {constant} = {_fmt(test.full.value(constant, g))}") for g in test.groups]
    verdict = ("the groups differ" if test.p_value < 0.05
               else "no evidence that the groups differ") + " at the 5% level"
    notes = [html.P(f"Left out (in no group or their own fit failed): {', '.join(left[:10])}"
                    + (" ..." if len(left) > 10 else ""), className="hint")] if left else []
    if len(chosen) > LARGE_TEST:
        notes.append(html.P(f"For hundreds of series, growthcore batch FILE --model {model} --groups COL "
                            f"--test {constant} --out RESULT.json makes the same test from the command line.",
                            className="hint"))
    return html.Div([
        html.P([html.Strong(f"F({test.df_reduced - test.df_full}, {test.df_full}) = {test.f:.4g}, "
                            f"p = {test.p_value:.3g}: "),
                verdict, "."]),
        html.P(f"Joint fits of the whole paths ({error} error) of {len(chosen)} series: every group has its own "
               f"{', '.join(n for n in get_form(model).param_names if n != constant)} and each series its own "
               f"starting level; {constant} is fitted per group (SSE {test.sse_full:.5g}) and then shared by all "
               f"(SSE {test.sse_reduced:.5g}). For nonlinear models the F reference is approximate.", className="hint"),
        html.Ul(estimates),
        *notes,
    ], className="message message-ok")


def ftest_reply(trigger: Any, clicks: int | None, fits: Mapping[str, Any] | None, label: str | None,
                groups: Mapping[str, Any] | None, job: Mapping[str, Any] | None, batch: Mapping[str, Any] | None,
                constant: str | None, **options: Any) -> Any:
    """The F test's reply when asked for; any change of the file, the groups, the fits, the form or the
    constant clears a reply that belonged to the earlier choice. ``options`` go to :func:`ftest_view`."""
    if trigger != ids.FTEST_RUN:
        return ""
    if not clicks:
        raise PreventUpdate
    _, merged = merged_fits(fits, job, batch)
    return ftest_view(batch, _groups_of(batch, groups), label, constant, merged, **options)


def register(app: Dash) -> None:
    heavy_run = bounded_of(app)  # the test's result holds fitted forms, which stay in this process

    @app.callback(
        Output(ids.BATCH_TABLES, "hidden"), Output(ids.GROUP_SUMMARY, "children"),
        Output(ids.FTEST_CONSTANT, "options"), Output(ids.FTEST_CONSTANT, "value"),
        Input(ids.BATCH_FITS, "data"), Input(ids.BATCH_FORM, "value"), Input(ids.BATCH_GROUPS, "data"),
        State(ids.BATCH_JOB, "data"), State(ids.BATCH_SERIES, "data"), State(ids.FTEST_CONSTANT, "value"),
    )
    def _summary(fits, label, groups, job, batch, current):
        labels, merged = merged_fits(fits, job, batch)
        if not labels:
            return True, "", [], None
        constants = testable(label)
        value = current if current in constants else (constants[0] if constants else None)
        return (False, summary_view(label, merged, _groups_of(batch, groups), batch["names"]),
                [{"label": c, "value": c} for c in constants], value)

    @app.callback(
        Output(ids.FTEST_RESULT, "children"),
        Input(ids.FTEST_RUN, "n_clicks"),
        Input(ids.BATCH_FITS, "data"), Input(ids.BATCH_FORM, "value"), Input(ids.BATCH_GROUPS, "data"),
        Input(ids.BATCH_SERIES, "data"), Input(ids.FTEST_CONSTANT, "value"),
        State(ids.BATCH_JOB, "data"),
        prevent_initial_call=True,
    )
    def _ftest(clicks, fits, label, groups, batch, constant, job):
        return ftest_reply(ctx.triggered_id, clicks, fits, label, groups, job, batch, constant, run=heavy_run)

    @app.callback(
        Output(ids.BATCH_DOWNLOAD, "data"),
        Input(ids.BATCH_TABLE_BUTTON, "n_clicks"),
        State(ids.BATCH_FITS, "data"), State(ids.BATCH_GROUPS, "data"), State(ids.BATCH_JOB, "data"),
        State(ids.BATCH_SERIES, "data"),
        prevent_initial_call=True,
    )
    def _download(clicks, fits, groups, job, batch):
        labels, merged = merged_fits(fits, job, batch)
        if not clicks or not labels:
            return no_update
        stem = str(batch.get("source") or "series").rsplit(".", 1)[0] or "series"
        return dcc.send_string(table_csv(batch, labels, merged, _groups_of(batch, groups)), f"{stem}-every-series.csv")
