"""The model choices as one settings dict, and the custom terms checked as they are typed."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from dash import Dash, Input, Output, html

from growthcore.errors import ExpressionError, GrowthcoreInputError
from growthcore.expr import parse_term
from growthcore.models import get_form

from .. import ids


def check_terms(text: str | None) -> tuple[list[str], list[str]]:
    """The usable terms, one per non-blank line, and an error message per line that does not parse."""
    good: list[str] = []
    errors: list[str] = []
    for number, line in enumerate((text or "").splitlines(), start=1):
        if not line.strip():
            continue
        try:
            parse_term(line.strip())
        except ExpressionError as exc:
            errors.append(f"line {number}: {exc}")
        except GrowthcoreInputError as exc:
            errors.append(f"line {number}: {str(exc).splitlines()[0]}")
        else:
            good.append(line.strip())
    return good, errors


def expand_forms(forms: Sequence[str] | None, with_constant: bool) -> list[str]:
    """The chosen ids, each difference form followed by its '+c' variant when asked for."""
    out: list[str] = []
    for model in forms or []:
        out.append(model)
        if with_constant and model != "custom" and get_form(model).kind == "difference":
            out.append(model + "+c")
    return out


def build_settings(forms: Sequence[str] | None, constant: Sequence[str] | None, terms_text: str | None,
                   method: str, error: str, k_mode: str) -> tuple[dict[str, Any], Any, str]:
    """Outputs: the settings dict, the in-place terms message, and the note on what updates live."""
    terms, errors = check_terms(terms_text)
    models = expand_forms([f for f in (forms or []) if f != "custom"], bool(constant))
    notes: list[Any] = []
    if forms and "custom" in forms:
        if errors:
            notes.append(html.Pre("\n".join(errors), className="terms-error"))
            notes.append(html.Div("The custom form is left out until every term reads.", className="muted"))
        elif not terms:
            notes.append(html.Div("Write at least one term for the custom form.", className="muted"))
        else:
            models.append("custom")
            notes.append(html.Div("custom form: Δp = " + " + ".join(f"b{i + 1}·({t})" for i, t in enumerate(terms)),
                                  className="muted"))
    elif errors:
        notes.append(html.Pre("\n".join(errors), className="terms-error"))
    settings = {"models": models, "terms": terms if not errors else [], "method": method, "error": error,
                "k_mode": k_mode}
    if k_mode == "fitted":
        live = "K is fitted by each form: moving the estimate changes panels 2 and 3 only."
    elif method == "increments":
        live = ("While you drag the slider, the K line, panel 2's lines and the logistic and Gompertz increments "
                "fits follow; every panel is refitted when you release it, type a value or drop the K line.")
    else:
        live = ("While you drag the slider, the K line and panel 2's lines follow; the fits are refitted when you "
                "release it, type a value or drop the K line.")
    return settings, notes, live


def register(app: Dash) -> None:
    app.callback(
        Output(ids.SETTINGS, "data"), Output(ids.TERMS_MESSAGE, "children"), Output(ids.LIVE_NOTE, "children"),
        Input(ids.FORMS, "value"), Input(ids.CONSTANT, "value"), Input(ids.TERMS, "value"),
        Input(ids.METHOD, "value"), Input(ids.ERROR, "value"), Input(ids.K_MODE, "value"),
    )(build_settings)
