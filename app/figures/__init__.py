"""Pure figure builders: plain data in, plotly figure dicts out (no Dash, no server state).

Figures are built as plain dicts rather than ``plotly.graph_objects`` objects, which validate
every property and cost tens of milliseconds each; tests validate the dicts with plotly.
"""
