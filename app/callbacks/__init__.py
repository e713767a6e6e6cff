"""Callbacks, one module per concern (panel 7 in dynamics/, the many-series view in series/);
:func:`register_all` wires them onto an app.

Each module keeps its work in plain functions (called directly by the tests and the benchmark)
and a ``register(app)`` that connects them to component ids. Every callback registered here runs
under the server's time budget for a light request (app/request_budget.py).
"""

from __future__ import annotations

from dash import Dash

from ..request_budget import BudgetedRegistration
from . import batch_tables, comparison, data, exclusions, explore, follow, highlight, live, panels, settings
from . import export as export_callbacks
from . import population as population_callbacks
from .dynamics import bootstrap, describe, forecast
from .series import choose, groups, overview, run

MODULES = (data, settings, live, exclusions, follow, explore, panels, comparison, highlight, export_callbacks,
           describe, bootstrap, forecast, groups, run, overview, choose, batch_tables, population_callbacks)


def register_all(app: Dash) -> None:
    budgeted = BudgetedRegistration(app)
    for module in MODULES:
        module.register(budgeted)  # type: ignore[arg-type]  # the app, with callbacks under the budget
