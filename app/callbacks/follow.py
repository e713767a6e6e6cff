"""The small parts of the page that follow new data or other points used, answered together: the list
of excluded points, panel 7's fields (cleared for other data, or those a reopened record names) and the
series' place in its file.

One callback instead of three: each callback a change sets off costs the browser a pass over every
component of the page as it starts and as it ends, and a series switch set off all three.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, State, ctx, no_update

from .. import ids
from ..components.exclusions import exclusion_items
from .dynamics.forecast import fresh_inputs
from .dynamics.reopened import panel_fields
from .series.choose import position_text

#: The inputs the series' place depends on besides the data.
PLACE_INPUTS = (f"{ids.BATCH_SERIES}.data", f"{ids.BATCH_GROUPS}.data", f"{ids.GROUP_FILTER}.value")


def follow(triggered: set[str], data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
           batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None, group: str | None,
           bound: Any, level: Any, amount: Any) -> tuple[Any, ...]:
    """Outputs: the exclusion list, panel 7's bound, level, forecast length and mode, resamples and seed,
    and the series' place.

    ``triggered`` holds the changed ``id.property`` names; empty for the page's first call, which draws
    the list and the place but leaves the forecast fields as the page has them."""
    first = not triggered
    new_data = f"{ids.DATA}.data" in triggered
    listed = exclusion_items(data, exclusions) if first or new_data or f"{ids.EXCLUSIONS}.data" in triggered \
        else no_update
    fields = panel_fields(data.get("later"), fresh_inputs(data, bound, level, amount)) \
        if new_data and data is not None else (no_update,) * 6
    place = position_text(data, batch, groups, group) if first or new_data or triggered & set(PLACE_INPUTS) \
        else no_update
    return (listed, *fields, place)


def register(app: Dash) -> None:
    app.callback(
        Output(ids.EXCLUSION_LIST, "children"),
        Output(ids.FC_BOUND, "value"), Output(ids.DYN_LEVEL, "value"), Output(ids.FC_AMOUNT, "value"),
        Output(ids.FC_MODE, "value"), Output(ids.BOOT_N, "value"), Output(ids.BOOT_SEED, "value"),
        Output(ids.SERIES_POSITION, "children"),
        Input(ids.DATA, "data"), Input(ids.EXCLUSIONS, "data"), Input(ids.BATCH_SERIES, "data"),
        Input(ids.BATCH_GROUPS, "data"), Input(ids.GROUP_FILTER, "value"),
        State(ids.FC_BOUND, "value"), State(ids.DYN_LEVEL, "value"), State(ids.FC_AMOUNT, "value"),
    )(lambda data, exclusions, batch, groups, group, bound, level, amount: follow(
        {p for p in ctx.triggered_prop_ids if p != "."}, data, exclusions, batch, groups, group, bound, level,
        amount))


__all__ = ["PLACE_INPUTS", "follow", "register"]
