"""The time budget of a light request: every server-side callback runs under it.

Heavy jobs run in worker processes under their own budget (app/heavy.py); everything else a
callback does runs in the server's request thread, where the engine checks the budget at its loop
points (growthcore/budget.py). When it runs out, the callback's outputs are left as they were and
the notice above the panels says which request ran out of its budget and how to ask for less.

The budget is the server's own (``create_app(light_budget_s=...)``), never the tab's.
"""

from __future__ import annotations

import functools
import inspect
import logging
from collections.abc import Callable, Iterable
from typing import Any

from dash import Output, ctx, no_update, set_props

from growthcore.budget import BudgetExceeded, time_budget

from . import ids

#: Seconds a light request may take unless the server is created with another budget.
DEFAULT_LIGHT_BUDGET_S = 20.0
CONFIG_KEY = "GROWTHCORE_LIGHT_BUDGET_S"
LOG = logging.getLogger("growthcore.app")

FEWER_POINTS = "fewer points (exclude some, or load a shorter series)"
#: The first output of a callback -> what the request does, and how to ask for less of it.
REQUESTS: dict[str, tuple[str, str]] = {
    # the reply to a change of K, the data or the choices (app/callbacks/live.py) starts with K
    ids.CAPACITY: ("Fitting the chosen forms", f"choose fewer forms or one method instead of both, hold K at a value "
                                               f"instead of fitting it, or use {FEWER_POINTS}"),
    ids.G_CHANGE: ("The change-per-step and candidate-terms panels",
                   f"choose fewer forms or terms, or use {FEWER_POINTS}"),
    ids.COMPARISON: ("The comparison table", "choose fewer forms"),
    ids.SETTINGS: ("Reading the model settings", "choose fewer forms or terms"),
    ids.EXCLUSIONS: ("Leaving out points", FEWER_POINTS),
    ids.SOURCE: ("Loading the file", "use a smaller file"),
    ids.DATA_MESSAGE: ("Loading the file", "use a smaller file"),
    ids.DYN_SENTENCES: ("The dynamics panel", f"choose a fit with fewer constants, or use {FEWER_POINTS}"),
    ids.DYN_STALE: ("The dynamics panel", f"choose a fit with fewer constants, or use {FEWER_POINTS}"),
    ids.DYN_FIT: ("The dynamics panel", "choose another fit"),
    ids.BOOT: ("The bootstrap", "ask for fewer resamples"),
    ids.BOOT_PROGRESS: ("The bootstrap intervals", "ask for fewer resamples"),
    ids.FORECAST: ("The forecast", "forecast fewer steps, or ask for fewer bootstrap resamples"),
    ids.FC_NOTES: ("The forecast notes", "forecast fewer steps"),
    ids.DOWNLOAD_RECORD: ("The export", "export fewer forms"),
    ids.BATCH_SERIES: ("Reading the series of the file", "use a file with fewer series"),
    ids.BATCH_GROUPS: ("Making the replicate groups", "use a file with fewer series"),
    ids.BATCH_JOB: ("The batch run", "fit fewer forms or series"),
    ids.BATCH_FITS: ("The batch run", "fit fewer forms or series"),
    ids.GRID: ("Drawing the small multiples", "use a file with fewer series"),
    ids.PLATE: ("Drawing the plate map", "use a file with fewer series"),
    ids.BATCH_TABLES: ("The batch tables", "fit fewer forms or series"),
    ids.FTEST_RESULT: ("The F test", "test a form with fewer constants, or use fewer series"),
    ids.BATCH_DOWNLOAD: ("The batch table download", "fit fewer forms or series"),
    ids.POP_STORE: ("The population fit", "use fewer series or fewer random constants"),
    ids.POP_TABLE: ("Drawing the population fit", "use fewer series"),
    ids.POP_LR_RESULT: ("The likelihood-ratio test", "use fewer series or fewer random constants"),
}
DEFAULT_REQUEST = ("Updating the screen", "ask for less at once: fewer forms, points, steps or series")


