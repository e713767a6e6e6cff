"""Replicate groups of the file's series (by a pattern or by condition columns) and the group filter."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, html

from growthcore.batch import groups_from_conditions, groups_from_pattern
from growthcore.errors import GrowthcoreInputError
from growthcore.io import ImportReport
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits

from ... import ids
from ...components.series import ALL_GROUPS
from ..data import server_limits


def compute_groups(mode: str | None, text: str | None, batch: Mapping[str, Any] | None, *,
                   limits: Limits = DEFAULT_LIMITS) -> tuple[dict[str, Any] | None, Any, list[dict[str, Any]], str]:
    """Outputs: the groups store, the message under the inputs, the group filter's options and value."""
    everything = [{"label": "all series", "value": ALL_GROUPS}]
    if not batch:
        return None, "", everything, ALL_GROUPS
    names = list(batch["names"])
    text = (text or "").strip()
    conditions = list(batch.get("conditions") or [])
    if mode in (None, "none") or not text:
        if mode == "pattern":
            hint = "Type a regular expression; its first group (or the whole match) names the group."
        elif mode == "column":
            hint = (f"Conditions of this file: {', '.join(conditions)}. Type one, or several separated by commas "
                    "(groups such as 1988 × F)." if conditions else
                    "This file has no condition column (a column constant within each series); group by a pattern.")
        else:
            hint = f"This file's series can be grouped by {', '.join(conditions)}." if conditions else ""
        return {"key": batch["key"], "groups": {}}, hint, everything, ALL_GROUPS
    try:
        if mode == "pattern":
            groups, notes = groups_from_pattern(names, text, max_length=limits.max_pattern)
        else:
            groups, notes = groups_from_conditions(ImportReport.from_dict(batch["report"]), text)
    except GrowthcoreInputError as exc:
        message = html.Div([html.Strong("Groups not made. "), str(exc).splitlines()[0]],
                           className="message message-error")
        return {"key": batch["key"], "groups": {}}, message, everything, ALL_GROUPS
    labels = list(dict.fromkeys(groups[n] for n in names if n in groups))
    counts = {g: sum(1 for n in names if groups.get(n) == g) for g in labels}
    options = everything + [{"label": f"{g} ({counts[g]})", "value": g} for g in labels]
    lines: list[Any] = [html.Div(f"{len(labels)} group(s) of {len(groups)} series.")]
    lines.extend(html.Div(n, className="message-warn-text") for n in notes)
    return {"key": batch["key"], "groups": groups}, lines, options, ALL_GROUPS


def members(batch: Mapping[str, Any], groups: Mapping[str, Any] | None, chosen: str | None) -> list[str]:
    """Series ids of the chosen group in file order (every id for all groups)."""
    names = list(batch["names"])
    if not chosen or chosen == ALL_GROUPS or not groups or groups.get("key") != batch.get("key"):
        return names
    mapping = groups.get("groups", {})
    return [n for n in names if mapping.get(n) == chosen]


def register(app: Dash) -> None:
    limits = server_limits(app)

    app.callback(
        Output(ids.BATCH_GROUPS, "data"), Output(ids.GROUP_MESSAGE, "children"), Output(ids.GROUP_FILTER, "options"),
        Output(ids.GROUP_FILTER, "value"),
        Input(ids.GROUP_MODE, "value"), Input(ids.GROUP_TEXT, "value"), Input(ids.BATCH_SERIES, "data"),
    )(lambda mode, text, batch: compute_groups(mode, text, batch, limits=limits))
