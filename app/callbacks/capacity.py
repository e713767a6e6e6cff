"""The capacity estimate K: one value kept in step across the number box, the slider and the K line
(wired in app/callbacks/live.py, which answers a change of K with every panel in one reply)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from dash import no_update

from growthcore.explore import capacity_flag, capacity_from_fit, capacity_range
from growthcore.figures.trajectory import capacity_from_relayout

from .. import ids
from ..state import series_from_store


def _marks(low: float, high: float) -> dict[str, str]:
    return {f"{v:g}": f"{v:.3g}" for v in (low, (low + high) / 2, high)}


def rounded(k: float) -> float:
    """K rounded to 4 significant digits for the controls (the fits use the same value)."""
    if k == 0 or not math.isfinite(k):
        return k
    return float(f"{k:.4g}")


def same_file(data: Mapping[str, Any] | None, previous_key: str | None) -> bool:
    """Whether ``data`` is another series of the file the previous fits came from (keys start with its hash)."""
    sha = (data or {}).get("sha256")
    return bool(sha and previous_key and previous_key.split(":", 1)[0] == sha and previous_key != data.get("key"))


def pending_capacity(pending: Mapping[str, Any] | None, data: Mapping[str, Any] | None) -> float | None:
    """The K a reopened record brings for these data (finite and positive), or None."""
    if not pending or not data or pending.get("key") != data.get("key"):
        return None
    value = pending.get("value")
    if not isinstance(value, (int, float)) or not math.isfinite(value) or value <= 0:
        return None
    return float(value)


def update_capacity(trigger: str | None, k_input: float | None, k_slider: float | None,
                    relayout: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                    settings: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                    current: float | None, *, previous_key: str | None = None,
                    pending: Mapping[str, Any] | None = None) -> tuple[Any, ...]:
    """Outputs: the committed K, the number box, the slider value, min, max, step, marks and the note.

    A K the user holds (``k_mode`` "held") stays when another series of the same file is chosen
    (``previous_key`` is the data key the K on screen was set for); a new file starts from its first guess.
    New data that come with a reopened record's K (``pending``, see :func:`pending_capacity`) start from it.
    """
    none6 = (no_update,) * 6
    if data is None:
        return (no_update, no_update, *none6)
    unit = data.get("value_unit") or ""
    if trigger in (None, ids.DATA):
        series = series_from_store(data)
        rng = capacity_range(series)
        guess = rounded(rng.estimate)
        recorded = pending_capacity(pending, data)
        held = (settings or {}).get("k_mode") == "held" and current is not None and math.isfinite(current) \
            and current > 0 and same_file(data, previous_key)
        k = recorded if recorded is not None else current if held else guess
        high = rounded(max(rng.high, 1.5 * k))
        step = rounded((high - rng.low) / 400)
        note = (f"{unit} (the reopened record's K; this series' first guess is {guess:g})" if recorded is not None
                else f"{unit} (held at your estimate; this series' first guess is {guess:g})" if held else
                f"{unit} (first guess from the data: the minimum of a profile over K at or above the largest value "
                "when the series rises to it)")
        return (k, k, k, rng.low, high, step, _marks(rng.low, high), note)
    if trigger == ids.K_FROM_FIT:
        series = series_from_store(data, exclusions)
        value, note = capacity_from_fit(series, (settings or {}).get("models", []), (settings or {}).get("terms", []))
        if value is None:
            return (no_update, no_update, no_update, no_update, no_update, no_update, no_update, f"{unit}: {note}")
        k = rounded(value)
        return (k, k, k, no_update, no_update, no_update, no_update, f"{unit} ({note})")
    if trigger == ids.K_INPUT:
        k = k_input
    elif trigger == ids.K_SLIDER:
        k = k_slider
    elif trigger == ids.K_DROP:
        k = capacity_from_relayout(relayout)
        if k is None:
            return (no_update, no_update, *none6)
    else:
        return (no_update, no_update, *none6)
    if k is None or not math.isfinite(float(k)) or float(k) <= 0:
        return (no_update, no_update, no_update, no_update, no_update, no_update, no_update,
                f"{unit}: K must be a positive number")
    k = rounded(float(k))
    if current is not None and k == current:
        return (no_update, no_update, *none6)
    flag = capacity_flag(k, series_from_store(data, exclusions))
    return (k, k if trigger != ids.K_INPUT else no_update, k, no_update, no_update, no_update, no_update,
            f"{unit}: {flag}" if flag else unit)

