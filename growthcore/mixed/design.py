"""The design of a nonlinear mixed-effects fit: which constants are fixed, shifted, random; padded data.

Each series i has constants φ_i = A_i·β + B·b_i: β are the population values (and the shifts of the
conditions other than the first), b_i ~ N(0, Ψ) the series' random deviations on the chosen
constants. Series of different lengths are padded to one array and masked, so every evaluation of a
curve runs over all series at once. A difference form is iterated series by series on its step grid
(the trajectory method) with p0, its state at the series' first time, as one more constant; its
derivatives come from the forward sensitivities of the path.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.problem import P0_DIFFERENCE
from growthcore.fit.sensitivity import path_jacobian
from growthcore.fit.simulate import path_of
from growthcore.models.base import CurveForm, DifferenceForm, ModelForm

Array = np.ndarray
ESTIMATIONS: tuple[str, ...] = ("ML", "REML")
COVARIANCES: tuple[str, ...] = ("diagonal", "full")
ERRORS: tuple[str, ...] = ("additive", "log")


@dataclass(frozen=True)
class MixedDesign:
    """Everything about a mixed-effects fit that does not change while it is optimised."""

    form: CurveForm | DifferenceForm
    error: str
    estimation: str
    covariance: str
    free: tuple[str, ...]              # the form's constants that are estimated, in form order
    held: Mapping[str, float]          # constants held at given values for every series
    random: tuple[str, ...]            # constants with a random deviation per series
    shifted: tuple[str, ...]           # constants shifted by condition
    beta_names: tuple[str, ...]        # population values, then "name:condition" shifts
    names: tuple[str, ...]             # series names
    groups: tuple[str, ...]            # each series' condition ("all" without conditions)
    conditions: tuple[str, ...]        # distinct conditions, the first is the baseline
    A: Array                           # (m, p, k): constants of series i = A[i] @ beta + B @ b_i
    B: Array                           # (p, q)
    t: Array                           # (m, n) padded times
    y: Array                           # (m, n) padded observations (error scale: ln y for log error)
    mask: Array                        # (m, n) 1.0 where a point is used
    counts: Array                      # (m,) used points per series
    origin: float = 0.0                # the time p0 refers to (curves with p0); ``t`` is measured from it
    grid: Array | None = None          # difference forms: (m, n) step index of each point (padding: 0)
    step: float | None = None          # difference forms: the common step h

    @property
    def n_obs(self) -> int:
        return int(self.counts.sum())

    @property
    def n_series(self) -> int:
        return len(self.names)

    @property
    def n_cov(self) -> int:
        q = len(self.random)
        return q * (q + 1) // 2 if self.covariance == "full" else q

    @property
    def n_params(self) -> int:
        """Estimated quantities: fixed effects, covariance parameters and the residual SD."""
        return len(self.beta_names) + self.n_cov + 1

    def constants(self, beta: Array, b: Array) -> Array:
        """(m, p) constants of every series."""
        return np.einsum("mpk,k->mp", self.A, beta) + b @ self.B.T

    def evaluate(self, phi: Array) -> tuple[Array, Array]:
        """Predictions on the error scale and their derivatives, (m, n) and (m, n, p); padding is zero."""
        with np.errstate(all="ignore"):
            if isinstance(self.form, DifferenceForm):
                f, partials = self._paths(phi)
            else:
                values: dict[str, Array | float] = dict(self.held)
                for j, name in enumerate(self.free):
                    values[name] = phi[:, j:j + 1]
                f = np.asarray(self.form.value(self.t, values), dtype=float)
                partials = _partials(self.form, self.t, values, self.free)
            if self.error == "log":
                jac = partials / f[:, :, None]
                h = np.log(f)
            else:
                jac = partials
                h = f
        h = np.where(self.mask > 0, h, 0.0)
        jac = np.where(self.mask[:, :, None] > 0, jac, 0.0)
        return h, jac

    def _paths(self, phi: Array) -> tuple[Array, Array]:
        """Each series' path at its points and the path's derivatives (one path per series)."""
        assert isinstance(self.form, DifferenceForm) and self.grid is not None
        m, n = self.t.shape
        f = np.zeros((m, n))
        partials = np.zeros((m, n, len(self.free)))
        for i in range(m):
            values = {**self.held, **{name: float(phi[i, j]) for j, name in enumerate(self.free)}}
            count = int(self.counts[i])
            index = self.grid[i, :count]
            path = path_of(self.form, values["p0"], values, int(index[-1]))
            f[i, :count] = path[index]
            partials[i, :count] = path_jacobian(self.form, values, self.free, path)[index]
        return f, partials

    def population_curve(self, beta: Array, t: Array, group: str | None = None) -> Array:
        """The curve of the population constants (of ``group`` when conditions shift constants)."""
        if not isinstance(self.form, CurveForm):
            raise TypeError(f"{self.form.id} is a difference form: its population path is iterated, not a curve")
        values = dict(self.held)
        values.update(self.group_constants(beta, group))
        with np.errstate(all="ignore"):
            return np.asarray(self.form.value(np.asarray(t, dtype=float) - self.origin, values), dtype=float)

    def group_constants(self, beta: Array, group: str | None = None) -> dict[str, float]:
        """Population constants of one condition (the baseline when ``group`` is None)."""
        g = group if group is not None else self.conditions[0]
        out = {name: float(beta[self.beta_names.index(name)]) for name in self.free}
        if g != self.conditions[0]:
            for name in self.shifted:
                out[name] += float(beta[self.beta_names.index(f"{name}:{g}")])
        return out


def _partials(form: CurveForm, t: Array, values: Mapping[str, Array | float], free: Sequence[str]) -> Array:
    if form.value_partials is not None:
        known = form.value_partials(t, values)
        return np.stack([np.broadcast_to(known[n], t.shape) for n in free], axis=-1)
    cols = []
    for name in free:  # central differences for a form without closed-form partials
        v = np.asarray(values[name], dtype=float)
        step = 1e-6 * np.maximum(np.abs(v), 1e-6)
        up = form.value(t, {**values, name: v + step})
        down = form.value(t, {**values, name: v - step})
        cols.append((up - down) / (2.0 * step))
    return np.stack(cols, axis=-1)


def build_design(
    series: Sequence[Series],
    form: ModelForm,
    *,
    random: Sequence[str],
    covariance: str = "diagonal",
    estimation: str = "ML",
    error: str = "additive",
    held: Mapping[str, float] | None = None,
    groups: Sequence[str] | None = None,
    shifted: Sequence[str] = (),
) -> MixedDesign:
    """Check the choices and lay the data out; bad choices raise ``GrowthcoreInputError``."""
    if estimation not in ESTIMATIONS:
        raise GrowthcoreInputError(f"`estimation` must be one of {', '.join(ESTIMATIONS)}; got {estimation!r}")
    if covariance not in COVARIANCES:
        raise GrowthcoreInputError(f"`covariance` must be one of {', '.join(COVARIANCES)}; got {covariance!r}")
    if error not in ERRORS:
        raise GrowthcoreInputError(f"`error` must be one of {', '.join(ERRORS)}; got {error!r}")
    held_f = {k: float(v) for k, v in (held or {}).items()}
    difference = isinstance(form, DifferenceForm)
    names_all = (*form.param_names, P0_DIFFERENCE.name) if difference else form.param_names
    for label, chosen in (("held", held_f), ("random", random), ("shifted", shifted)):
        unknown = [n for n in chosen if n not in names_all]
        if unknown:
            raise GrowthcoreInputError(
                f"{form.id} has no constant {', '.join(unknown)} ({label}); it has {', '.join(names_all)}")
    free = tuple(n for n in names_all if n not in held_f)
    random_t = tuple(n for n in free if n in random)
    if len(random_t) != len(set(random)) or not random_t:
        clash = [n for n in random if n in held_f]
        raise GrowthcoreInputError(
            "a mixed-effects fit needs at least one random constant" if not clash
            else f"{', '.join(clash)} cannot be both held fixed and random")
    shifted_t = tuple(n for n in free if n in shifted)
    if len(shifted_t) != len(set(shifted)):
        raise GrowthcoreInputError("a constant held fixed cannot be shifted by condition")
    usable = [s for s in series if int(np.count_nonzero(s.used)) > 0]
    if len(usable) < 2:
        raise GrowthcoreInputError(f"a mixed-effects fit needs at least 2 series with data; got {len(usable)}")
    labels = tuple(str(g) for g in groups) if groups is not None else tuple("all" for _ in series)
    if len(labels) != len(series):
        raise GrowthcoreInputError(f"`groups` gives {len(labels)} labels for {len(series)} series")
    labels = tuple(g for s, g in zip(series, labels, strict=True) if int(np.count_nonzero(s.used)) > 0)
    conditions = tuple(dict.fromkeys(labels))
    if shifted_t and len(conditions) < 2:
        raise GrowthcoreInputError("shifting a constant by condition needs at least two conditions")
    names = tuple(s.name for s in usable)
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise GrowthcoreInputError(f"series names must be unique; {dup!r} appears more than once")
    beta_names = (*free, *(f"{n}:{g}" for n in shifted_t for g in conditions[1:]))
    m, p, k, q = len(usable), len(free), len(beta_names), len(random_t)
    A = np.zeros((m, p, k))
    for i, g in enumerate(labels):
        for j, name in enumerate(free):
            A[i, j, j] = 1.0
            if name in shifted_t and g != conditions[0]:
                A[i, j, beta_names.index(f"{name}:{g}")] = 1.0
    B = np.zeros((p, q))
    for j, name in enumerate(random_t):
        B[free.index(name), j] = 1.0
    # one origin for all curves, so that their p0 are comparable; t_mid stays on the series' clock; a
    # difference form's p0 is the state at each series' own first time
    origin = min(float(s.t[0]) for s in usable) if "p0" in names_all and not difference else 0.0
    grid, step = (_grids(usable) if difference else (None, None))
    width = max(int(np.count_nonzero(s.used)) for s in usable)
    t = np.zeros((m, width))
    y = np.zeros((m, width))
    mask = np.zeros((m, width))
    for i, s in enumerate(usable):
        ts, ps = s.t[s.used], s.p[s.used]
        if error == "log" and not ps.min() > 0:
            j = int(np.flatnonzero(s.used)[ps <= 0][0])
            raise GrowthcoreInputError(
                f"log error needs p > 0; series {s.name!r} row {s.row_of(j)} has p = {s.p[j]:g}")
        n = ts.size
        t[i, :n], t[i, n:] = ts - origin, ts[-1] - origin
        y[i, :n] = np.log(ps) if error == "log" else ps
        mask[i, :n] = 1.0
    return MixedDesign(form, error, estimation, covariance, free, held_f, random_t, shifted_t, beta_names,
                       names, labels, conditions, A, B, t, y, mask, mask.sum(axis=1), origin, grid, step)


def _grids(series: Sequence[Series]) -> tuple[Array, float]:
    """Step index of every used point, for series sampled on one common step."""
    steps = []
    for s in series:
        info = s.step()
        if not info.regular or info.h is None or info.index is None:
            raise GrowthcoreInputError(f"series {s.name!r}: {info.message}")
        steps.append(info.h)
    h = steps[0]
    for s, hi in zip(series, steps, strict=True):
        if abs(hi - h) > 1e-6 * h:
            raise GrowthcoreInputError(
                f"a difference form needs one step for every series; {series[0].name!r} has h = {h:g}, "
                f"{s.name!r} has h = {hi:g}")
    width = max(int(np.count_nonzero(s.used)) for s in series)
    grid = np.zeros((len(series), width), dtype=int)
    for i, s in enumerate(series):
        index = s.step().index
        assert index is not None
        used = index[s.used]
        grid[i, :used.size] = used
    return grid, float(h)
