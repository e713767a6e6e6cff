"""Hovering an observation marks it in every panel; done in the browser (assets/linked.js), which
rings the point in each graph whose hover is an input here (ids.GRAPHS)."""

from __future__ import annotations

from dash import ClientsideFunction, Dash, Input, Output

from .. import ids


def register(app: Dash) -> None:
    app.clientside_callback(
        ClientsideFunction(namespace="growthcore_linked", function_name="highlight"),
        Output(ids.HIGHLIGHT, "data"),
        *[Input(g, "hoverData") for g in ids.GRAPHS],
        prevent_initial_call=True,
    )
