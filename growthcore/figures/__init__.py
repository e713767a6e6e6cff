"""Pure figure builders: plain data in, plotly figure dicts out (no Dash, no server state).

The dashboard draws them on screen and :mod:`growthcore.report` writes them to files, so both show
the same panels in the same style. This package imports the engine only: never dash, the app, the
report or the command line (tests/test_import_direction.py holds it to that).

Figures are built as plain dicts rather than ``plotly.graph_objects`` objects, which validate
every property and cost tens of milliseconds each; tests validate the dicts with plotly.
"""