def light_budget_of(app: Any) -> float | None:
    """The app's budget for a light request in seconds (None: no budget)."""
    seconds = app.server.config.get(CONFIG_KEY)
    return float(seconds) if seconds else None


def check_light_budget(seconds: float | None) -> float | None:
    """A budget given to the server: a positive number of seconds, or None for none."""
    if seconds is None:
        return None
    value = float(seconds)
    if not value > 0:
        raise ValueError(f"the light-request time budget must be a positive number of seconds; got {seconds!r}")
    return value


def _first_output(args: Iterable[Any], kwargs: dict[str, Any]) -> Output | None:
    for item in [kwargs.get("output"), *args]:
        for candidate in item if isinstance(item, (list, tuple)) else [item]:
            if isinstance(candidate, Output):
                return candidate
    return None


def describe_request(args: Iterable[Any], kwargs: dict[str, Any]) -> tuple[str, str]:
    """What a callback registered with these arguments does, and the advice when it runs out."""
    output = _first_output(args, kwargs)
    key = getattr(output, "component_id", None)
    if isinstance(key, dict):  # a pattern-matching id: its type names the component
        key = key.get("type")
    return REQUESTS.get(key, DEFAULT_REQUEST) if isinstance(key, str) else DEFAULT_REQUEST


def ran_out_message(request: str, seconds: float, advice: str) -> str:
    return (f"{request} ran out of the {seconds:g} s this server allows one request and was stopped; "
            f"the panels keep their last results. To stay within it, {advice}.")


def show_ran_out(request: str, seconds: float, advice: str) -> Any:
    """The notice on screen; every output of the callback left as it was."""
    LOG.warning("light request ran out of its %g s budget: %s", seconds, request)
    set_props(ids.ERROR_BANNER, {"hidden": False})
    set_props(ids.ERROR_TEXT, {"children": ran_out_message(request, seconds, advice)})
    return no_update if ctx.outputs_list else None


def under_light_budget(app: Any, func: Callable[..., Any], request: str, advice: str) -> Callable[..., Any]:
    """``func`` as a callback that runs under the app's light-request budget.

    A callback may catch input errors and show them in its own panel: whatever it returns after
    the budget ran out is dropped too, so no panel shows work that was cut short.
    """
    if inspect.iscoroutinefunction(func):  # no such callbacks: they would need their own wrapper
        return func

    @functools.wraps(func)
    def budgeted(*args: Any, **kwargs: Any) -> Any:
        seconds = light_budget_of(app)
        if seconds is None:
            return func(*args, **kwargs)
        with time_budget(seconds, request) as budget:
            try:
                out = func(*args, **kwargs)
            except BudgetExceeded:
                return show_ran_out(request, seconds, advice)
            except Exception:
                if budget.exceeded:  # PreventUpdate or another error after a caught BudgetExceeded
                    return show_ran_out(request, seconds, advice)
                raise
        return show_ran_out(request, seconds, advice) if budget.exceeded else out

    return budgeted


class BudgetedRegistration:
    """The app as the callback modules see it while they register: its ``callback`` wraps each
    function under the light-request budget; everything else is the app's own."""

    def __init__(self, app: Any) -> None:
        self._app = app

    def __getattr__(self, name: str) -> Any:
        return getattr(self._app, name)

    def callback(self, *args: Any, **kwargs: Any) -> Callable[[Callable[..., Any]], Any]:
        decorate = self._app.callback(*args, **kwargs)
        request, advice = describe_request(args, kwargs)
        return lambda func: decorate(under_light_budget(self._app, func, request, advice))


__all__ = ["BudgetedRegistration", "DEFAULT_LIGHT_BUDGET_S", "check_light_budget", "describe_request",
           "light_budget_of", "ran_out_message", "under_light_budget"]
