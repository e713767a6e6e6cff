"""Do groups differ in one constant? The extra-sum-of-squares F test of nested joint fits.

Notes
-----
The full model gives each group its own value of the tested constant; the reduced model shares it
across all groups; every other constant is scoped the same in both (per group, and the initial
state per series). With SSE and residual degrees of freedom df of each,

    F = ((SSE_red − SSE_full) / (df_red − df_full)) / (SSE_full / df_full),

referred to the F distribution with (df_red − df_full, df_full) degrees of freedom (the
extra-sum-of-squares principle for nested least-squares models; for nonlinear models the
F reference is approximate).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

from scipy import stats as sps

from growthcore.batch.pooled import JointFit, joint_fit
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.models.catalogue import get_form
from growthcore.numbers import finite_or_none, nan_if_none


@dataclass(frozen=True)
class GroupDifferenceTest:
    """The F test of whether groups differ in ``parameter``; ``status`` is ``done`` or ``failed``."""

    model: str
    parameter: str
    groups: tuple[str, ...]
    status: str
    message: str
    sse_full: float = math.nan
    df_full: int = 0
    sse_reduced: float = math.nan
    df_reduced: int = 0
    f: float = math.nan
    p_value: float = math.nan
    full: JointFit | None = None
    reduced: JointFit | None = None
    #: The fits the test compares: joint least-squares fits of the whole paths of every series.
    method: str = "trajectory"

    def to_dict(self) -> dict[str, Any]:
        return {"model": self.model, "parameter": self.parameter, "groups": list(self.groups),
                "status": self.status, "message": self.message,
                "sse_full": finite_or_none(self.sse_full), "df_full": self.df_full,
                "sse_reduced": finite_or_none(self.sse_reduced), "df_reduced": self.df_reduced,
                "f": finite_or_none(self.f), "df_numerator": self.df_reduced - self.df_full,
                "p_value": finite_or_none(self.p_value),
                "method": self.method}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> GroupDifferenceTest:
        """The test a :meth:`to_dict` wrote (the joint fits it compared are not in the dict)."""
        return cls(str(d["model"]), str(d["parameter"]), tuple(str(g) for g in d["groups"]), str(d["status"]),
                   str(d["message"]), nan_if_none(d["sse_full"]), int(d["df_full"]), nan_if_none(d["sse_reduced"]),
                   int(d["df_reduced"]), nan_if_none(d["f"]), nan_if_none(d["p_value"]),
                   method=str(d.get("method", "trajectory")))


def group_difference_test(series: Sequence[Series], groups: Sequence[str], model: str, parameter: str, *,
                          error: str = "additive", per_series: Sequence[str] = ("p0",)) -> GroupDifferenceTest:
    """Test H0: all groups share one value of ``parameter`` (other constants per group)."""
    form = get_form(model)
    free = [*form.param_names, *(["p0"] if form.kind == "difference" else [])]
    if parameter not in free:
        raise GrowthcoreInputError(f"{form.id} has no constant {parameter!r}; it has {', '.join(free)}")
    if parameter in per_series:
        raise GrowthcoreInputError(f"{parameter} is fitted per series: it cannot be tested between groups")
    labels = tuple(dict.fromkeys(groups))
    if len(labels) < 2:
        raise GrowthcoreInputError(f"the F test needs at least two groups; got {len(labels)}")
    scopes = {n: ("series" if n in per_series else "group") for n in free}
    full = joint_fit(series, model, error=error, scopes=scopes, groups=groups)
    reduced = joint_fit(series, model, error=error, scopes={**scopes, parameter: "all"}, groups=groups)
    if full.success and reduced.success and reduced.sse < full.sse * (1 - 1e-9):
        # the nested full model can always match the reduced one: restart it from there
        start = {}
        for p in reduced.result.parameters:
            base = p.name.split("[", 1)[0]
            if base == parameter:
                start.update({f"{parameter}[{g}]": p.value for g in labels})
            else:
                start[p.name] = p.value
        full = joint_fit(series, model, error=error, scopes=scopes, groups=groups, start=start)
    if not (full.success and reduced.success):
        why = full.result.message if not full.success else reduced.result.message
        return GroupDifferenceTest(form.id, parameter, labels, "failed", why, full=full, reduced=reduced)
    df_full, df_red = full.dof, reduced.dof
    df_num = df_red - df_full
    if df_full <= 0 or df_num <= 0:
        return GroupDifferenceTest(form.id, parameter, labels, "failed",
                                   "too few points for the F test (no residual degrees of freedom)",
                                   full=full, reduced=reduced)
    f = ((reduced.sse - full.sse) / df_num) / (full.sse / df_full)
    f = max(f, 0.0)
    p_value = float(sps.f.sf(f, df_num, df_full))
    message = (f"H0: the {len(labels)} groups share one {parameter}; F({df_num}, {df_full}) = {f:.4g}, "
               f"p = {p_value:.3g}")
    return GroupDifferenceTest(form.id, parameter, labels, "done", message, full.sse, df_full, reduced.sse, df_red,
                               float(f), p_value, full, reduced)


def difference_test_for_batch(batch: Any, model: str, parameter: str) -> GroupDifferenceTest:
    """The F test for the grouped series of a :class:`BatchResult`.

    Series in no group, and series whose own fit of ``model`` failed, are left out; the message
    names them.
    """
    data = batch.data
    ok = {f.series for f in batch.for_model(model) if f.result.success}
    chosen, labels, left = [], [], []
    for g, ids in data.members().items():
        for n in ids:
            if n in ok:
                chosen.append(data.get(n))
                labels.append(g)
            else:
                left.append(n)
    if len(set(labels)) < 2:
        return GroupDifferenceTest(model, parameter, tuple(dict.fromkeys(labels)), "failed",
                                   "fewer than two groups with a converged fit: no test")
    out = group_difference_test(chosen, labels, model, parameter, error=batch.error)
    if batch.method != "trajectory":
        # the joint fits need the whole paths: say so rather than let the table's method stand for the test's
        out = replace(out, message=f"{out.message}; the test compares joint trajectory fits (least squares on the "
                                   f"whole paths), not the {batch.method} fits of the table")
    if left:
        shown = ", ".join(left[:10]) + (" ..." if len(left) > 10 else "")
        out = replace(out, message=f"{out.message} (left out, own fit failed: {shown})")
    return out
