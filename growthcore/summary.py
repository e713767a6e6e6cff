"""The summary of one fit as tables: constants, goodness of fit, diagnostics and numbered notes.

One :class:`FitSummary` renders as plain text (a terminal, a log) or HTML (a notebook shows it by
itself); presentation lives here, not in the result.
"""

from __future__ import annotations

import html
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from growthcore.fit.result import FitResult


def _fmt(x: float | int | None, digits: int = 6) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "–"
    if isinstance(x, int):
        return str(x)
    return f"{x:.{digits}g}"


@dataclass(frozen=True)
class Table:
    """A titled table of text cells."""

    title: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]

    def to_text(self) -> str:
        widths = [max(len(c) for c in col) for col in zip(self.header, *self.rows, strict=True)]
        line = lambda cells: "  ".join(c.ljust(w) for c, w in zip(cells, widths, strict=True)).rstrip()  # noqa: E731
        return "\n".join([self.title, line(self.header), line(tuple("-" * w for w in widths)),
                          *(line(r) for r in self.rows)])

    def to_html(self) -> str:
        head = "".join(f"<th>{html.escape(h)}</th>" for h in self.header)
        body = "".join("<tr>" + "".join(f"<td>{html.escape(c)}</td>" for c in r) + "</tr>" for r in self.rows)
        return (f"<table><caption>{html.escape(self.title)}</caption><thead><tr>{head}</tr></thead>"
                f"<tbody>{body}</tbody></table>")


@dataclass(frozen=True)
class FitSummary:
    """Heading, tables and numbered notes of one fit."""

    heading: str
    tables: tuple[Table, ...]
    notes: tuple[str, ...]

    def to_text(self) -> str:
        parts = [self.heading, *(t.to_text() for t in self.tables)]
        if self.notes:
            parts.append("Notes\n" + "\n".join(f"[{i}] {n}" for i, n in enumerate(self.notes, 1)))
        return "\n\n".join(parts)

    def to_html(self) -> str:
        notes = "".join(f"<li>{html.escape(n)}</li>" for n in self.notes)
        return (f"<div class='growthcore-summary'><p><strong>{html.escape(self.heading)}</strong></p>"
                + "".join(t.to_html() for t in self.tables) + (f"<ol>{notes}</ol>" if notes else "") + "</div>")

    def __str__(self) -> str:
        return self.to_text()

    def _repr_html_(self) -> str:  # shown by notebooks
        return self.to_html()


def summarise(result: FitResult) -> FitSummary:
    """The summary of ``result``; a failed fit gives its heading and the reason only."""
    heading = f"{result.model} by the {result.method} method ({result.error} error): {result.status}"
    if not result.success:
        return FitSummary(heading, (), (result.message, *result.notes))
    params = Table(
        "Constants",
        ("name", "value", "std. error", "95% interval", ""),
        tuple((p.name, _fmt(p.value), _fmt(p.se, 3),
               f"[{_fmt(p.ci95[0])}, {_fmt(p.ci95[1])}]" if p.ci95 else "–",
               "fixed" if p.fixed else "at its bound" if p.at_bound else "")
              for p in result.parameters),
    )
    tables = [params]
    m = result.metrics
    if m is not None:
        rows = [("points", _fmt(m.n)), ("free constants", _fmt(m.n_params)), ("SSE", _fmt(m.sse)),
                ("RMSE", _fmt(m.rmse)), ("residual SD", _fmt(m.residual_sd))]
        if m.r2_uncentered is not None:
            rows.append(("uncentered R² of the change per step", _fmt(m.r2_uncentered, 4)))
            rows.append(("R² of the states", _fmt(m.r2, 4)))
        else:
            rows += [("R²", _fmt(m.r2, 4)), ("adjusted R²", _fmt(m.r2_adjusted, 4))]
        rows += [("log-likelihood", _fmt(m.log_likelihood)), ("AIC", _fmt(m.aic)), ("AICc", _fmt(m.aicc)),
                 ("BIC", _fmt(m.bic))]
        tables.append(Table("Goodness of fit", ("measure", "value"), tuple(rows)))
    d = result.diagnostics
    if d is not None:
        rows = [("Durbin–Watson", _fmt(d.durbin_watson, 3)), ("sign runs (expected)",
                f"{d.runs} ({_fmt(d.runs_expected, 3)})"), ("runs test p", _fmt(d.runs_p, 3))]
        if d.lack_of_fit is not None:
            lof = d.lack_of_fit
            rows.append(("lack-of-fit F (df)", f"{_fmt(lof.f, 4)} ({lof.df_lack_of_fit}, {lof.df_pure_error})"))
            rows.append(("lack-of-fit p", _fmt(lof.p, 3)))
        tables.append(Table("Residual diagnostics", ("test", "value"), tuple(rows)))
    notes = [result.message]
    if d is not None:
        notes.append(d.message)
    notes += [n for n in result.notes if n not in notes]
    return FitSummary(heading, tuple(tables), tuple(notes))
