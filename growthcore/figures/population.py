"""Population pictures: the population curve with its band beside each series' own curve, and a
forest plot of one constant (separate fits beside the shrunken values of the mixed-effects fit).

Both take the plain data of :func:`growthcore.mixed.curves.population_view` and
:func:`growthcore.mixed.curves.forest_rows` and return plotly figure dicts.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.figures import theme

Figure = dict[str, Any]
POPULATION_COLOUR = theme.INK
BAND_FILL = "rgba(31, 42, 48, 0.14)"


def _group_colours(groups: Sequence[str]) -> dict[str, str]:
    return {g: theme.FORM_COLOURS[i % len(theme.FORM_COLOURS)] for i, g in enumerate(dict.fromkeys(groups))}


def _axes(x_title: str, y_title: str) -> dict[str, Any]:
    axis = {"gridcolor": theme.GRID, "zeroline": False, "linecolor": theme.MUTED, "ticks": "outside"}
    return {"xaxis": {**axis, "title": {"text": x_title}}, "yaxis": {**axis, "title": {"text": y_title}}}


def population_curves(view: Mapping[str, Any], *, title: str = "", time_label: str = "t",
                      value_label: str = "value") -> Figure:
    """Observations and conditional curve of every series (thin, coloured by condition), and each
    condition's population curve (thick) with its 95% band.

    ``layout.meta`` lists the series drawn and the conditions, for tests and hover linking.
    """
    groups = [g["group"] for g in view["groups"]]
    colours = _group_colours(groups + [s["group"] for s in view["series"]])
    several = len(groups) > 1
    data: list[dict[str, Any]] = []
    for s in view["series"]:
        colour = colours[s["group"]]
        data.append({"type": "scatter", "mode": "lines", "x": view["t"], "y": s["curve_p"], "name": s["name"],
                     "legendgroup": s["group"], "showlegend": False, "opacity": 0.55,
                     "line": {"color": colour, "width": 1.2}, "customdata": [s["name"]] * len(view["t"]),
                     "hovertemplate": f"{s['name']}: own curve<br>t %{{x:.4g}}, p %{{y:.4g}}<extra></extra>"})
        data.append({"type": "scatter", "mode": "markers", "x": s["t"], "y": s["p"], "name": s["name"],
                     "legendgroup": s["group"], "showlegend": False,
                     "marker": {"color": colour, "size": 5, "opacity": 0.8}, "customdata": [s["name"]] * len(s["t"]),
                     "hovertemplate": f"{s['name']}<br>t %{{x:.4g}}, p %{{y:.4g}}<extra></extra>"})
    for g in view["groups"]:
        colour = colours[g["group"]] if several else POPULATION_COLOUR
        label = f"population {g['group']}" if several else "population"
        data.append({"type": "scatter", "mode": "lines", "x": view["t"], "y": g["lo"], "line": {"width": 0},
                     "hoverinfo": "skip", "showlegend": False, "legendgroup": label})
        data.append({"type": "scatter", "mode": "lines", "x": view["t"], "y": g["hi"], "line": {"width": 0},
                     "fill": "tonexty", "fillcolor": BAND_FILL, "name": f"{label}: 95% band", "legendgroup": label,
                     "hoverinfo": "skip"})
        data.append({"type": "scatter", "mode": "lines", "x": view["t"], "y": g["mid"], "name": label,
                     "legendgroup": label, "line": {"color": colour, "width": 3.5},
                     "hovertemplate": f"{label}<br>t %{{x:.4g}}, p %{{y:.4g}}<extra></extra>"})
    layout = {
        "title": {"text": title or "Population curve and each series' own curve", "x": 0.0, "xanchor": "left",
                  "font": {"size": 14}},
        "font": {"family": theme.FONT, "color": theme.INK, "size": 12}, "paper_bgcolor": theme.PAPER,
        "plot_bgcolor": theme.PAPER, "margin": {"l": 60, "r": 16, "t": 48, "b": 50}, "hovermode": "closest",
        "legend": {"orientation": "h", "y": -0.2}, "height": 420,
        "meta": {"series": [s["name"] for s in view["series"]], "groups": groups},
        **_axes(time_label, value_label),
    }
    return {"data": data, "layout": layout}


def forest_plot(forest: Mapping[str, Any], *, title: str = "") -> Figure:
    """One row per series: its separate-fit value (open) joined to its shrunken value (filled), with
    the population value as a vertical line and its 95% interval as a shaded strip.
    """
    rows = list(forest["rows"])
    names = [r["name"] for r in rows]
    link_x: list[float | None] = []
    link_y: list[str | None] = []
    for r in rows:
        if r["separate"] is not None and r["conditional"] is not None:
            link_x += [r["separate"], r["conditional"], None]
            link_y += [r["name"], r["name"], None]
    constant = forest["constant"]
    data: list[dict[str, Any]] = [
        {"type": "scatter", "mode": "lines", "x": link_x, "y": link_y, "line": {"color": theme.MUTED, "width": 1},
         "hoverinfo": "skip", "showlegend": False},
        {"type": "scatter", "mode": "markers", "x": [r["separate"] for r in rows], "y": names,
         "name": "separate fit", "customdata": names,
         "marker": {"symbol": "circle-open", "size": 9, "color": theme.FORM_COLOURS[1], "line": {"width": 2}},
         "hovertemplate": f"%{{y}}: {constant} %{{x:.4g}} (separate fit)<extra></extra>"},
        {"type": "scatter", "mode": "markers", "x": [r["conditional"] for r in rows], "y": names,
         "name": "mixed-effects (shrunken)", "customdata": names,
         "marker": {"symbol": "circle", "size": 8, "color": theme.FORM_COLOURS[0]},
         "hovertemplate": f"%{{y}}: {constant} %{{x:.4g}} (mixed-effects)<extra></extra>"},
    ]
    shapes: list[dict[str, Any]] = []
    if forest.get("ci95") and None not in forest["ci95"]:
        lo, hi = forest["ci95"]
        shapes.append({"type": "rect", "xref": "x", "yref": "paper", "x0": lo, "x1": hi, "y0": 0, "y1": 1,
                       "fillcolor": BAND_FILL, "line": {"width": 0}, "layer": "below"})
    for p in forest["population"]:
        if p["value"] is not None:
            shapes.append({"type": "line", "xref": "x", "yref": "paper", "x0": p["value"], "x1": p["value"],
                           "y0": 0, "y1": 1, "line": {"color": POPULATION_COLOUR, "width": 2, "dash": "dash"}})
    note = "" if forest.get("random") else f" ({constant} has no random effect: every series shares it)"
    layout = {
        "title": {"text": title or f"{constant}: separate fits and mixed-effects values{note}", "x": 0.0,
                  "xanchor": "left", "font": {"size": 14}},
        "font": {"family": theme.FONT, "color": theme.INK, "size": 12}, "paper_bgcolor": theme.PAPER,
        "plot_bgcolor": theme.PAPER, "margin": {"l": 90, "r": 16, "t": 48, "b": 50}, "hovermode": "closest",
        "legend": {"orientation": "h", "y": -0.15}, "shapes": shapes,
        "height": max(260, 80 + 22 * len(rows)),
        **_axes(constant, ""),
    }
    layout["yaxis"].update({"type": "category", "autorange": "reversed", "categoryorder": "array",
                            "categoryarray": names})
    return {"data": data, "layout": layout}
