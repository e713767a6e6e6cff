"""The key of the chosen forms: one list beside the panels instead of a legend inside each plot.

Each entry shows the form's marker and line as every panel draws them (colour, symbol, dash), so a
form is recognised in all panels, in the exports and in the report by the same mark.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from dash import html

from growthcore.figures import theme

#: Unicode marks for plotly's marker symbols (filled, and open for "-open").
GLYPHS = {"circle": ("●", "○"), "square": ("■", "□"), "diamond": ("◆", "◇"), "triangle-up": ("▲", "△"),
          "cross": ("✚", "✚"), "x": ("✖", "✕")}
#: CSS border styles standing in for plotly's dashes.
BORDERS = {"solid": "solid", "dot": "dotted", "dash": "dashed", "dashdot": "dashed", "longdash": "dashed",
           "longdashdot": "dashed"}


def glyph(symbol: str) -> str:
    base, _, _ = symbol.partition("-open")
    filled, hollow = GLYPHS.get(base, ("●", "○"))
    return hollow if symbol.endswith("-open") else filled


def _mark(colour: str, symbol: str, dash: str | None) -> html.Span:
    parts = []
    if dash:
        parts.append(html.Span(className="key-line", style={"borderTopColor": colour,
                                                            "borderTopStyle": BORDERS.get(dash, "solid")}))
    parts.append(html.Span(glyph(symbol), className="key-glyph", style={"color": colour}))
    return html.Span(parts, className="key-mark", **{"aria-hidden": "true"})


def form_key_view(entries: Sequence[Mapping[str, Any]], *, capacity: bool) -> list[Any]:
    """The key's items: the observations, each fit (failed ones say so) and the K line."""
    items: list[Any] = [
        html.Li([_mark(theme.INK, "circle", None), "observed"], className="key-item"),
        html.Li([_mark(theme.MUTED, "circle-open", None), "excluded"], className="key-item"),
    ]
    for e in entries:
        label = e["label"] if e.get("drawn") else f"{e['label']}: {e.get('status') or 'not fitted'}, see panel 6"
        items.append(html.Li([_mark(e["colour"], e["symbol"], e["dash"]), label],
                             className="key-item" + ("" if e.get("drawn") else " key-failed"),
                             title=e["label"]))
    if capacity:
        items.append(html.Li([html.Span(html.Span(className="key-line key-capacity"), className="key-mark",
                                        **{"aria-hidden": "true"}), "K estimate"], className="key-item"))
    return [html.Ul(items, className="key-list")]
