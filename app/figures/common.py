"""Shared pieces of every panel: the base layout, axis titles, observation and highlight traces."""

from __future__ import annotations

from typing import Any, Mapping, Sequence

from app import theme

Figure = dict[str, Any]
POINTS = "points"        # meta of traces whose points are observations (customdata = [index, row])
HIGHLIGHT = "highlight"  # meta of the trace that marks the observation under the pointer


def axis_title(quantity: str, unit: str) -> str:
    """'Dry weight [g/L]'; a quantity without a unit says so rather than leaving it blank."""
    return f"{quantity} [{unit}]" if unit else f"{quantity} [no unit given]"


def rate_unit(value_unit: str, time_unit: str) -> str:
    if value_unit and time_unit:
        return f"{value_unit} per {time_unit}"
    if time_unit:
        return f"per {time_unit}"
    return value_unit


def base_layout(x_title: str, y_title: str, *, uirevision: str | None = None, title: str = "") -> dict[str, Any]:
    axis = {
        "showline": True, "linecolor": theme.MUTED, "ticks": "outside", "tickcolor": theme.MUTED,
        "gridcolor": theme.GRID, "zeroline": False, "automargin": True,
        "title": {"font": {"size": 13}},
    }
    return {
        "title": {"text": title, "font": {"size": 14}, "x": 0.0, "xanchor": "left", "y": 0.98} if title else None,
        "xaxis": {**axis, "title": {"text": x_title, "font": {"size": 13}}},
        "yaxis": {**axis, "title": {"text": y_title, "font": {"size": 13}}},
        "font": {"family": theme.FONT, "color": theme.INK, "size": 12},
        "paper_bgcolor": theme.PAPER,
        "plot_bgcolor": theme.PAPER,
        "margin": {"l": 8, "r": 34, "t": 30 if title else 10, "b": 8},
        "modebar": {"orientation": "v", "bgcolor": "rgba(255,255,255,0.8)", "color": theme.MUTED,
                    "activecolor": theme.INK},
        "legend": {"orientation": "h", "yanchor": "bottom", "y": 1.0, "x": 0.0, "font": {"size": 11},
                   "bgcolor": "rgba(255,255,255,0.7)"},
        "hovermode": "closest",
        "uirevision": uirevision,
        "showlegend": True,
    }


def observation_trace(x: Sequence[float | None], y: Sequence[float | None], index: Sequence[int],
                      rows: Sequence[int], used: Sequence[bool], *, name: str, hover: str) -> dict[str, Any]:
    """Observations: filled when used, open and grey when excluded; customdata = [index, row]."""
    return {
        "type": "scatter",
        "mode": "markers",
        "name": name,
        "x": list(x),
        "y": list(y),
        "customdata": [[int(i), int(r)] for i, r in zip(index, rows)],
        "marker": {
            "size": 7,
            "color": [theme.INK if u else theme.MUTED for u in used],
            "symbol": ["circle" if u else "circle-open" for u in used],
            "line": {"width": 1.2, "color": [theme.INK if u else theme.MUTED for u in used]},
        },
        "hovertemplate": hover + "<extra></extra>",
        "meta": POINTS,
    }


def highlight_trace() -> dict[str, Any]:
    """An empty trace that the page's script fills with the observation under the pointer."""
    return {
        "type": "scatter", "mode": "markers", "x": [], "y": [], "name": "under the pointer",
        "showlegend": False, "hoverinfo": "skip", "meta": HIGHLIGHT,
        "marker": {"size": 16, "symbol": "circle-open", "color": theme.HIGHLIGHT, "line": {"width": 2.5}},
    }


SYMBOLS = ("circle", "square", "diamond", "triangle-up", "cross", "x")


def fit_styles(fits: Sequence[Mapping[str, Any]]) -> list[dict[str, str]]:
    """Colour, dash and marker of each fit: one colour per form in every panel; when both methods
    are shown, the dash tells them apart (solid: trajectory, dotted: increments)."""
    models: list[str] = []
    for f in fits:
        if f["model"] not in models:
            models.append(f["model"])
    both = len({f["method"] for f in fits}) > 1
    out = []
    for f in fits:
        k = models.index(f["model"])
        colour, dash = theme.form_style(k)
        if both:
            dash = "solid" if f["method"] == "trajectory" else "dot"
        symbol = SYMBOLS[k % len(SYMBOLS)] + ("-open" if both and f["method"] == "increments" else "")
        out.append({"colour": colour, "dash": dash, "symbol": symbol})
    return out


def message_figure(text: str) -> Figure:
    """A blank panel that says why it is blank."""
    layout = base_layout("", "")
    layout["xaxis"].update(visible=False)
    layout["yaxis"].update(visible=False)
    layout["annotations"] = [{
        "text": text, "xref": "paper", "yref": "paper", "x": 0.5, "y": 0.5, "showarrow": False,
        "font": {"size": 13, "color": theme.MUTED},
    }]
    layout["showlegend"] = False
    return {"data": [], "layout": layout}


def rows_or_positions(rows: Sequence[int] | None, n: int) -> list[int]:
    return list(rows) if rows else list(range(1, n + 1))
