"""The catalogue of model forms by id: the ids are the interface of the command line and the record."""

from __future__ import annotations

from collections.abc import Sequence

from growthcore.errors import GrowthcoreInputError
from growthcore.models.base import ModelForm
from growthcore.models.curves import CURVE_FORMS
from growthcore.models.difference import DIFFERENCE_FORMS, with_constant

CONSTANT_SUFFIX = "+c"
_FORMS: tuple[ModelForm, ...] = (*DIFFERENCE_FORMS, *CURVE_FORMS)
_BUILT_IN: dict[str, ModelForm] = {f.id: f for f in _FORMS}
MODEL_IDS: tuple[str, ...] = (*_BUILT_IN, "custom")


def catalogue() -> tuple[ModelForm, ...]:
    """Every built-in form, difference equations first."""
    return tuple(_BUILT_IN.values())


def get_form(model_id: str, *, terms: Sequence[str] = ()) -> ModelForm:
    """The form for ``model_id``; a ``+c`` suffix adds a constant term to a difference form.

    ``terms`` are the rate terms of the ``custom`` form.
    """
    base_id = model_id.strip()
    constant = base_id.endswith(CONSTANT_SUFFIX)
    if constant:
        base_id = base_id[: -len(CONSTANT_SUFFIX)]
    if base_id == "custom":
        from growthcore.models.custom import custom_form  # the parser loads only when needed

        form: ModelForm = custom_form(terms)
    elif base_id in _BUILT_IN:
        form = _BUILT_IN[base_id]
    else:
        raise GrowthcoreInputError(
            f"unknown model form {model_id!r}; expected one of {', '.join(MODEL_IDS)}"
            f" (difference forms may take the suffix {CONSTANT_SUFFIX!r})"
        )
    if constant:
        if form.kind != "difference":
            raise GrowthcoreInputError(f"a constant term applies to difference forms only, not {base_id!r}")
        form = with_constant(form)
    return form
