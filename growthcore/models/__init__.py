"""Model forms: difference equations on a step grid and closed-form growth curves."""

from growthcore.models.base import CurveForm, DifferenceForm, ModelForm, ParamSpec
from growthcore.models.catalogue import MODEL_IDS, catalogue, get_form

__all__ = ["CurveForm", "DifferenceForm", "ModelForm", "ParamSpec", "MODEL_IDS", "catalogue", "get_form"]
