"""Which fit panel 7 describes, and its engine result.

The fits store holds plain data, so the engine's result of the chosen form is rebuilt by fitting it
again (the same engine call with the same inputs gives the same numbers); the fit's signature
(data, points used, K, form, constants) ties every bootstrap and forecast to the fit it belongs to,
so nothing stale is shown after the data, exclusions or K change.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import FitResult
from growthcore.fit.forms import fit_forms
from growthcore.uncertainty import BootstrapResult

from ...state import series_from_store


def fit_signature(fits_store: Mapping[str, Any], fit: Mapping[str, Any]) -> str:
    """A short key that changes whenever the data, the points used, K, the form or its constants do."""
    values = {n: p.get("value") for n, p in (fit.get("parameters") or {}).items()}
    text = json.dumps([fits_store.get("key"), fits_store.get("capacity"), fits_store.get("used"), fit.get("label"),
                       fit.get("error"), values, (fits_store.get("settings") or {}).get("terms")],
                      sort_keys=True, default=str)
    return hashlib.sha1(text.encode("utf-8")).hexdigest()[:16]


def find_fit(fits_store: Mapping[str, Any] | None, label: str | None) -> Mapping[str, Any] | None:
    for f in (fits_store or {}).get("fits", []):
        if f.get("label") == label:
            return f
    return None


def choose_fit(fits_store: Mapping[str, Any] | None, current: str | None) -> tuple[list[dict[str, Any]], str | None]:
    """Options of the form picker and its value: the current choice while it exists, else the
    difference form with the best AICc (the cobweb and sweep apply to maps), else the best fit."""
    fits = (fits_store or {}).get("fits", [])
    options = [{"label": f["label"] + ("" if f.get("status") == "converged" else " — failed"), "value": f["label"],
                "disabled": f.get("status") != "converged"} for f in fits]
    good = [f for f in fits if f.get("status") == "converged"]
    if current in {f["label"] for f in good}:
        return options, current
    best = {(r["model"], r["method"], r["error"]) for r in (fits_store or {}).get("comparison", []) if r.get("best")}
    ranked = sorted(good, key=lambda f: ((f["model"], f["method"], f["error"]) not in best,
                                         f["model"].endswith("-curve")))
    return options, (ranked[0]["label"] if ranked else None)


def rebuild(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, fits_store: Mapping[str, Any],
            fit: Mapping[str, Any]) -> tuple[Series, FitResult]:
    """The engine's result behind a plain fit, fitted again from the same inputs (no K profile)."""
    series = series_from_store(data, exclusions)
    settings = fits_store.get("settings") or {}
    results = fit_forms(series, [fit["model"]], method=fit["method"], error=fit.get("error", "additive"),
                        capacity=fits_store.get("capacity"), terms=settings.get("terms", []), profile=False)
    if not results or not results[0].success:
        raise GrowthcoreInputError(f"{fit['label']}: the fit did not converge again: "
                                   f"{results[0].message if results else 'no result'}")
    return series, results[0]


def done_for(done: Mapping[str, Any] | None, signature: str) -> BootstrapResult | None:
    entry = (done or {}).get(signature)
    return BootstrapResult.from_dict(entry["result"]) if entry and entry.get("result") else None


__all__: Sequence[str] = ("fit_signature", "find_fit", "choose_fit", "rebuild", "done_for")
