"""Shared pieces of every panel: the base layout, axis titles, observation and highlight traces."""

from __future__ import annotations

import base64
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from growthcore.figures import theme

Figure = dict[str, Any]


def packed(values: Sequence[float | None]) -> dict[str, str]:
    """Numbers for plotly.js as a typed array (base64 of 32-bit floats, None as NaN): a quarter of the JSON
    for point clouds that are only drawn (a float keeps 7 digits, far beyond a pixel)."""
    a = np.asarray([np.nan if v is None else v for v in values], dtype="<f4")
    return {"dtype": "f4", "bdata": base64.b64encode(a.tobytes()).decode("ascii")}


def preview_uid(role: str, label: str) -> str:
    """The trace id by which the browser's drag preview (assets/live.js) finds a trace it moves; plotly.js
    uses it in CSS selectors, so the label goes in as the hex digits of its UTF-8 bytes."""
    return f"{role}-{label.encode('utf-8').hex()}"


def unpacked(values: Any) -> list[float]:
    """The numbers of a trace array, packed (see :func:`packed`) or plain."""
    if isinstance(values, Mapping) and "bdata" in values:
        return np.frombuffer(base64.b64decode(values["bdata"]), dtype=f"<{values['dtype']}").astype(float).tolist()
    return [float("nan") if v is None else float(v) for v in values]
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
        "hovermode": "closest",
        "uirevision": uirevision,
        # The forms' key is one list beside the panels (and outside the plot in an export), never
        # a legend inside each small panel, where it took the room of the plot.
        "showlegend": False,
    }


#: Where an exported figure keeps its key: right of the plot area, top-aligned.
EXPORT_LEGEND: dict[str, Any] = {"orientation": "v", "x": 1.02, "xanchor": "left", "y": 1.0, "yanchor": "top",
                                 "font": {"size": 10}, "bgcolor": "rgba(0,0,0,0)", "tracegroupgap": 0,
                                 "itemsizing": "constant"}


def state_axis(axis: dict[str, Any], scale: str | None) -> dict[str, Any]:
    """An axis of the state p on a linear or log scale (``scale`` is 'log' or anything else)."""
    if scale == "log":
        axis.update(type="log")
        title = axis.get("title") or {}
        if isinstance(title, dict) and title.get("text") and "log scale" not in title["text"]:
            title["text"] = f"{title['text']}, log scale"
    return axis


def non_positive_note(values: Sequence[float | None], scale: str | None) -> list[dict[str, Any]]:
    """An annotation counting the values a log axis cannot show, or nothing."""
    if scale != "log":
        return []
    hidden = sum(1 for v in values if v is not None and v <= 0)
    if not hidden:
        return []
    return [{"text": f"{hidden} value{'s' if hidden != 1 else ''} ≤ 0 not shown on the log scale",
             "xref": "paper", "yref": "paper", "x": 1.0, "y": 0.0, "xanchor": "right", "yanchor": "bottom",
             "showarrow": False, "font": {"size": 11, "color": theme.MUTED}, "bgcolor": "rgba(255,255,255,0.8)"}]


def observation_trace(x: Sequence[float | None], y: Sequence[float | None], index: Sequence[int],
                      rows: Sequence[int], used: Sequence[bool], *, name: str, hover: str) -> dict[str, Any]:
    """Observations: filled when used, open and grey when excluded; customdata = [index, row]."""
    return {
        "type": "scatter",
        "mode": "markers",
        "name": name,
        "x": list(x),
        "y": list(y),
        "customdata": [[int(i), int(r)] for i, r in zip(index, rows, strict=True)],
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


def form_order(fits: Sequence[Mapping[str, Any]], models: Sequence[str] | None = None) -> list[str]:
    """The forms in the order that gives each its colour: the chosen forms, then any other fitted."""
    order = list(dict.fromkeys(models or []))
    for f in fits:
        if f["model"] not in order:
            order.append(f["model"])
    return order


def form_style(k: int, method: str, both: bool) -> dict[str, str]:
    """Colour, dash and marker of the k-th form fitted by ``method``; ``both`` when both methods show."""
    colour, dash = theme.form_style(k)
    if both:
        dash = "solid" if method == "trajectory" else "dot"
    symbol = SYMBOLS[k % len(SYMBOLS)] + ("-open" if both and method == "increments" else "")
    return {"colour": colour, "dash": dash, "symbol": symbol}


def fit_styles(fits: Sequence[Mapping[str, Any]], models: Sequence[str] | None = None) -> list[dict[str, str]]:
    """Colour, dash and marker of each fit: one colour per form in every panel; when both methods
    are shown, the dash tells them apart (solid: trajectory, dotted: increments).

    ``models`` (the chosen forms, in order) fixes the colours, so that a form keeps its colour when
    another form cannot be fitted; without it the order of ``fits`` decides.
    """
    order = form_order(fits, models)
    both = len({f["method"] for f in fits}) > 1
    return [form_style(order.index(f["model"]), f["method"], both) for f in fits]


def form_key(fits: Sequence[Mapping[str, Any]], models: Sequence[str] | None = None) -> list[dict[str, Any]]:
    """One entry per fit for the key beside the panels: label, style and whether it is drawn."""
    return [{"label": f["label"], "model": f["model"], "method": f["method"], **style,
             "drawn": f.get("status") == "converged", "status": f.get("status", "")}
            for f, style in zip(fits, fit_styles(fits, models), strict=True)]


def points_marker(style: Mapping[str, str], size: float = 6) -> dict[str, Any]:
    """The marker of a form's points: filled with a dark rim, or open in the form's colour."""
    open_ = style["symbol"].endswith("-open")
    return {"size": size, "color": style["colour"], "symbol": style["symbol"],
            "line": {"width": 1.5 if open_ else 0.5, "color": style["colour"] if open_ else theme.INK}}


def wrap(text: str, width: int = 50) -> str:
    """Plotly annotations do not wrap: break ``text`` into lines of at most ``width`` characters."""
    lines: list[str] = []
    for paragraph in text.split("\n"):
        line = ""
        for word in paragraph.split():
            if line and len(line) + 1 + len(word) > width:
                lines.append(line)
                line = word
            else:
                line = f"{line} {word}" if line else word
        lines.append(line)
    return "<br>".join(lines)


def message_figure(text: str, *, width: int = 50) -> Figure:
    """A blank panel that says why it is blank (and what to do), wrapped to fit a narrow panel."""
    layout = base_layout("", "")
    layout["xaxis"].update(visible=False)
    layout["yaxis"].update(visible=False)
    layout["annotations"] = [{
        "text": wrap(text, width), "xref": "paper", "yref": "paper", "x": 0.5, "y": 0.5, "showarrow": False,
        "font": {"size": 13, "color": theme.MUTED}, "align": "center",
    }]
    layout["meta"] = {"message": text}
    layout["showlegend"] = False
    return {"data": [], "layout": layout}


def rows_or_positions(rows: Sequence[int] | None, n: int) -> list[int]:
    return list(rows) if rows else list(range(1, n + 1))
