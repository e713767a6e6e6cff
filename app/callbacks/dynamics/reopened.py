"""Panel 7 for a reopened record: the steps after the fits that the record's settings name (its bootstrap
and seed, its forecast and bound, the level to reach), set in panel 7's fields within this server's limits.

The forecast is drawn again with the fits; the bootstrap is left for the user to start, since it can run
for minutes. Whatever cannot be set is said, with the reason, in the reopening message.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import no_update

from growthcore.errors import PlanError
from growthcore.workflow import Extras

from ...components.dynamics import MIN_RESAMPLES, fmt

#: How the messages call a record's settings.
SETTING_NAMES = {name: f"settings.{name}" for name in
                 ("bootstrap", "seed", "forecast_steps", "forecast_span", "bound", "levels")}


def steps_from_settings(settings: Mapping[str, Any], *, max_resamples: int, max_steps: int) -> dict[str, Any]:
    """What panel 7 takes from a record's settings: ``resamples`` and ``seed`` (None: the fields stay as
    they are), a forecast ``request`` (None: none), the ``level`` to reach, and ``notes`` on what was not
    taken and why."""
    out: dict[str, Any] = {"resamples": None, "seed": None, "request": None, "level": None, "notes": []}
    notes: list[str] = out["notes"]
    try:
        extras = Extras.from_settings(settings)
    except PlanError as exc:
        notes.append(f"Panel 7 is left as it was: the record's {exc.named(SETTING_NAMES)}.")
        return out
    boot = extras.bootstrap
    if boot is not None and boot < MIN_RESAMPLES:
        notes.append(f"Its bootstrap of {boot} resamples is not repeated: panel 7 runs {MIN_RESAMPLES} or more.")
    elif boot is not None and boot > max_resamples:
        notes.append(f"Its bootstrap of {boot:,} resamples is not repeated: this server runs at most "
                     f"{max_resamples:,}.")
    elif boot is not None:
        out["resamples"], out["seed"] = boot, extras.seed
        notes.append(f"Its bootstrap ({boot:,} resamples, seed {extras.seed}) is set in panel 7; press Run bootstrap "
                     "to repeat it (until then intervals and the forecast band come without it).")
    if extras.forecast_steps is not None and extras.forecast_steps > max_steps:
        notes.append(f"Its forecast of {extras.forecast_steps:,} steps is not drawn: panel 7 forecasts at most "
                     f"{max_steps:,}.")
    elif extras.forecasting:
        mode, amount = ("steps", extras.forecast_steps) if extras.forecast_steps is not None \
            else ("span", extras.forecast_span)
        out["request"] = {"mode": mode, "amount": amount, "bound": extras.bound}
        how_far = f"{amount} steps" if mode == "steps" else f"a time span of {fmt(amount)}"
        bound = f", bound {fmt(extras.bound)}" if extras.bound is not None else ""
        notes.append(f"Its forecast ({how_far}{bound}) is drawn again with the fits.")
    if extras.levels:
        out["level"] = extras.levels[0]
        if len(extras.levels) > 1:
            rest = ", ".join(fmt(v) for v in extras.levels[1:])
            notes.append(f"Panel 7 gives the time to reach one level: {fmt(extras.levels[0])} is set; the record "
                         f"also names {rest}.")
    return out


def panel_fields(steps: Mapping[str, Any] | None, fresh: tuple[Any, ...]) -> tuple[Any, ...]:
    """Panel 7's bound, level, forecast length, forecast mode, resamples and seed for new data: those of
    the record the data came from (``steps`` from :func:`steps_from_settings`), else ``fresh`` for the
    first three (see forecast.fresh_inputs) and the others left as they are."""
    if steps is None:
        return (*fresh, no_update, no_update, no_update)
    request = steps.get("request") or {}
    amount = request.get("amount")
    return (request.get("bound"), steps.get("level"), fresh[2] if amount is None else amount,
            request.get("mode") or no_update,
            no_update if steps.get("resamples") is None else steps["resamples"],
            no_update if steps.get("seed") is None else steps["seed"])
